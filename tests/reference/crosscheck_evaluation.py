#!/usr/bin/python3
"""Cross-check of cylzone's best frame motion (datum mobility) against scipy.

Usage: crosscheck_evaluation.py CASES_FILE

CASES_FILE is written by the hidden Catch2 case "[mobility-cases]" of test_evaluation (ctest
runs it first as evaluation_mobility_cases): random patterns of perpendicular bores with straight
axes, the mobility their datum reference leaves, and cylzone's answer. This script recomputes
every pattern's worst ratio position / allowed independently with numpy, and minimises it with
scipy.optimize.minimize (SLSQP) in an epigraph formulation from several starts:

    minimise t  subject to  t^2 >= (2 |offset_m(s, theta)| / allowed_m)^2 for every axis end m,
                            |s| <= shift allowance (datum B at MMB),
                            theta = atan2(c - s) - atan2(c)       (C at RMB follows the shift),
                            |(c - s) . n(alpha + theta)| <= c allowance  (C a bore or pin at MMB),
                            every face point q of a slot C at MMB:
                              (q - s) . n >= MMB / 2 (positive face), <= -MMB / 2 (negative),
                            every face point q of a tab C at MMB:  |(q - s) . n| <= MMB / 2,

with offset_m = R(theta)^T (basic + e_m - s) - basic: the moved frame has its origin at s and is
turned by theta about z, so a point p has coordinates R^T (p - s) in it; alpha is the angle of
C's location c, and n = (-sin(alpha + theta), cos(alpha + theta)) the normal of the moved frame's
ray at C's basic angle, the centre plane of a slot's or tab's MMB simulator (a block, or two
plates, MMB wide: ASME Y14.5-2018 datum feature simulator at MMB, from memory for the clause).
A slot or tab case ("cslot", "ctab") carries, after its "mobility" line, a line "width INTERNAL
MMB" and the lines "positive x y x y ..." and "negative x y ..." with every point of each face
in frame coordinates.

Checks, per case: cylzone's motion is allowed; its reported worst ratio equals the ratio numpy
computes for that motion (1e-12); it is not worse than scipy's best (1e-9); and the two agree
(1e-6, SLSQP's own accuracy). Exits non-zero with a message on any disagreement; prints the
largest |cylzone - scipy| of each kind of case.
"""

import math
import sys

import numpy as np
from scipy.optimize import minimize

# Variables are scaled to order one for SLSQP: shift in micrometres, rotation in microradians.
S_UNIT = 1e-3
T_UNIT = 1e-6


def read_cases(path):
    cases = []
    with open(path) as f:
        lines = [line.split() for line in f if line.strip()]
    i = 0
    while i < len(lines):
        head = lines[i]
        if head[0] != "case":
            raise SystemExit(f"{path}: expected 'case', got {' '.join(head)}")
        kind, n = head[1], int(head[2])
        m = [float(x) for x in lines[i + 1][1:]]
        mobility = dict(translation_free=bool(m[0]), rotation_free=bool(m[1]), shift=m[2],
                        follows=bool(m[3]), c=np.array([m[4], m[5]]), c_allow=m[6], width=None)
        i += 2
        if lines[i][0] == "width":
            faces = {}
            for line in lines[i + 1:i + 3]:
                xy = np.array([float(x) for x in line[1:]])
                if line[0] not in ("positive", "negative") or xy.size == 0 or xy.size % 2:
                    raise SystemExit(f"{path}: expected a face's points, got {' '.join(line[:3])}")
                faces[line[0]] = xy.reshape(-1, 2)
            if len(faces) != 2:
                raise SystemExit(f"{path}: a width datum needs a positive and a negative face")
            mobility["width"] = dict(internal=bool(int(lines[i][1])), mmb=float(lines[i][2]),
                                     positive=faces["positive"], negative=faces["negative"])
            i += 3
        bores = []
        for k in range(n):
            b = [float(x) for x in lines[i + k][1:]]
            bores.append(dict(basic=np.array(b[0:2]), allowed=b[2],
                              ends=[np.array(b[5:7]), np.array(b[7:9])]))
        r = [float(x) for x in lines[i + n][1:]]
        cases.append(dict(kind=kind, mobility=mobility, bores=bores,
                          result=dict(shift=np.array(r[0:2]), theta=r[2], ratio=r[3])))
        i += 1 + n
    return cases


def rot_t(theta):
    c, s = math.cos(theta), math.sin(theta)
    return np.array([[c, s], [-s, c]])  # R(theta)^T


def term_ratios(bores, shift, theta):
    rt = rot_t(theta)
    out = []
    for b in bores:
        for e in b["ends"]:
            offset = rt @ (b["basic"] + e - shift) - b["basic"]
            out.append(2.0 * np.linalg.norm(offset) / b["allowed"])
    return np.array(out)


def worst(bores, shift, theta):
    return float(term_ratios(bores, shift, theta).max())


def follow_angle(c, shift):
    d = c - shift
    return math.atan2(d[1], d[0]) - math.atan2(c[1], c[0])


def c_offset(c, shift, theta):
    alpha = math.atan2(c[1], c[0])
    n = np.array([-math.sin(alpha + theta), math.cos(alpha + theta)])
    return float((c - shift) @ n)


def simulator_normal(c, theta):
    alpha = math.atan2(c[1], c[0])
    return np.array([-math.sin(alpha + theta), math.cos(alpha + theta)])


def width_room(width, c, shift, theta):
    """Room (mm) each face point leaves to a slot's or tab's MMB simulator, whose centre plane
    passes through the moved origin s with normal n; every entry is >= 0 when it fits."""
    n = simulator_normal(c, theta)
    positive = (width["positive"] - shift) @ n
    negative = (width["negative"] - shift) @ n
    half = 0.5 * width["mmb"]
    if width["internal"]:  # the block stays between the faces
        return np.concatenate([positive - half, -half - negative])
    both = np.concatenate([positive, negative])  # every point stays between the plates
    return np.concatenate([half - both, half + both])


def solve_with_scipy(case, rng):
    mob, bores = case["mobility"], case["bores"]
    free_shift = mob["translation_free"] or mob["shift"] > 0.0
    free_theta = mob["rotation_free"] or mob["c_allow"] > 0.0  # 'follows' ties theta to s

    def unpack(x):
        k = 0
        shift = np.zeros(2)
        theta = 0.0
        if free_shift:
            shift = np.array(x[0:2]) * S_UNIT
            k = 2
        if free_theta:
            theta = x[k] * T_UNIT
            k += 1
        if mob["follows"]:
            theta = follow_angle(mob["c"], shift)
        return shift, theta, x[k]

    def epigraph(x):
        shift, theta, t = unpack(x)
        return t * t - term_ratios(bores, shift, theta) ** 2

    constraints = [{"type": "ineq", "fun": epigraph}, {"type": "ineq", "fun": lambda x: unpack(x)[2]}]
    if free_shift and not mob["translation_free"]:
        r = mob["shift"] / S_UNIT
        constraints.append({"type": "ineq", "fun": lambda x: r * r - x[0] ** 2 - x[1] ** 2})
    if mob["width"] is not None:
        # In micrometres, as the shift, so that SLSQP sees terms of order one.
        constraints.append({"type": "ineq", "fun": lambda x: width_room(
            mob["width"], mob["c"], *unpack(x)[0:2]) / S_UNIT})
    elif mob["c_allow"] > 0.0:
        def c_room(x, sign):
            shift, theta, _ = unpack(x)
            return mob["c_allow"] + sign * c_offset(mob["c"], shift, theta)
        constraints.append({"type": "ineq", "fun": lambda x: c_room(x, -1.0)})
        constraints.append({"type": "ineq", "fun": lambda x: c_room(x, +1.0)})

    n_var = (2 if free_shift else 0) + (1 if free_theta else 0)
    starts = [np.zeros(n_var)]
    radius = mob["shift"] / S_UNIT if mob["shift"] > 0 else 20.0
    for _ in range(5):
        x = []
        if free_shift:
            phi, rr = rng.uniform(0, 2 * math.pi), radius * math.sqrt(rng.uniform(0, 1))
            x += [rr * math.cos(phi), rr * math.sin(phi)]
        if free_theta:
            x += [rng.uniform(-300.0, 300.0)]
        starts.append(np.array(x))
    best = None
    for x0 in starts:
        shift, theta, _ = unpack(np.append(x0, 0.0))
        t0 = worst(bores, shift, theta) * 1.01 + 1e-9
        res = minimize(lambda x: x[-1], np.append(x0, t0), method="SLSQP",
                       constraints=constraints, options={"ftol": 1e-15, "maxiter": 1000})
        shift, theta, _ = unpack(res.x)
        ok = all(np.all(c["fun"](res.x) >= -1e-9) for c in constraints)
        if not ok:
            continue
        value = worst(bores, shift, theta)
        if best is None or value < best[0]:
            best = (value, shift, theta)
    return best


def allowed_motion(case):
    """cylzone's motion satisfies the mobility's constraints."""
    mob, res = case["mobility"], case["result"]
    s, theta = res["shift"], res["theta"]
    if not mob["translation_free"]:
        if np.linalg.norm(s) > mob["shift"] * (1 + 1e-12) + 1e-15:
            return f"shift {np.linalg.norm(s):.3e} beyond allowance {mob['shift']:.3e}"
    fixed_theta = not (mob["rotation_free"] or mob["follows"] or mob["c_allow"] > 0)
    if fixed_theta and theta != 0.0:
        return f"rotation {theta:.3e} while the rotation is fixed"
    if mob["follows"] and abs(theta - follow_angle(mob["c"], s)) > 1e-12:
        return "rotation does not follow datum C"
    if mob["width"] is not None:
        room = width_room(mob["width"], mob["c"], s, theta).min()
        if room < -1e-12:
            return f"datum C's MMB simulator does not fit its faces (by {-room:.3e} mm)"
    elif mob["c_allow"] > 0 and abs(c_offset(mob["c"], s, theta)) > mob["c_allow"] * (1 + 1e-9):
        return "datum C moves beyond its allowance"
    return None


def main():
    if len(sys.argv) != 2:
        raise SystemExit("usage: crosscheck_evaluation.py CASES_FILE")
    cases = read_cases(sys.argv[1])
    if not cases:
        raise SystemExit(f"{sys.argv[1]}: no cases")
    rng = np.random.default_rng(20240611)
    failures = []
    worst_by_kind = {}
    print(f"{'case':>4} {'kind':>9} {'bores':>5} {'cylzone':>14} {'scipy':>14} {'difference':>11}")
    for k, case in enumerate(cases):
        res = case["result"]
        problem = allowed_motion(case)
        if problem:
            failures.append(f"case {k} ({case['kind']}): {problem}")
        recomputed = worst(case["bores"], res["shift"], res["theta"])
        if abs(recomputed - res["ratio"]) > 1e-12:
            failures.append(f"case {k} ({case['kind']}): reported ratio {res['ratio']:.15g}, "
                            f"numpy gives {recomputed:.15g} for the same motion")
        best = solve_with_scipy(case, rng)
        if best is None:
            failures.append(f"case {k} ({case['kind']}): scipy found no feasible solution")
            continue
        diff = res["ratio"] - best[0]
        worst_by_kind[case["kind"]] = max(worst_by_kind.get(case["kind"], 0.0), abs(diff))
        print(f"{k:>4} {case['kind']:>9} {len(case['bores']):>5} {res['ratio']:>14.10f} "
              f"{best[0]:>14.10f} {diff:>11.2e}")
        if diff > 1e-9:
            failures.append(f"case {k} ({case['kind']}): cylzone ratio {res['ratio']:.12f} is worse "
                            f"than scipy's {best[0]:.12f}")
        if abs(diff) > 1e-6:
            failures.append(f"case {k} ({case['kind']}): cylzone {res['ratio']:.12f} and scipy "
                            f"{best[0]:.12f} disagree")
    for kind, value in worst_by_kind.items():
        print(f"largest |cylzone - scipy| for {kind}: {value:.2e}")
    if failures:
        print("\n".join(failures), file=sys.stderr)
        return 1
    print(f"{len(cases)} datum mobility cases agree with scipy.optimize.minimize (SLSQP)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
