#!/usr/bin/python3
"""Cross-check of a bore's position with its axis held at the nominal direction
(plan key axis_direction = "nominal") against scipy, independently of the library.

Usage: /usr/bin/python3 crosscheck_held_direction.py CASES.json

CASES.json is written by the hidden Catch2 case "[held-cases]" of test_part_check (ctest runs it
first, as a fixture): one-level probing (40 points, full or partial arc, noise 1.5 um) of a bore
whose actual axis is tilted by about a milliradian, held at a nominal direction w perpendicular
or inclined to datum plane A (z = 0 of the frame, which here is the measurement frame), with
cylzone's position and least-squares diameter.

The reference, from the definitions:
  * with the direction held at w, the least-squares cylinder is the least-squares circle of the
    points projected along w onto a plane perpendicular to w (the orthogonal distance to a
    cylinder of direction w is the distance in that plane); its centre is found here with
    scipy.optimize.least_squares on the geometric residuals |p - c| - r (Forbes, NPL DITC
    140/89, least-squares circle; from memory for the report number), started from the
    algebraic (Kasa) fit;
  * the true-position axis passes through (basic x, basic y, 0) along w; the held axis is
    parallel to it, so its deviation is the same at every height and the position (a diameter,
    ASME Y14.5-2018 / ISO 1101:2017 cylindrical zone, from memory for the clauses) is twice the
    distance between the two parallel lines.

Checks per case: the position to 1e-8 mm and the least-squares diameter to 1e-8 mm. Exits
non-zero and lists each disagreement otherwise.
"""
import json
import sys

import numpy as np
from scipy.optimize import least_squares

TOL = 1e-8  # mm


def plane_basis(w):
    a = np.array([1.0, 0.0, 0.0]) if abs(w[0]) < 0.9 else np.array([0.0, 1.0, 0.0])
    u = np.cross(w, a)
    u /= np.linalg.norm(u)
    return u, np.cross(w, u)


def circle_fit(xy):
    # Kasa start: x^2 + y^2 = 2 a x + 2 b y + c, linear least squares.
    A = np.column_stack([2 * xy[:, 0], 2 * xy[:, 1], np.ones(len(xy))])
    rhs = (xy ** 2).sum(axis=1)
    a, b, c = np.linalg.lstsq(A, rhs, rcond=None)[0]
    start = np.array([a, b, np.sqrt(c + a * a + b * b)])
    fit = least_squares(lambda q: np.hypot(xy[:, 0] - q[0], xy[:, 1] - q[1]) - q[2], start,
                        xtol=1e-15, ftol=1e-15, gtol=1e-15)
    return fit.x


def main():
    cases = json.load(open(sys.argv[1]))["cases"]
    failures = []
    for case in cases:
        w = np.array(case["direction"], dtype=float)
        w /= np.linalg.norm(w)
        points = np.array(case["points"], dtype=float)
        u, v = plane_basis(w)
        origin = points.mean(axis=0)
        xy = np.column_stack([(points - origin) @ u, (points - origin) @ v])
        cx, cy, r = circle_fit(xy)
        centre = origin + cx * u + cy * v  # a point of the held axis
        true_point = np.array([case["basic"][0], case["basic"][1], 0.0])
        d = centre - true_point
        offset = d - (d @ w) * w
        position = 2.0 * np.linalg.norm(offset)
        for name, ours, theirs in (("position", position, case["position"]),
                                   ("least-squares diameter", 2.0 * r, case["ls_diameter"])):
            if not abs(ours - theirs) <= TOL:
                failures.append(f"{case['name']}: {name} cylzone {theirs:.12f}, scipy {ours:.12f}")
        # Not vacuous: the probed axis is off its true position.
        if not position > 1e-4:
            failures.append(f"{case['name']}: reference position {position} is too small to test")
    if len(cases) < 9:
        failures.append(f"expected 9 cases, found {len(cases)}")
    for f in failures:
        print("FAIL:", f)
    print(f"{len(cases)} held-direction cases, {len(failures)} disagreements")
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
