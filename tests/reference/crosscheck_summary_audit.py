#!/usr/bin/python3
"""Cross-check of the audit of a single-plane summary against numpy/scipy, independently of the
library.

Usage: /usr/bin/python3 crosscheck_summary_audit.py CASE.json

CASE.json is written by the hidden Catch2 case "[audit-cases]" of test_summary_audit (ctest runs
it first, as a fixture): the points of a bore drilled on a 2 mrad tilt (seven rings, 0.5 um of
radial noise) in a frame that is the measurement frame (datum A is z = 0, B's axis the z axis),
the single-plane summary written at its mouth (z = 0) and cylzone's figures.

The reference, from the definitions:
  * the bore's axis is its least-squares cylinder axis (Gaussian associated feature, ISO 14405-1
    / ISO 5459; from memory for the clauses), fitted here with scipy.optimize.least_squares on
    the orthogonal residuals |(p - c) x d| - r, the axis written as (x0 + a z, y0 + b z, z);
  * the single-plane position at a height is 2 |axis(z) - true position| (common practice), the
    full-depth position (ASME Y14.5-2018 section 7, cylindrical zone over the depth; from
    memory) is twice the larger end deviation over the depth, the deviation being affine in z.

Checks: cylzone's mouth deviation and full-depth position agree with the reference to 1e-6 mm;
the summary's mouth position conforms (<= 0.05) while the full-depth position does not; and
cylzone's finding is "blind to tilt". Exits non-zero and lists each failure otherwise.
"""
import json
import sys

import numpy as np
from scipy.optimize import least_squares

TOL = 1e-6  # mm


def axis_distance(q, p):
    x0, y0, a, b, r = q
    d = np.array([a, b, 1.0]) / np.sqrt(a * a + b * b + 1.0)
    rel = p - np.array([x0, y0, 0.0])
    return np.linalg.norm(np.cross(rel, d), axis=1) - r


def main():
    case = json.load(open(sys.argv[1]))
    p = np.array(case["points"], dtype=float)
    basic = np.array(case["basic"], dtype=float)
    # Start: the centroid and the mean distance from it in xy.
    c = p.mean(axis=0)
    start = [c[0] - 0.0 * c[2], c[1], 0.0, 0.0, np.mean(np.hypot(p[:, 0] - c[0], p[:, 1] - c[1]))]
    fit = least_squares(axis_distance, start, args=(p,), xtol=1e-15, ftol=1e-15, gtol=1e-15)
    x0, y0, a, b, _ = fit.x

    def deviation(z):
        return np.array([x0 + a * z, y0 + b * z]) - basic

    top, bottom, tol = case["top"], case["bottom"], case["tolerance"]
    mouth = deviation(top)
    full = 2.0 * max(np.linalg.norm(deviation(top)), np.linalg.norm(deviation(bottom)))
    cz = case["cylzone"]
    failures = []
    if abs(cz["mouth_dx"] - mouth[0]) > TOL or abs(cz["mouth_dy"] - mouth[1]) > TOL:
        failures.append(f"mouth deviation: cylzone ({cz['mouth_dx']}, {cz['mouth_dy']}), "
                        f"reference ({mouth[0]}, {mouth[1]})")
    if abs(cz["position"] - full) > TOL:
        failures.append(f"full-depth position: cylzone {cz['position']}, reference {full}")
    summary = case["summary"]
    if not 2.0 * np.hypot(summary["dx"], summary["dy"]) <= tol:
        failures.append("the summary's mouth position should conform")
    if not 2.0 * np.linalg.norm(mouth) <= tol:
        failures.append(f"the reference mouth position {2 * np.linalg.norm(mouth)} should conform")
    if not full > tol:
        failures.append(f"the reference full-depth position {full} should exceed {tol}")
    if cz["finding"] != "blind to tilt":
        failures.append(f"cylzone's finding is {cz['finding']!r}, expected 'blind to tilt'")
    for f in failures:
        print("FAIL:", f)
    print(f"reference: mouth 2D {2 * np.linalg.norm(mouth):.6f}, full depth {full:.6f}; "
          f"cylzone full depth {cz['position']:.6f}")
    sys.exit(1 if failures else 0)


if __name__ == "__main__":
    main()
