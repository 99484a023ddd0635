#!/usr/bin/python3
"""Reference timing: least-squares cylinder with scipy.optimize.least_squares.

Same generator logic as bench_fit_cylinder.cpp (a tilted bore off the origin, full circle,
random angles and heights, 1 um Gaussian radial noise, fixed seed; numpy's generator, so the
same geometry, not the same numbers). The fit is the usual scipy route, given every advantage:
the data centred and rotated so the principal axis is z, a start from that axis and the mean
radius, five parameters (axis point (x0, y0, 0), direction (a, b, 1), radius), the analytic
Jacobian, MINPACK Levenberg-Marquardt with its default tolerances. The timed part is the whole
fit from the raw points, as in the C++ benchmark.

Usage: /usr/bin/python3 scipy_fit_cylinder.py [--sizes 1000,10000,...] [--runs N]
Prints one line per size: points, best and median wall time in ms, ns per point.
"""
import argparse
import time

import numpy as np
from scipy.optimize import least_squares

POINT = np.array([412.5, -237.25, 88.0])
DIRECTION = np.array([np.sin(0.12) * np.cos(0.6), np.sin(0.12) * np.sin(0.6), np.cos(0.12)])
RADIUS, LENGTH, NOISE = 12.5, 40.0, 0.001


def make_bore(n, seed):
    rng = np.random.default_rng(seed)
    w = DIRECTION / np.linalg.norm(DIRECTION)
    u = np.cross(w, [0.0, 0.0, 1.0])
    u /= np.linalg.norm(u)
    v = np.cross(w, u)
    a = 2 * np.pi * rng.random(n)
    t = LENGTH * rng.random(n)
    r = RADIUS + NOISE * rng.standard_normal(n)
    return POINT + np.outer(t, w) + np.outer(r * np.cos(a), u) + np.outer(r * np.sin(a), v)


def fit_cylinder(p):
    c = p.mean(axis=0)
    q = p - c
    _, _, vt = np.linalg.svd(q, full_matrices=False)
    rot = vt  # rows: principal directions, the first along the axis of a long bore
    rot = rot[[1, 2, 0]]  # make the principal (axis) direction the local z
    x, y, z = (q @ rot.T).T

    def residuals(k):
        x0, y0, a, b, r = k
        qx, qy = x - x0, y - y0
        cx, cy, cz = qy - z * b, z * a - qx, qx * b - qy * a
        s = np.sqrt(cx * cx + cy * cy + cz * cz)
        return s / np.sqrt(a * a + b * b + 1.0) - r

    def jacobian(k):
        x0, y0, a, b, r = k
        qx, qy = x - x0, y - y0
        cx, cy, cz = qy - z * b, z * a - qx, qx * b - qy * a
        s = np.sqrt(cx * cx + cy * cy + cz * cz)
        dd = np.sqrt(a * a + b * b + 1.0)
        sd = s * dd
        j = np.empty((x.size, 5))
        j[:, 0] = (cy - b * cz) / sd                      # d/dx0: dc = (0, 1, -b)
        j[:, 1] = (-cx + a * cz) / sd                     # d/dy0: dc = (-1, 0, a)
        j[:, 2] = (cy * z - cz * qy) / sd - s * a / dd**3  # d/da: dc = (0, z, -qy)
        j[:, 3] = (-cx * z + cz * qx) / sd - s * b / dd**3  # d/db: dc = (-z, 0, qx)
        j[:, 4] = -1.0
        return j

    start = [0.0, 0.0, 0.0, 0.0, float(np.mean(np.hypot(x, y)))]
    sol = least_squares(residuals, start, jac=jacobian, method="lm")
    return sol, rot, c


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--sizes", default="1000,10000,100000,1000000")
    ap.add_argument("--runs", type=int, default=0)
    args = ap.parse_args()
    print("# scipy.optimize.least_squares (lm, analytic Jacobian), same bore geometry")
    print(f"# {'points':>10} {'best_ms':>10} {'median_ms':>10} {'ns/point':>10} {'radius_err_mm':>14}")
    for n in (int(s) for s in args.sizes.split(",")):
        p = make_bore(n, 20240611 + n)
        runs = args.runs or (3 if n >= 1000000 else 5 if n >= 100000 else 11)
        ms = []
        for _ in range(runs):
            t0 = time.perf_counter()
            sol, _, _ = fit_cylinder(p)
            ms.append(1e3 * (time.perf_counter() - t0))
        best = min(ms)
        print(f"  {n:>10d} {best:>10.3f} {float(np.median(ms)):>10.3f} {1e6 * best / n:>10.2f} "
              f"{abs(sol.x[4] - RADIUS):>14.2e}")


if __name__ == "__main__":
    main()
