#!/usr/bin/python3
"""Cross-check of a bore's sampling adequacy (evaluate/sampling_coverage.hpp) with numpy,
independently of the library.

Usage: /usr/bin/python3 crosscheck_sampling.py CASES.json

CASES.json is written by the hidden Catch2 case "[sampling-cases]" of test_sampling_coverage
(ctest runs it first, as a fixture): random bores (2 to 9 probed levels on random arcs, radial
noise of +-2 um, axial scatter of +-0.05 mm within a level) about an off-origin, tilted axis,
each with an evaluated range and cylzone's figures.

The reference, from the definitions, with numpy only:
  * heights are (p - a).d along the unit axis direction d; the probed span is their extreme
    values; the extrapolation is how far the range reaches beyond it at each end; the
    magnification is the length of the range joined with the span over the span;
  * probed levels: the sorted heights split wherever two neighbours are more than the section
    gap apart, each level at its mean height; every point counted in its nearest level;
  * angular coverage: the points' angles about the axis in the plane perpendicular to d (an
    orthonormal basis built here), sorted; the largest difference of neighbours, the wrap-around
    one included, is the largest gap; coverage = 360 - largest gap (degrees). An exact sort,
    not the library's bucket method (detail::ArcCoverage).

Checks per case: span and extrapolation to 1e-9 mm, magnification to 1e-9 relative, the number
of levels, each level's height to 1e-9 mm and point count exactly, each level's coverage and the
overall coverage to 1e-7 degrees, the smallest and median count and the worst level's coverage.
Exits non-zero and lists each disagreement otherwise.
"""
import json
import sys

import numpy as np

TOL_MM = 1e-9
TOL_DEG = 1e-7


def coverage_deg(angles):
    if len(angles) < 2:
        return 0.0
    a = np.sort(np.mod(angles, 2 * np.pi))
    gaps = np.diff(a)
    largest = max(gaps.max() if len(gaps) else 0.0, a[0] + 2 * np.pi - a[-1])
    return np.degrees(2 * np.pi - largest)


def main():
    cases = json.load(open(sys.argv[1]))["cases"]
    failures = []
    for n, case in enumerate(cases):
        p = np.array(case["points"], dtype=float)
        a = np.array(case["axis_point"], dtype=float)
        d = np.array(case["axis_direction"], dtype=float)
        d /= np.linalg.norm(d)
        top, bottom = case["range"]
        got = case["cylzone"]

        def near(name, ours, theirs, tol):
            if not abs(ours - theirs) <= tol:
                failures.append(f"case {n}: {name}: numpy {ours!r}, cylzone {theirs!r}")

        t = (p - a) @ d
        span_top, span_bottom = t.max(), t.min()
        near("span top", span_top, got["span"][0], TOL_MM)
        near("span bottom", span_bottom, got["span"][1], TOL_MM)
        near("extrapolation top", max(0.0, top - span_top), got["extrapolation"][0], TOL_MM)
        near("extrapolation bottom", max(0.0, span_bottom - bottom), got["extrapolation"][1], TOL_MM)
        magnification = (max(top, span_top) - min(bottom, span_bottom)) / (span_top - span_bottom)
        near("magnification", magnification, got["magnification"], 1e-9 * magnification)

        helper = np.array([1.0, 0.0, 0.0]) if abs(d[0]) < 0.9 else np.array([0.0, 1.0, 0.0])
        u = np.cross(d, helper)
        u /= np.linalg.norm(u)
        v = np.cross(d, u)
        radial = (p - a) - np.outer(t, d)
        angles = np.arctan2(radial @ v, radial @ u)
        near("coverage", coverage_deg(angles), got["coverage_deg"], TOL_DEG)

        order = np.argsort(t)
        ts = t[order]
        breaks = np.where(np.diff(ts) > case["section_gap"])[0] + 1
        levels = np.array([chunk.mean() for chunk in np.split(ts, breaks)])
        nearest = np.abs(t[:, None] - levels[None, :]).argmin(axis=1)
        counts = np.bincount(nearest, minlength=len(levels))
        sections = got["sections"]
        if len(sections) != len(levels):
            failures.append(f"case {n}: {len(levels)} levels by numpy, {len(sections)} by cylzone")
            continue
        coverages = []
        for k, s in enumerate(sections):
            near(f"level {k} height", levels[k], s["height"], TOL_MM)
            if counts[k] != s["points"]:
                failures.append(f"case {n}: level {k}: {counts[k]} points by numpy, "
                                f"{s['points']} by cylzone")
            coverages.append(coverage_deg(angles[nearest == k]))
            near(f"level {k} coverage", coverages[-1], s["coverage_deg"], TOL_DEG)
        if counts.min() != got["section_points_min"]:
            failures.append(f"case {n}: fewest points {counts.min()} by numpy, "
                            f"{got['section_points_min']} by cylzone")
        near("median points", float(np.median(counts)), got["section_points_median"], 0.0)
        near("worst level coverage", min(coverages), got["worst_section_coverage_deg"], TOL_DEG)
    for f in failures:
        print(f)
    print(f"{len(cases)} cases, {len(failures)} disagreements")
    return 1 if failures or not cases else 0


if __name__ == "__main__":
    sys.exit(main())
