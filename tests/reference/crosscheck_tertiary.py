#!/usr/bin/python3
"""Cross-check of cylzone's datum mobility with datum C a bore at RMB while datum B shifts at MMB.

Usage: crosscheck_tertiary.py CASES_FILE

CASES_FILE is written by the hidden Catch2 case "[tertiary-cases]" of test_evaluation (ctest runs
it first as scipy_tertiary_cases). Each case is a pattern of perpendicular bores with straight
axes (basic location, allowed zone, axis offsets at the top and bottom of the zone, frame
coordinates), datum B's clearance r (radius of the shift its MMB simulator allows), the axis c of
datum C in the frame and C's basic distance from B, and cylzone's best motion (origin s, rotation
theta about z: a point p has coordinates R(theta)^T (p - s) in the moved frame).

Datum feature simulators, as ASME Y14.5-2018 states them (from memory for the clause): B's MMB
simulator holds B's axis within r of the origin, |s| <= r. C's RMB simulator is an expanding
cylinder; without the translation modifier it sits at C's basic location c_b (on C's basic ray
at the basic distance), so the part's C axis lies on it in the moved frame,

    fixed at basic:  R(theta)^T (c - s) = c_b            (two equations),

at MMB with room rho (its simulator a fixed pin of the MMB size at c_b) C's axis stays within rho
of it, |R(theta)^T (c - s) - c_b| <= rho, and with the modifier (at RMB) it slides along C's basic
direction u,

    translating:     (c - s) x R(theta) u = 0,  (c - s) . R(theta) u > 0.

When no motion puts C on c_b (|c| - basic beyond r), the expanding simulator meets C where it is
nearest: the script finds that pose with SLSQP as the minimum of |R^T (c - s) - c_b| over
|s| <= r and checks that cylzone's motion leaves C no farther from c_b (1e-9 mm).

The worst ratio max over axis ends of 2 |R^T (basic + e - s) - basic| / allowed is minimised with
scipy.optimize.minimize (SLSQP) in an epigraph form from several starts, variables scaled to order
one (shift in micrometres, rotation in microradians). Checks, per case: cylzone's motion meets
the constraints (1e-9 mm); its reported ratio equals the one numpy computes for it (1e-12); it
is not worse than scipy's best (1e-9) and agrees with it (1e-6, SLSQP's own accuracy). Prints
the "tilted" case's positions under both readings.
"""

import math
import sys

import numpy as np
from scipy.optimize import minimize

S_UNIT = 1e-3
T_UNIT = 1e-6


def read_cases(path):
    cases = []
    with open(path) as f:
        lines = [line.split() for line in f if line.strip()]
    i = 0
    while i < len(lines):
        head = lines[i]
        if head[0] != "case" or lines[i + 1][0] != "datum":
            raise SystemExit(f"{path}: expected 'case' and 'datum', got {' '.join(head)}")
        reading, n, label = head[1], int(head[2]), head[3]
        d = [float(x) for x in lines[i + 1][1:]]
        bores = []
        for k in range(n):
            b = [float(x) for x in lines[i + 2 + k][1:]]
            bores.append(dict(basic=np.array(b[0:2]), allowed=b[2],
                              ends=[np.array(b[5:7]), np.array(b[7:9])]))
        r = [float(x) for x in lines[i + 2 + n][1:]]
        cases.append(dict(reading=reading, label=label, r=d[0], c=np.array(d[1:3]), basic=d[3],
                          c_allow=d[4],
                          bores=bores, shift=np.array(r[0:2]), theta=r[2], ratio=r[3]))
        i += 3 + n
    return cases


def rot(theta):
    c, s = math.cos(theta), math.sin(theta)
    return np.array([[c, -s], [s, c]])


def ratios(bores, shift, theta):
    rt = rot(theta).T
    return np.array([2.0 * np.linalg.norm(rt @ (b["basic"] + e - shift) - b["basic"]) / b["allowed"]
                     for b in bores for e in b["ends"]])


def c_room(case, shift, theta):
    """C at MMB fixed at basic: room left between C's axis and its simulator's, in mm."""
    u = case["c"] / np.linalg.norm(case["c"])
    return case["c_allow"] - np.linalg.norm(rot(theta).T @ (case["c"] - shift) - case["basic"] * u)


def c_equations(case, shift, theta):
    """The simulator's equality constraints, in mm."""
    c = case["c"]
    u = c / np.linalg.norm(c)
    if case["reading"] == "fixed":
        return rot(theta).T @ (c - shift) - case["basic"] * u
    v = rot(theta) @ u
    w = c - shift
    return np.array([w[0] * v[1] - w[1] * v[0]])


def nearest_pose(case, rng):
    """Fixed at basic, C beyond B's clearance: the pose that brings C nearest its simulator."""
    c, u, r = case["c"], case["c"] / np.linalg.norm(case["c"]), case["r"]
    best = None
    for _ in range(6):
        x0 = np.append(rng.uniform(-0.5, 0.5, 2) * r / S_UNIT, rng.uniform(-50, 50))
        res = minimize(lambda x: np.sum((rot(x[2] * T_UNIT).T @ (c - x[:2] * S_UNIT)
                                         - case["basic"] * u) ** 2) / S_UNIT ** 2,
                       x0, method="SLSQP",
                       constraints=[{"type": "ineq",
                                     "fun": lambda x: (r / S_UNIT) ** 2 - x[0] ** 2 - x[1] ** 2}],
                       options=dict(ftol=1e-16, maxiter=500))
        if best is None or res.fun < best.fun:
            best = res
    return best.x[:2] * S_UNIT, best.x[2] * T_UNIT


def solve(case, rng):
    c, r, bores = case["c"], case["r"], case["bores"]
    best = math.inf
    starts = [np.zeros(3)] + [np.append(rng.uniform(-0.7, 0.7, 2) * r / S_UNIT,
                                        rng.uniform(-1, 1) * r / np.linalg.norm(c) / T_UNIT)
                              for _ in range(7)]
    for x0 in starts:
        if case["reading"] == "fixed":  # start on the constraint: s from theta
            u = c / np.linalg.norm(c)
            x0[:2] = (c - rot(x0[2] * T_UNIT) @ (case["basic"] * u)) / S_UNIT
        t0 = ratios(bores, x0[:2] * S_UNIT, x0[2] * T_UNIT).max()
        if case["c_allow"] > 0.0:
            c_con = {"type": "ineq",
                     "fun": lambda x: c_room(case, x[:2] * S_UNIT, x[2] * T_UNIT) / S_UNIT}
        else:
            c_con = {"type": "eq",
                     "fun": lambda x: c_equations(case, x[:2] * S_UNIT, x[2] * T_UNIT) / S_UNIT}
        # B at RMB holds the origin (s = 0); at MMB, within its clearance.
        b_con = ({"type": "eq", "fun": lambda x: x[:2]} if r == 0.0 else
                 {"type": "ineq", "fun": lambda x: (r / S_UNIT) ** 2 - x[0] ** 2 - x[1] ** 2})
        if r == 0.0:
            x0[:2] = 0.0
        cons = [b_con, c_con,
                {"type": "ineq",
                 "fun": lambda x: x[3] ** 2 - ratios(bores, x[:2] * S_UNIT, x[2] * T_UNIT) ** 2}]
        res = minimize(lambda x: x[3], np.append(x0, t0), method="SLSQP", constraints=cons,
                       options=dict(ftol=1e-14, maxiter=500))
        s, th = res.x[:2] * S_UNIT, res.x[2] * T_UNIT
        off = (-c_room(case, s, th) if case["c_allow"] > 0.0
               else np.abs(c_equations(case, s, th)).max())
        if np.linalg.norm(s) > r * (1 + 1e-7) + 1e-12 or off > 1e-9:
            continue
        best = min(best, ratios(bores, s, th).max())
    return best


def main():
    if len(sys.argv) != 2:
        raise SystemExit(__doc__)
    cases = read_cases(sys.argv[1])
    rng = np.random.default_rng(97531)
    failures, largest = [], {}
    for k, case in enumerate(cases):
        name = f"case {k} ({case['reading']}, {case['label']})"
        s, th = case["shift"], case["theta"]
        own = ratios(case["bores"], s, th).max()
        if abs(own - case["ratio"]) > 1e-12:
            failures.append(f"{name}: reported ratio {case['ratio']} but its motion gives {own}")
        if np.linalg.norm(s) > case["r"] * (1 + 1e-9):
            failures.append(f"{name}: the shift {np.linalg.norm(s)} exceeds B's clearance")
        c_norm = np.linalg.norm(case["c"])
        if case["reading"] == "fixed" and abs(c_norm - case["basic"]) > case["r"] + case["c_allow"]:
            # The distance is flat to second order about its minimum, so the poses are
            # compared by the distance they leave, not by their coordinates.
            ps, pt = nearest_pose(case, rng)
            left = np.linalg.norm(c_equations(case, s, th))
            ref_left = np.linalg.norm(c_equations(case, ps, pt))
            if left > ref_left + 1e-9:
                failures.append(f"{name}: C beyond the clearance: pose {s}, {th} leaves C "
                                f"{left} from its simulator, scipy's {ps}, {pt} only {ref_left}")
            continue
        off = (-c_room(case, s, th) if case["c_allow"] > 0.0
               else np.abs(c_equations(case, s, th)).max())
        if off > 1e-9:
            failures.append(f"{name}: the motion leaves C off its simulator by {off}")
        ref = solve(case, rng)
        if not math.isfinite(ref):
            failures.append(f"{name}: scipy found no allowed motion")
            continue
        if own > ref + 1e-9 or abs(own - ref) > 1e-6:
            failures.append(f"{name}: cylzone {own} but scipy {ref}")
        kind = case["reading"] + (" C at MMB" if case["c_allow"] > 0.0 else "")
        largest[kind] = max(largest.get(kind, 0.0), abs(own - ref))
        if case["label"] == "tilted":
            b = case["bores"][0]
            print(f"tilted bore, C {case['reading']}: position {ref * b['allowed']:.6f} (scipy), "
                  f"{own * b['allowed']:.6f} (cylzone), rotation {th:.3e} rad")
    for f in failures:
        print(f, file=sys.stderr)
    if failures:
        return 1
    for reading, gap in sorted(largest.items()):
        print(f"{reading}: largest |cylzone - scipy| {gap:.2e}")
    print(f"{len(cases)} tertiary datum cases agree with scipy.optimize.minimize (SLSQP)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
