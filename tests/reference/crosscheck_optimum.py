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
