#!/usr/bin/python3
"""Cross-check of cylzone's least-squares fits against scipy.optimize.least_squares.

Usage: /usr/bin/python3 crosscheck_least_squares.py PATH_TO_CYLZONE_CLI

For each element (line, plane, circle, sphere, cylinder) noisy random point sets (fixed seeds;
off the origin, tilted, some several metres from the origin, some on partial arcs) are written to
temporary CSV files, fitted by `cylzone fit ELEMENT FILE --json`, and fitted independently here
by scipy.optimize.least_squares (MINPACK Levenberg-Marquardt) in its own parameterisation:
point + unnormalised direction with the gauge fixed by extra residuals, started from a perturbed
truth, with tolerances near machine precision. Both minimise the same sum of squared orthogonal
distances, so they must agree to the solvers' tolerances: axis position (over the points'
extent) and radius within 1e-7 mm, directions within 1e-8 rad.

A circle in space is, as in cylzone's documentation (Shakarji 1998), the least-squares plane of
its points, then the geometric circle of the points projected into it; scipy solves both stages.

Exits 0 when every case agrees, 1 with one line per disagreement, 2 when the tool cannot be run.
"""
import json
import os
import subprocess
import sys
import tempfile

import numpy as np
from scipy.optimize import least_squares

POSITION_TOL = 1e-7   # mm
RADIUS_TOL = 1e-7     # mm
ANGLE_TOL = 1e-8      # rad
SOLVER = dict(method="lm", ftol=1e-15, xtol=1e-15, gtol=1e-15, max_nfev=20000)


def unit(v):
    v = np.asarray(v, dtype=float)
    return v / np.linalg.norm(v)


def direction(polar_deg, azimuth_deg):
    p, a = np.radians(polar_deg), np.radians(azimuth_deg)
    return np.array([np.sin(p) * np.cos(a), np.sin(p) * np.sin(a), np.cos(p)])


def perpendicular_pair(w):
    w = unit(w)
    seed = np.array([0.0, 0.0, 1.0]) if abs(w[2]) < 0.9 else np.array([1.0, 0.0, 0.0])
    u = unit(np.cross(w, seed))
    return u, np.cross(w, u)


def line_angle(a, b):
    a, b = unit(a), unit(b)
    return float(np.arctan2(np.linalg.norm(np.cross(a, b)), abs(np.dot(a, b))))


def point_line_distance(q, point, d):
    d = unit(d)
    r = q - point
    return float(np.linalg.norm(r - np.dot(r, d) * d))


# ------------------------------------------------------------------ point sets (invented parts)

def line_points(rng, point, d, t0, t1, n, noise):
    u, v = perpendicular_pair(d)
    t = rng.uniform(t0, t1, n)
    e = rng.normal(0.0, noise, (n, 2))
    return point + np.outer(t, d) + np.outer(e[:, 0], u) + np.outer(e[:, 1], v)


def plane_points(rng, point, normal, width, height, n, noise):
    u, v = perpendicular_pair(normal)
    x = rng.uniform(-width / 2, width / 2, n)
    y = rng.uniform(-height / 2, height / 2, n)
    return point + np.outer(x, u) + np.outer(y, v) + np.outer(rng.normal(0, noise, n), normal)


def circle_points(rng, centre, normal, radius, arc_deg, n, noise):
    u, v = perpendicular_pair(normal)
    a = rng.uniform(0.0, np.radians(arc_deg), n)
    r = radius + rng.normal(0.0, noise, n)
    out = rng.normal(0.0, noise, n)  # out-of-plane probing noise too
    return (centre + np.outer(r * np.cos(a), u) + np.outer(r * np.sin(a), v) +
            np.outer(out, unit(normal)))


def sphere_points(rng, centre, radius, pole, cap_deg, n, noise):
    u, v = perpendicular_pair(pole)
    w = unit(pole)
    c = rng.uniform(np.cos(np.radians(cap_deg)), 1.0, n)
    s = np.sqrt(1.0 - c * c)
    a = rng.uniform(0.0, 2 * np.pi, n)
    nrm = np.outer(s * np.cos(a), u) + np.outer(s * np.sin(a), v) + np.outer(c, w)
    return centre + nrm * (radius + rng.normal(0.0, noise, n))[:, None]


def cylinder_points(rng, point, d, radius, t0, t1, arc_deg, n, noise):
    u, v = perpendicular_pair(d)
    t = rng.uniform(t0, t1, n)
    a = rng.uniform(0.0, np.radians(arc_deg), n)
    r = radius + rng.normal(0.0, noise, n)
    return point + np.outer(t, d) + np.outer(r * np.cos(a), u) + np.outer(r * np.sin(a), v)


# ------------------------------------------------------------------ scipy references

def ref_line(p, start_point, start_dir):
    c0 = p.mean(axis=0)

    def residuals(x):
        a, d = x[:3], x[3:]
        dn = d / np.linalg.norm(d)
        r = p - a
        perp = r - np.outer(r @ dn, dn)
        # gauge: |d| = 1 and the point at the foot of the perpendicular from the centroid
        return np.concatenate([perp.ravel(), [d @ d - 1.0, (a - c0) @ dn]])

    sol = least_squares(residuals, np.concatenate([start_point, start_dir]), **SOLVER)
    return sol.x[:3], unit(sol.x[3:])


def ref_plane(p, start_normal, start_offset):
    def residuals(x):
        n, off = x[:3], x[3]
        return np.concatenate([p @ (n / np.linalg.norm(n)) - off, [n @ n - 1.0]])

    sol = least_squares(residuals, np.concatenate([start_normal, [start_offset]]), **SOLVER)
    n = unit(sol.x[:3])
    return n, sol.x[3]


def ref_circle(p, start_centre, start_normal, start_radius):
    normal, offset = ref_plane(p, start_normal, float(start_normal @ start_centre))
    u, v = perpendicular_pair(normal)
    origin = offset * normal
    uv = np.column_stack([(p - origin) @ u, (p - origin) @ v])

    def residuals(x):
        return np.hypot(uv[:, 0] - x[0], uv[:, 1] - x[1]) - x[2]

    def jacobian(x):
        dx, dy = uv[:, 0] - x[0], uv[:, 1] - x[1]
        rho = np.hypot(dx, dy)
        return np.column_stack([-dx / rho, -dy / rho, -np.ones_like(rho)])

    s = start_centre - origin
    sol = least_squares(residuals, [s @ u, s @ v, start_radius], jac=jacobian, **SOLVER)
    return origin + sol.x[0] * u + sol.x[1] * v, normal, sol.x[2]


def ref_sphere(p, start_centre, start_radius):
    def residuals(x):
        return np.linalg.norm(p - x[:3], axis=1) - x[3]

    def jacobian(x):
        q = p - x[:3]
        rho = np.linalg.norm(q, axis=1)
        return np.column_stack([-q / rho[:, None], -np.ones_like(rho)])

    sol = least_squares(residuals, np.concatenate([start_centre, [start_radius]]), jac=jacobian,
                        **SOLVER)
    return sol.x[:3], sol.x[3]


def ref_cylinder(p, start_point, start_dir, start_radius):
    c0 = p.mean(axis=0)

    def residuals(x):
        a, d, r = x[:3], x[3:6], x[6]
        dn = d / np.linalg.norm(d)
        dist = np.linalg.norm(np.cross(p - a, dn), axis=1)
        return np.concatenate([dist - r, [d @ d - 1.0, (a - c0) @ dn]])

    sol = least_squares(residuals, np.concatenate([start_point, start_dir, [start_radius]]),
                        **SOLVER)
    return sol.x[:3], unit(sol.x[3:6]), sol.x[6]


# ------------------------------------------------------------------ driver

def run_tool(cli, element, points, workdir, name):
    path = os.path.join(workdir, name + ".csv")
    with open(path, "w") as f:
        f.write("x,y,z\n")
        for x, y, z in points:
            f.write(f"{x!r},{y!r},{z!r}\n")
    proc = subprocess.run([cli, "fit", element, path, "--json"], capture_output=True, text=True)
    if proc.returncode != 0:
        raise RuntimeError(f"{name}: cylzone exited {proc.returncode}: {proc.stderr.strip()}")
    return json.loads(proc.stdout)


def main():
    if len(sys.argv) != 2:
        print("usage: crosscheck_least_squares.py PATH_TO_CYLZONE_CLI", file=sys.stderr)
        return 2
    cli = sys.argv[1]
    failures = []
    checked = 0
    largest = {}

    def expect(name, what, value, tol):
        nonlocal checked
        checked += 1
        largest[what] = max(largest.get(what, 0.0), abs(value))
        if not (abs(value) <= tol):
            failures.append(f"{name}: {what} differs by {value:.3e} (tolerance {tol:.0e})")

    with tempfile.TemporaryDirectory(prefix="cylzone-ls-") as work:
        try:
            # ---- lines
            for name, seed, pt, ang, t, n, noise in [
                    ("line tilted", 1, [12.5, -7.25, 30.0], (23, 140), (-40, 25), 80, 0.005),
                    ("line far", 2, [2500.0, -1800.0, 3200.0], (61, -35), (0, 150), 200, 0.002),
                    ("line short", 3, [-3.0, 8.0, 1.0], (88, 10), (-1, 1.5), 15, 0.0005)]:
                rng = np.random.default_rng(seed)
                d = direction(*ang)
                p = line_points(rng, np.array(pt), d, *t, n, noise)
                j = run_tool(cli, "line", p, work, name.replace(" ", "_"))
                a, dd = ref_line(p, np.array(pt) + 0.01, d + np.array([0.002, -0.001, 0.001]))
                fp, fd = np.array(j["axis"]["point"]), np.array(j["axis"]["direction"])
                expect(name, "direction", line_angle(fd, dd), ANGLE_TOL)
                for t_end in j["extent"]:
                    expect(name, "axis position", point_line_distance(fp + t_end * fd, a, dd), POSITION_TOL)

            # ---- planes
            for name, seed, pt, ang, size, n, noise in [
                    ("plane tilted", 4, [40.0, -12.0, 7.5], (30, 60), (80, 50), 150, 0.003),
                    ("plane far", 5, [2500.0, -1800.0, 3200.0], (75, 130), (300, 120), 300, 0.01)]:
                rng = np.random.default_rng(seed)
                nrm = direction(*ang)
                p = plane_points(rng, np.array(pt), nrm, *size, n, noise)
                j = run_tool(cli, "plane", p, work, name.replace(" ", "_"))
                rn, off = ref_plane(p, nrm + np.array([0.003, 0.002, -0.001]), float(nrm @ pt) + 0.05)
                fp, fn = np.array(j["point"]), np.array(j["normal"])
                expect(name, "normal", line_angle(fn, rn), ANGLE_TOL)
                expect(name, "plane position", float(fp @ rn - off), POSITION_TOL)

            # ---- circles
            for name, seed, c, ang, r, arc, n, noise in [
                    ("circle full", 6, [35.0, -12.0, 8.0], (28, 115), 12.5, 360, 60, 0.004),
                    ("circle 120 deg", 7, [1.0, 2.0, 3.0], (15, 70), 8.0, 120, 50, 0.001),
                    ("circle far", 8, [2500.0, -1800.0, 3200.0], (80, 200), 45.0, 360, 90, 0.005)]:
                rng = np.random.default_rng(seed)
                nrm = direction(*ang)
                p = circle_points(rng, np.array(c), nrm, r, arc, n, noise)
                j = run_tool(cli, "circle", p, work, name.replace(" ", "_"))
                rc, rn, rr = ref_circle(p, np.array(c) + 0.02, nrm + np.array([0.002, 0.0, -0.002]), r + 0.01)
                expect(name, "normal", line_angle(np.array(j["normal"]), rn), ANGLE_TOL)
                expect(name, "centre", float(np.linalg.norm(np.array(j["centre"]) - rc)), POSITION_TOL)
                expect(name, "radius", j["diameter"] / 2 - rr, RADIUS_TOL)

            # ---- spheres
            for name, seed, c, r, pole, cap, n, noise in [
                    ("sphere full", 9, [14.0, -22.0, 9.5], 12.7, (0, 0), 180, 200, 0.003),
                    ("sphere cap 90 deg", 10, [-3.0, 5.0, 40.0], 25.0, (40, 120), 90, 120, 0.002),
                    ("sphere far", 11, [2500.0, -1800.0, 3200.0], 50.0, (30, 200), 120, 300, 0.004)]:
                rng = np.random.default_rng(seed)
                p = sphere_points(rng, np.array(c), r, direction(*pole), cap, n, noise)
                j = run_tool(cli, "sphere", p, work, name.replace(" ", "_"))
                rc, rr = ref_sphere(p, np.array(c) + 0.02, r - 0.01)
                expect(name, "centre", float(np.linalg.norm(np.array(j["centre"]) - rc)), POSITION_TOL)
                expect(name, "radius", j["diameter"] / 2 - rr, RADIUS_TOL)

            # ---- cylinders
            for name, seed, pt, ang, r, t, arc, n, noise in [
                    ("cylinder tilted bore", 12, [35.0, -20.0, 12.0], (18, 40), 10.0, (-15, 25), 360, 300, 0.004),
                    ("cylinder long thin", 13, [4.0, 4.0, -100.0], (75, 15), 2.0, (-100, 100), 360, 240, 0.0005),
                    ("cylinder 120 deg", 14, [-5.0, 0.0, 8.0], (50, 100), 12.0, (0, 30), 120, 200, 0.001),
                    ("cylinder far", 15, [2500.0, -1800.0, 3200.0], (35, 160), 20.0, (0, 60), 360, 360, 0.003),
                    ("cylinder large", 16, [412.5, -237.25, 88.0], (7, 34), 12.5, (0, 40), 360, 20000, 0.001)]:
                rng = np.random.default_rng(seed)
                d = direction(*ang)
                p = cylinder_points(rng, np.array(pt), d, r, *t, arc, n, noise)
                j = run_tool(cli, "cylinder", p, work, name.replace(" ", "_"))
                ra, rd, rr = ref_cylinder(p, np.array(pt) + 0.01, d + np.array([0.001, -0.002, 0.001]), r + 0.01)
                fp, fd = np.array(j["axis"]["point"]), np.array(j["axis"]["direction"])
                expect(name, "direction", line_angle(fd, rd), ANGLE_TOL)
                for t_end in j["extent"]:
                    expect(name, "axis position", point_line_distance(fp + t_end * fd, ra, rd), POSITION_TOL)
                expect(name, "radius", j["diameter"] / 2 - rr, RADIUS_TOL)
                if j.get("status") != "converged":
                    failures.append(f"{name}: status {j.get('status')}")
        except (RuntimeError, OSError, ValueError, KeyError) as e:
            print(f"crosscheck_least_squares: cannot run the tool: {e}", file=sys.stderr)
            return 2

    if failures:
        for f in failures:
            print("crosscheck_least_squares: " + f, file=sys.stderr)
        return 1
    print(f"crosscheck_least_squares: {checked} comparisons agree with scipy.optimize.least_squares")
    for what, value in sorted(largest.items()):
        print(f"  largest {what} difference: {value:.2e}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
