"""Cross-check of the maximum-inscribed cylinders of a bore bent in one plane (the hidden case
"[optimum-cases]" of tests/test_chebyshev_optimum.cpp writes them with cylzone's answers),
solved again here, independently of the library, with numpy and scipy.

The bore: section centres x = 0.010 (z/40)^2 mm, y = 0, sections every `section_step` mm over
z in [0, 40], `per_section` points at equal angles on a circle of radius 5; no noise. Its
points are symmetric under y -> -y, so the maximum-inscribed axis has a mirror image that is
equally good.

Reference: scipy.optimize.minimize (SLSQP) maximises r over the axis x = x0 + a z,
y = y0 + b z (written here in the bore's frame) subject to dist_i >= r for every point, the
orthogonal distance dist_i = |(p_i - (x0, y0, 0)) x (a, b, 1)| / |(a, b, 1)| with its analytic
gradient. It starts from the Chebyshev line of the bend shifted across the plane either way
(y0 = +-6e-5 mm) and converges to the two mirror-image optima.

Checks, per case (bore sampling and placement of the part):
  * both mirror optima have the same radius (to 1e-10 mm) and are distinct (their axes more
    than 1e-4 mm apart at the ends);
  * cylzone's radius equals the reference's within 1e-9 mm;
  * cylzone's axis is one of the two optima within 1e-7 mm at the mouth and the bottom;
  * cylzone's ambiguity is at least the distance between the two optima at the ends
    (less 1e-8 mm): the ambiguity must cover the other equally good axis.

Minimum zone (cases with "method": "minimum-zone"). Its axes form a set that is flat across the
plane of the bend to within about 1.5e-13 mm of width (the width falls by s^2 e / R^2 toward two
mirror-image corners at a shift of 0.00125 tan 2.5 deg), and cylzone reports the one with the
least sum of squared residuals among the axes whose width is within its tolerance of the optimum
(a lexicographic second stage, e.g. Nocedal & Wright, Numerical Optimization, 2nd ed., 2006;
from memory for the section). Reference, SLSQP again, in the variables (x0, y0, a, b, m, h):
  * first stage: minimise h subject to |dist_i - m| <= h, from y0 = +-6e-5 (the two corners);
  * second stage: minimise sum (dist_i - rho)^2 over (x0, y0, a, b, rho, m) subject to
    |dist_i - m| <= (w + 1e-12) / 2, w the first stage's best width, from both corners.
Checks, per case:
  * cylzone's width equals the reference's within 1e-9 mm;
  * both second-stage runs end at one axis (within 1e-8 mm at the ends), and cylzone's axis is
    that axis within 1e-7 mm at the mouth and the bottom;
  * cylzone's ambiguity covers the distance from its axis to either corner (less 1e-7 mm, the
    resolution of SLSQP's corners).
Exits non-zero and lists every disagreement otherwise.

Usage: /usr/bin/python3 crosscheck_optimum.py CASES.json
"""
import json
import math
import sys

import numpy as np
from scipy.optimize import minimize


def bent_bore(step, per_section):
    sections = int(round(40.0 / step)) + 1
    z = np.repeat(np.arange(sections) * step, per_section)
    t = np.tile(2.0 * math.pi * np.arange(per_section) / per_section, sections)
    centre = 0.010 * (z / 40.0) ** 2
    return np.column_stack([centre + 5.0 * np.cos(t), 5.0 * np.sin(t), z])


def distances(points, v):
    x0, y0, a, b = v[:4]
    w = points - np.array([x0, y0, 0.0])
    m = np.array([a, b, 1.0])
    c = np.cross(w, m)
    cn = np.linalg.norm(c, axis=1)
    s = np.linalg.norm(m)
    return cn / s, w, c, cn, s, m


def distance_jacobian(points, v):
    _, w, c, cn, s, m = distances(points, v)
    a, b = m[0], m[1]
    k = 1.0 / (cn * s)
    j = np.empty((len(points), 4))
    # dc/dx0 = -(e_x x m) = (0, 1, -b); dc/dy0 = -(e_y x m) = (-1, 0, a)
    j[:, 0] = k * (c[:, 1] - b * c[:, 2])
    j[:, 1] = k * (-c[:, 0] + a * c[:, 2])
    # dc/da = w x e_x = (0, w_z, -w_y); dc/db = w x e_y = (-w_z, 0, w_x); d|m|/da = a / |m|
    j[:, 2] = k * (w[:, 2] * c[:, 1] - w[:, 1] * c[:, 2]) - cn * a / s ** 3
    j[:, 3] = k * (-w[:, 2] * c[:, 0] + w[:, 0] * c[:, 2]) - cn * b / s ** 3
    return j


def inscribed(points, start):
    def objective(v):
        return -v[4]

    def objective_gradient(v):
        g = np.zeros(5)
        g[4] = -1.0
        return g

    def constraint(v):
        return distances(points, v)[0] - v[4]

    def constraint_jacobian(v):
        j = np.empty((len(points), 5))
        j[:, :4] = distance_jacobian(points, v)
        j[:, 4] = -1.0
        return j

    v = np.array(list(start) + [0.0])
    v[4] = distances(points, v)[0].min()
    result = minimize(objective, v, jac=objective_gradient, method="SLSQP",
                      constraints=[{"type": "ineq", "fun": constraint, "jac": constraint_jacobian}],
                      options={"ftol": 1e-16, "maxiter": 1000})
    v = result.x
    # The radius of the element found: the smallest distance, exactly.
    return v, distances(points, v)[0].min()


def zone_constraints(points, v, half):
    """|dist_i - m| <= half as two non-negative vectors, with their Jacobians; v = (x0, y0, a,
    b, ..., m) with m at index -1 when `half` is given, else (..., m, h)."""
    d = distances(points, v)[0]
    jd = distance_jacobian(points, v)
    n = len(points)
    cols = len(v)
    if half is None:
        m, h = v[-2], v[-1]
        im, ih = cols - 2, cols - 1
    else:
        m, h = v[-1], half
        im, ih = cols - 1, None
    upper = np.empty((n, cols))
    lower = np.empty((n, cols))
    upper[:] = 0.0
    lower[:] = 0.0
    upper[:, :4] = -jd
    lower[:, :4] = jd
    upper[:, im] = 1.0
    lower[:, im] = -1.0
    if ih is not None:
        upper[:, ih] = 1.0
        lower[:, ih] = 1.0
    return np.concatenate([h - (d - m), h - (m - d)]), np.vstack([upper, lower])


def minimum_zone(points, start):
    v = np.array(list(start) + [0.0, 0.0])
    d = distances(points, v)[0]
    v[4] = 0.5 * (d.max() + d.min())
    v[5] = 0.5 * (d.max() - d.min())
    g = np.zeros(6)
    g[5] = 1.0
    width_bound = {"type": "ineq", "fun": lambda v: zone_constraints(points, v, None)[0],
                   "jac": lambda v: zone_constraints(points, v, None)[1]}
    result = minimize(lambda v: v[5], v, jac=lambda v: g, method="SLSQP",
                      constraints=[width_bound], options={"ftol": 1e-16, "maxiter": 1000})
    d = distances(points, result.x)[0]
    return result.x, d.max() - d.min()


def least_squares_in_zone(points, start, width):
    """Among the axes whose zone is at most `width`, the one with the least sum of squared
    residuals about a free radius rho. v = (x0, y0, a, b, rho, m)."""
    v = np.array(list(start[:4]) + [0.0, 0.0])
    d = distances(points, v)[0]
    v[4] = d.mean()
    v[5] = 0.5 * (d.max() + d.min())
    half = 0.5 * width

    def objective(v):
        e = distances(points, v)[0] - v[4]
        return float(e @ e)

    def gradient(v):
        e = distances(points, v)[0] - v[4]
        g = np.zeros(6)
        g[:4] = 2.0 * distance_jacobian(points, v).T @ e
        g[4] = -2.0 * e.sum()
        return g

    within = {"type": "ineq", "fun": lambda v: zone_constraints(points, v, half)[0],
              "jac": lambda v: zone_constraints(points, v, half)[1]}
    result = minimize(objective, v, jac=gradient, method="SLSQP", constraints=[within],
                      options={"ftol": 1e-18, "maxiter": 1000})
    return result.x


def check_minimum_zone(case, points, name, failures):
    corners = [minimum_zone(points, (-0.00125, sign * 6e-5, 0.010 / 40.0, 0.0))
               for sign in (1.0, -1.0)]
    width = min(w for _, w in corners)
    chosen = [least_squares_in_zone(points, v, width + 1e-12) for v, _ in corners]
    tool_ends = [np.array(e) for e in case["ends"]]
    agree = max(np.linalg.norm(p - q) for p, q in zip(ends(chosen[0]), ends(chosen[1])))
    off = max(np.linalg.norm(p - q) for p, q in zip(ends(chosen[0]), tool_ends))
    to_corner = max(max(np.linalg.norm(p - q) for p, q in zip(ends(v), tool_ends))
                    for v, _ in corners)
    print("%s, minimum zone: reference width %.15f (corners %.3e apart in width), cylzone %.15f; "
          "least-squares choice %.2e mm from cylzone's axis (runs agree to %.1e), corners %.3e "
          "away, ambiguity %.3e"
          % (name, width, abs(corners[0][1] - corners[1][1]), case["form"], off, agree, to_corner,
             case["ambiguity"]))
    if abs(case["form"] - width) > 1e-9:
        failures.append("%s: minimum-zone width %.15f, reference %.15f"
                        % (name, case["form"], width))
    if agree > 1e-8:
        failures.append("%s: the reference's least-squares choices differ by %.3e" % (name, agree))
    if off > 1e-7:
        failures.append("%s: cylzone's minimum-zone axis is %.3e mm from the reference's choice"
                        % (name, off))
    if case["ambiguity"] < to_corner - 1e-7:
        failures.append("%s: ambiguity %.3e below the distance %.3e to a corner optimum"
                        % (name, case["ambiguity"], to_corner))


def ends(v):
    x0, y0, a, b = v[:4]
    return [np.array([x0 + a * z, y0 + b * z]) for z in (0.0, 40.0)]


def main():
    with open(sys.argv[1]) as f:
        cases = json.load(f)["cases"]
    failures = []
    for case in cases:
        name = "sections every %g mm, %s" % (case["section_step"], case["placement"])
        points = bent_bore(case["section_step"], case["per_section"])
        if case.get("method") == "minimum-zone":
            check_minimum_zone(case, points, name, failures)
            continue
        optima = []
        for sign in (1.0, -1.0):
            v, r = inscribed(points, (-0.00125, sign * 6e-5, 0.010 / 40.0, 0.0))
            optima.append((v, r))
        (v1, r1), (v2, r2) = optima
        apart = max(np.linalg.norm(p - q) for p, q in zip(ends(v1), ends(v2)))
        best = max(r1, r2)
        tool_ends = [np.array(e) for e in case["ends"]]
        nearest = min(max(np.linalg.norm(p - q) for p, q in zip(ends(v), tool_ends))
                      for v, _ in optima)
        print("%s: reference r %.12f / %.12f, optima %.3e mm apart; cylzone r %.12f, "
              "axis %.2e mm from the nearest, ambiguity %.3e"
              % (name, r1, r2, apart, case["radius"], nearest, case["ambiguity"]))
        if abs(r1 - r2) > 1e-10:
            failures.append("%s: the mirror optima differ in radius: %.3e" % (name, r1 - r2))
        if apart <= 1e-4:
            failures.append("%s: the reference found no distinct mirror optimum (%.3e)" % (name, apart))
        if abs(case["radius"] - best) > 1e-9:
            failures.append("%s: radius %.12f, reference %.12f" % (name, case["radius"], best))
        if nearest > 1e-7:
            failures.append("%s: cylzone's axis is %.3e mm from either optimum" % (name, nearest))
        if case["ambiguity"] < apart - 1e-8:
            failures.append("%s: ambiguity %.3e below the optima's distance %.3e"
                            % (name, case["ambiguity"], apart))
    if not cases:
        failures.append("no cases")
    for f in failures:
        print("FAIL:", f)
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
