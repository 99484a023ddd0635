#!/usr/bin/python3
"""Cross-check of cylzone's stray-point screen against the same statistic computed here with
scipy and numpy, independently of the library.

Usage: /usr/bin/python3 crosscheck_stray_points.py CASES.json

CASES.json is written by the hidden Catch2 case "[stray-cases]" of test_stray_points (ctest runs
it first, as a fixture): random point sets (bores, datum faces, a grid with exact ties in
distance, coincident points, a scattered cloud with heavy-tailed residuals, the smallest
screenable set, a 21600-point scan) with residuals and injected spikes, and cylzone's answer.

The statistic, as stray_points.hpp defines it:
  * neighbours: the k nearest points in 3D (the point itself excluded), in the order (squared
    distance, index). scipy.spatial.cKDTree finds candidates; their squared distances are
    recomputed here exactly as (dx*dx + dy*dy) + dz*dz and sorted by (distance, index), so
    exact ties go to the lower index. Enough candidates are taken to hold every point tied with
    the (k+1)-th (checked per row; rows where the candidates might not suffice are redone with
    a ball query);
  * excess_i = residual_i - numpy.median(neighbours' residuals);
  * robust scale = 1.4826 * median |excess - median(excess)| (normal-consistent MAD; Rousseeuw
    & Croux, JASA 88 (1993), from memory);
  * flagged: |excess| > max(threshold * scale, floor), sorted by decreasing |excess|, then
    index.

Checks, per case: the same number screened, the same robust scale (1e-12 mm), the same flagged
indices in the same order, the same residuals and excesses (1e-12 mm); and, so the comparison is
not vacuous, every injected spike whose own excess is beyond twice the limit is flagged. Exits
non-zero and lists each disagreement otherwise.
"""
import json
import sys

import numpy as np
from scipy.spatial import cKDTree

TOL = 1e-12  # mm
MAD_TO_SIGMA = 1.4826

failures = []


def neighbours(points, k):
    """Indices (n x k) of each point's k nearest others in the order (squared distance, index)."""
    n = len(points)
    tree = cKDTree(points)
    want = k + 1  # the point itself is among its own nearest
    extra = min(n, want + 8)
    _, cand = tree.query(points, k=extra)
    cand = np.asarray(cand).reshape(n, extra)
    out = np.empty((n, k), dtype=np.int64)
    for i in range(n):
        idx = cand[i]
        d = points[idx] - points[i]
        d2 = (d[:, 0] * d[:, 0] + d[:, 1] * d[:, 1]) + d[:, 2] * d[:, 2]
        order = np.lexsort((idx, d2))
        idx, d2 = idx[order], d2[order]
        # Candidates beyond the (k+1)-th may tie with it; if the last candidate still ties, or the
        # query stopped short of n, other tied points may exist: use a ball query instead.
        if extra < n and d2[-1] <= d2[want - 1]:
            radius = np.sqrt(d2[want - 1]) * (1.0 + 1e-9) + 1e-300
            idx = np.array(sorted(tree.query_ball_point(points[i], radius)), dtype=np.int64)
            d = points[idx] - points[i]
            d2 = (d[:, 0] * d[:, 0] + d[:, 1] * d[:, 1]) + d[:, 2] * d[:, 2]
            order = np.lexsort((idx, d2))
            idx, d2 = idx[order], d2[order]
        first = idx[:want]
        others = first[first != i][:k]
        out[i] = others
    return out


def screen(points, residuals, k, threshold, floor):
    n = len(points)
    if n < k + 1:
        return dict(screened=0, robust_scale=0.0, flagged=[], excess=None)
    nb = neighbours(points, k)
    excess = residuals - np.median(residuals[nb], axis=1)
    scale = MAD_TO_SIGMA * np.median(np.abs(excess - np.median(excess)))
    limit = max(threshold * scale, floor)
    flagged = [i for i in range(n) if abs(excess[i]) > limit]
    flagged.sort(key=lambda i: (-abs(excess[i]), i))
    return dict(screened=n, robust_scale=scale, flagged=flagged, excess=excess, limit=limit)


def main():
    if len(sys.argv) != 2:
        raise SystemExit(__doc__)
    with open(sys.argv[1]) as f:
        cases = json.load(f)["cases"]
    total_points = total_flagged = 0
    worst_excess = worst_scale = 0.0
    for case in cases:
        name = case["name"]
        points = np.array(case["points"], dtype=float).reshape(-1, 3)
        residuals = np.array(case["residuals"], dtype=float)
        k = int(case["neighbours"])
        ref = screen(points, residuals, k, float(case["threshold"]), float(case["floor"]))
        got = case["result"]
        total_points += len(points)
        total_flagged += len(ref["flagged"])
        if got["screened"] != ref["screened"]:
            failures.append(f"{name}: screened {got['screened']}, reference {ref['screened']}")
            continue
        ds = abs(got["robust_scale"] - ref["robust_scale"])
        worst_scale = max(worst_scale, ds)
        if not ds <= TOL:
            failures.append(f"{name}: robust scale {got['robust_scale']!r}, reference "
                            f"{ref['robust_scale']!r}")
        got_idx = [int(p[0]) for p in got["flagged"]]
        if got_idx != ref["flagged"]:
            failures.append(f"{name}: flagged {got_idx}, reference {ref['flagged']}")
            continue
        for i, residual, excess in got["flagged"]:
            i = int(i)
            de = abs(excess - ref["excess"][i])
            worst_excess = max(worst_excess, de)
            if not de <= TOL or residual != residuals[i]:
                failures.append(f"{name}: point {i} excess {excess!r} (reference "
                                f"{ref['excess'][i]!r}), residual {residual!r}")
        if ref["excess"] is not None:
            for i in case["injected"]:
                if abs(ref["excess"][i]) > 2.0 * ref["limit"] and i not in ref["flagged"]:
                    failures.append(f"{name}: injected spike at {i} (excess "
                                    f"{ref['excess'][i]:.3e}) is not flagged")
    print(f"{len(cases)} cases, {total_points} points, {total_flagged} flagged; largest "
          f"difference: robust scale {worst_scale:.1e} mm, excess {worst_excess:.1e} mm")
    if total_flagged == 0:
        failures.append("no case flags anything: the comparison would be vacuous")
    if failures:
        print("\n".join(failures))
        sys.exit(1)


if __name__ == "__main__":
    main()
