#!/usr/bin/python3
"""Cross-check of cylzone's virtual condition boundaries with datum mobility against scipy.

Usage: crosscheck_boundary.py CASES_FILE

CASES_FILE is written by the hidden Catch2 case "[boundary-cases]" of test_evaluation (ctest
runs it first as scipy_boundary_cases): random patterns of perpendicular holes at MMC near their
true positions, every point within each hole's evaluated depth (frame coordinates), each hole's
virtual condition (boundary) size, the mobility of the datum reference, and cylzone's motion and
smallest margin. The surface interpretation (ASME Y14.5-2018, virtual condition; ISO 2692:2021,
maximum material virtual condition; from memory for the clauses) asks that one allowed frame
motion clear every hole's boundary, a perfect cylinder of the boundary size on the moved
true-position axis. Written out for scipy.optimize.minimize (SLSQP), with no code of cylzone:

    maximise t  over (sx, sy, theta, t)
    subject to  |R(theta)^T (p_j - s) - basic_i| >= boundary_i / 2 + t / 2
                                               for every point p_j of every hole i (xy only),
                |s| <= shift allowance          (datum B at MMB; s = 0 at RMB),
                theta = 0                       unless the reference leaves rotation free (no C),
                s free                          when it leaves translation free (A alone),

the moved frame having its origin at s and its axes turned by theta about z. t is the smallest
margin clearance - boundary over the pattern, clearance being twice the distance of the nearest
point from the moved axis (the holes of these cases surround their axes, where that is the
largest cylinder on the axis clear of the surface). SLSQP is started from the unmoved frame and
from a few other motions; the best feasible answer is kept.

Checks, per case: cylzone's motion is allowed; the margin numpy computes at cylzone's motion
equals cylzone's reported margin (1e-9 mm); and scipy finds no margin more than 1e-8 mm above
cylzone's (the tie-break of best_boundary_motion, 1e-6 of the margins' spread, and the searches'
tolerances stay below it). Exits non-zero with a message on any disagreement.
"""

import math
import sys

import numpy as np
from scipy.optimize import minimize


def read_cases(path):
    cases = []
    with open(path) as f:
        lines = [line.split() for line in f if line.strip()]
    k = 0
    while k < len(lines):
        words = lines[k]
        if words[0] != "case":
            raise SystemExit(f"{path}: unexpected line {' '.join(words)}")
        case = {"kind": words[1], "bores": []}
        n = int(words[2])
        m = lines[k + 1]
        case["translation_free"] = m[1] == "1"
        case["rotation_free"] = m[2] == "1"
        case["shift"] = float(m[3])
        k += 2
        for _ in range(n):
            b = lines[k]
            count = int(b[4])
            points = np.array([[float(v) for v in lines[k + 1 + j]] for j in range(count)])
            case["bores"].append({"basic": np.array([float(b[1]), float(b[2])]),
                                  "boundary": float(b[3]), "points": points})
            k += 1 + count
        r = lines[k]
        case["result"] = {"shift": np.array([float(r[1]), float(r[2])]),
                          "theta": float(r[3]), "margin": float(r[4])}
        k += 1
        cases.append(case)
    return cases


def distances(bore, shift, theta):
    """Distance of every point of a hole from its true-position axis in the moved frame."""
    c, s = math.cos(theta), math.sin(theta)
    rt = np.array([[c, s], [-s, c]])  # R(theta)^T
    moved = (bore["points"][:, :2] - shift) @ rt.T
    return np.linalg.norm(moved - bore["basic"], axis=1)


def margin_at(case, shift, theta):
    return min(2.0 * distances(b, shift, theta).min() - b["boundary"] for b in case["bores"])


def solve(case):
    """The largest smallest margin, by SLSQP on the constraints written out."""
    rotation = case["rotation_free"]
    translation = case["translation_free"] or case["shift"] > 0.0
    r = case["shift"]

    def unpack(x):
        shift = np.array([x[0], x[1]]) if translation else np.zeros(2)
        theta = x[2] if rotation else 0.0
        return shift, theta, x[3]

    def constraint(x):
        shift, theta, t = unpack(x)
        parts = [distances(b, shift, theta) - 0.5 * (b["boundary"] + t) for b in case["bores"]]
        if translation and not case["translation_free"]:
            parts.append(np.array([r * r - shift @ shift]))
        return np.concatenate(parts)

    best = None
    starts = [np.zeros(2), np.array([0.5 * r, 0.0]), np.array([0.0, -0.5 * r]),
              np.array([-0.3 * r, 0.3 * r])]
    if case["translation_free"]:
        starts += [np.array([0.003, -0.002]), np.array([-0.004, 0.001])]
    for start in starts:
        for theta0 in ([0.0, 5e-5, -5e-5] if rotation else [0.0]):
            t0 = margin_at(case, start, theta0)
            x0 = np.array([start[0], start[1], theta0, t0])
            res = minimize(lambda x: -x[3], x0, method="SLSQP",
                           constraints=[{"type": "ineq", "fun": constraint}],
                           options={"ftol": 1e-15, "maxiter": 500})
            shift, theta, _ = unpack(res.x)
            if translation and not case["translation_free"] and shift @ shift > r * r * (1 + 1e-9):
                continue
            value = margin_at(case, shift, theta)  # the true margin at SLSQP's motion
            if best is None or value > best[0]:
                best = (value, shift, theta)
    return best


def main():
    if len(sys.argv) != 2:
        print(__doc__, file=sys.stderr)
        return 2
    cases = read_cases(sys.argv[1])
    failures = []
    print(f"{'case':>4} {'kind':>9} {'bores':>5} {'cylzone':>14} {'scipy':>14} {'difference':>11}")
    for k, case in enumerate(cases):
        res = case["result"]
        if not case["rotation_free"] and res["theta"] != 0.0:
            failures.append(f"case {k}: rotation {res['theta']} with rotation fixed")
        if not case["translation_free"] and res["shift"] @ res["shift"] > case["shift"] ** 2 * (1 + 1e-9) + 1e-24:
            failures.append(f"case {k}: shift {res['shift']} beyond the allowance {case['shift']}")
        mine = margin_at(case, res["shift"], res["theta"])
        if abs(mine - res["margin"]) > 1e-9:
            failures.append(f"case {k}: reported margin {res['margin']} but numpy finds {mine}")
        best = solve(case)
        diff = res["margin"] - best[0]
        print(f"{k:>4} {case['kind']:>9} {len(case['bores']):>5} {res['margin']:>14.10f} "
              f"{best[0]:>14.10f} {diff:>11.2e}")
        if diff < -1e-8:
            failures.append(f"case {k} ({case['kind']}): scipy finds margin {best[0]:.10f}, "
                            f"cylzone {res['margin']:.10f}")
    if failures:
        print("\n".join(failures), file=sys.stderr)
        return 1
    print(f"{len(cases)} boundary mobility cases agree with scipy.optimize.minimize (SLSQP)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
