"""Cross-check of the tangent (material-side) datum planes against references computed here,
independently of the library, with numpy and scipy. The cases and cylzone's answers are written
by the hidden Catch2 case "[crosscheck]" of test_tangent_plane (ctest runs it first, as a fixture).

  tangent least-squares plane  scipy.optimize.minimize(method="SLSQP") in the unknowns (n, d)
      of the plane n.p = d with the equality |n|^2 = 1 and one inequality d - n.p_i >= 0 per
      point (every point on the material side), minimising sum (n.p_i - d)^2: the orthogonal
      distances themselves, with a unit normal, not the local vertical parametrisation used by
      cylzone (Shakarji & Srinivasan, J. Comput. Inf. Sci. Eng. 15(4), 2015, define the
      constrained L2 plane this way).
  tangent minimax plane  the minimum-zone (Chebyshev) plane by scipy.optimize.linprog (HiGHS
      dual simplex): in a frame with z along the current normal, min (hi - lo) subject to
      lo <= z_i - a x_i - b y_i <= hi, re-rotated to the solution until the tilt vanishes
      (at zero tilt the vertical and orthogonal widths agree to first order); the tangent plane
      is the outer of the two zone planes (ISO 5459:2011 minimax datum plane).
  tangent least-squares line  SLSQP as for the plane, in two dimensions (the datum plane C held
      perpendicular to A is this line in A's plane).

Agreement: the two planes (lines) may differ by at most 1e-8 mm anywhere over the points
(least squares) and 1e-9 mm (minimax). cylzone's planes must also be feasible and no worse
than SLSQP's in the objective. Exits non-zero and lists each disagreement otherwise.

Usage: /usr/bin/python3 crosscheck_datum.py CASES.json
"""
import json
import sys

import numpy as np
from scipy.optimize import linprog, minimize

TOL_LS = 1e-8      # mm
TOL_MINIMAX = 1e-9  # mm
failures = []
worst = {}


def note(name, what, deviation, tol):
    worst[what] = max(worst.get(what, 0.0), deviation)
    if not deviation <= tol:
        failures.append(f"{name}: {what} differs by {deviation:.3e} mm (tolerance {tol:.0e})")


def centred(points):
    c = points.mean(axis=0)
    q = points - c
    return c, q, np.linalg.norm(q, axis=1).max()


def svd_normal(q):
    return np.linalg.svd(q, full_matrices=False)[2][-1]


def tangent_least_squares_slsqp(points, material_side):
    """Returns (centroid, unit outward normal n, offset) with n.(p - centroid) = offset.

    The unknowns are the normal n (any length, held to |n| = 1 by the equality constraint) and
    the offset. For SLSQP to converge to rounding they are preconditioned, not reparametrised:
    n = M y with M the principal axes of the points scaled so that a unit change of y moves the
    plane by about the points' height range everywhere (the tangential components of n are
    multiplied by that range, the normal one by 1). The objective and constraints are still
    those of the unit-normal problem. SLSQP is restarted from its own answer (a fresh
    quasi-Newton matrix) until the sum of squares stops falling.
    """
    c, q, scale = centred(points)
    x = q / scale  # dimensionless coordinates
    dim = points.shape[1]
    basis = np.linalg.svd(x, full_matrices=False)[2][::-1].T  # column 0: least-squares normal
    if basis[:, 0] @ material_side > 0:
        basis[:, 0] = -basis[:, 0]
    n = basis[:, 0]
    d = (x @ n).max()
    for _ in range(20):
        height = max(np.abs(x @ n - d).max(), 1e-300)
        m = basis * np.append(1.0, np.full(dim - 1, height))
        xm = x @ m
        f0 = max(((x @ n - d) ** 2).sum(), 1e-300)
        y0 = np.append(np.linalg.solve(m, n), d / height)

        def residual(y):
            return xm @ y[:dim] - height * y[dim]

        def objective(y):
            r = residual(y)
            return (r @ r) / f0

        def gradient(y):
            r = residual(y)
            return np.append(2.0 * xm.T @ r, -2.0 * height * r.sum()) / f0

        constraints = [
            {"type": "eq", "fun": lambda y: (m @ y[:dim]) @ (m @ y[:dim]) - 1.0,
             "jac": lambda y: np.append(2.0 * m.T @ (m @ y[:dim]), 0.0)},
            {"type": "ineq", "fun": lambda y: -residual(y) / height,
             "jac": lambda y: np.hstack([-xm / height, np.ones((x.shape[0], 1))])},
        ]
        result = minimize(objective, y0, jac=gradient, method="SLSQP", constraints=constraints,
                          options={"ftol": 1e-16, "maxiter": 2000})
        # Exit mode 8 ("positive directional derivative in line search") is SLSQP reaching the
        # rounding level; any other failure is an error.
        if result.status not in (0, 8):
            raise RuntimeError(f"SLSQP: {result.message}")
        # Unit normal again, and the plane moved onto the outermost point (feasible exactly).
        n_new = m @ result.x[:dim]
        n_new /= np.linalg.norm(n_new)
        d_new = (x @ n_new).max()
        f_new = ((x @ n_new - d_new) ** 2).sum()
        improved = f_new < f0 * (1.0 - 1e-15)
        if f_new < f0:
            n, d = n_new, d_new
        if not improved:
            break
    return c, n, d * scale


def chebyshev_outer_plane(points, material_side):
    c, q, scale = centred(points)
    n = svd_normal(q)
    for _ in range(60):
        e = np.eye(3)[np.argmin(np.abs(n))]  # the coordinate axis least parallel to n
        u = e - (e @ n) * n
        u /= np.linalg.norm(u)
        v = np.cross(n, u)
        xs, ys = q @ u / scale, q @ v / scale
        z = q @ n * 1000.0  # micrometres, so the LP's tolerances are far below the data
        ones, zeros = np.ones_like(xs), np.zeros_like(xs)
        a_ub = np.vstack([np.column_stack([-xs, -ys, zeros, -ones]),
                          np.column_stack([xs, ys, ones, zeros])])
        b_ub = np.concatenate([-z, z])
        lp = linprog([0.0, 0.0, -1.0, 1.0], A_ub=a_ub, b_ub=b_ub,
                     bounds=[(None, None)] * 4, method="highs-ds",
                     options={"primal_feasibility_tolerance": 1e-10,
                              "dual_feasibility_tolerance": 1e-10})
        if lp.status != 0:
            raise RuntimeError(f"linprog: {lp.message}")
        a, b = lp.x[0] / 1000.0 / scale, lp.x[1] / 1000.0 / scale  # slopes (mm/mm)
        n = n - a * u - b * v
        n /= np.linalg.norm(n)
        if np.hypot(a, b) < 1e-15:
            break
    if n @ material_side > 0:
        n = -n
    d = q @ n
    return c, n, d.max(), d.max() - d.min()


def plane_gap(points, c_ref, n_ref, offset_ref, n_cyl, p_cyl):
    """Largest difference between the two planes' signed distances over the points."""
    ref = (points - c_ref) @ n_ref - offset_ref
    cyl = (points - p_cyl) @ n_cyl
    return np.abs(ref - cyl).max()


def check_least_squares(name, points, material_side, normal, point):
    c, n, offset = tangent_least_squares_slsqp(points, material_side)
    note(name, "tangent least squares vs SLSQP", plane_gap(points, c, n, offset, normal, point),
         TOL_LS)
    r_cyl = (points - point) @ normal
    r_ref = (points - c) @ n - offset
    if r_cyl.max() > 1e-12:
        failures.append(f"{name}: cylzone's tangent plane leaves a point {r_cyl.max():.3e} mm "
                        "outside the material")
    # cylzone must not be worse than SLSQP (beyond SLSQP's own slight infeasibility).
    if (r_cyl @ r_cyl) > (r_ref @ r_ref) * (1.0 + 1e-9) + 1e-18:
        failures.append(f"{name}: cylzone's sum of squares {r_cyl @ r_cyl:.12e} exceeds SLSQP's "
                        f"{r_ref @ r_ref:.12e}")


def main():
    if len(sys.argv) != 2:
        sys.exit("usage: crosscheck_datum.py CASES.json")
    try:
        with open(sys.argv[1]) as f:
            cases = json.load(f)
    except (OSError, ValueError) as error:
        sys.exit(f"{sys.argv[1]}: cannot read the cases ({error}); run test_tangent_plane "
                 "\"[crosscheck]\" first")

    for case in cases["planes"]:
        name = case["name"]
        points = np.array(case["points"], dtype=float)
        side = np.array(case["material_side"], dtype=float)
        ls = case["tangent_least_squares"]
        check_least_squares(name, points, side, np.array(ls["normal"]), np.array(ls["point"]))
        mm = case["tangent_minimax"]
        c, n, offset, width = chebyshev_outer_plane(points, side)
        note(name, "tangent minimax vs linprog",
             plane_gap(points, c, n, offset, np.array(mm["normal"]), np.array(mm["point"])),
             TOL_MINIMAX)
        note(name, "minimax zone width vs linprog", abs(width - mm["form"]), TOL_MINIMAX)

    for case in cases["lines"]:
        check_least_squares(case["name"], np.array(case["points"], dtype=float),
                            np.array(case["material_side"], dtype=float),
                            np.array(case["normal"]), np.array(case["point"]))

    print(f"{len(cases['planes'])} plane cases, {len(cases['lines'])} line cases")
    for what, deviation in sorted(worst.items()):
        print(f"  largest difference, {what}: {deviation:.3e} mm")
    if failures:
        print("\n".join(failures), file=sys.stderr)
        sys.exit(1)


if __name__ == "__main__":
    main()
