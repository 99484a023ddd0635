"""`cylzone check` with datum C a bore at RMB while datum B shifts at MMB: both readings of C's
simulator in one plan, end to end, and the same part after a rigid motion.

The part: datum A the plane z = 0; datum B a bore 12.000-12.050 whose MMB is its virtual
condition 11.980 (a perpendicularity of 0.020 at MMC), its points on a perfect cylinder of
diameter 12.030, so B may shift (12.030 - 11.980) / 2 = 0.025 (ASME Y14.5-2018 datum feature
shift, from memory for the clause); datum C a bore at its basic 100 mm from B; and two copies of
one bore at basic (-25, -100), 40 mm deep, on position at its mouth and (0.060, 0.030) off at its
bottom (position 2 sqrt(0.060^2 + 0.030^2) = 0.134164 in the fixed frame), D0.100 RFS, one to
"A|B(M)|C" (C's simulator fixed at basic: the default) and one to "A|B(M)|C(T)" (translating).

References: the positions after the datum mobility, 0.131185 fixed at basic (does not conform)
and 0.092162 translating (conforms), are scipy.optimize.minimize (SLSQP) solutions with the
simulators' constraints written out, tests/reference/crosscheck_tertiary.py, case "tilted";
the tolerance 2e-6 covers the fits of points on perfect cylinders. A rigid motion of every point
must leave every figure unchanged (common practice: results do not depend on fixturing).

Usage: /usr/bin/python3 test_tertiary_datum.py PATH_TO_CYLZONE
"""
import json
import math
import os
import subprocess
import sys
import tempfile

import numpy as np

CLI = sys.argv[1]
failures = []


def cylinder(centre_top, centre_bottom, diameter, levels, per_level=36):
    top, bottom = np.array(centre_top, float), np.array(centre_bottom, float)
    axis = (bottom - top) / np.linalg.norm(bottom - top)
    u = np.cross(axis, [0.0, 1.0, 0.0]) if abs(axis[1]) < 0.9 else np.cross(axis, [1.0, 0.0, 0.0])
    u /= np.linalg.norm(u)
    v = np.cross(axis, u)
    pts = []
    for t in np.linspace(0.05, 0.95, levels):
        c = top + t * (bottom - top)
        for k in range(per_level):
            a = 2.0 * math.pi * (k + 0.5 * (t > 0.5)) / per_level
            pts.append(c + 0.5 * diameter * (math.cos(a) * u + math.sin(a) * v))
    return np.array(pts)


def plane_points():
    xs = np.linspace(-60.0, 130.0, 12)
    ys = np.linspace(-130.0, 40.0, 12)
    return np.array([[x, y, 0.0] for x in xs for y in ys])


PLAN = """format = "cylzone-plan-1"
name = "tertiary datum reading, invented test part"
units = "mm"

[datum.A]
feature = "plane"
points = "a.csv"
material_side = {side}

[datum.B]
feature = "bore"
points = "b.csv"
size = {{ lower = 12.000, upper = 12.050 }}
mmb = 11.980

[datum.C]
feature = "bore"
points = "c.csv"
basic = [100.0, 0.0]
size = {{ lower = 8.000, upper = 8.015 }}

[[bore]]
id = "FIX"
points = "t.csv"
basic = [-25.0, -100.0]
depth = {{ top = 0.0, bottom = -40.0 }}
size = {{ lower = 10.000, upper = 10.015 }}
position = {{ tolerance = 0.100, modifier = "RFS", datums = "A|B(M)|C" }}

[[bore]]
id = "SLIDE"
points = "t.csv"
basic = [-25.0, -100.0]
depth = {{ top = 0.0, bottom = -40.0 }}
size = {{ lower = 10.000, upper = 10.015 }}
position = {{ tolerance = 0.100, modifier = "RFS", datums = "A|B(M)|C(T)" }}
"""


def run_part(directory, rotation, translation):
    clouds = {
        "a.csv": plane_points(),
        "b.csv": cylinder([0, 0, 0], [0, 0, -20], 12.030, 5),
        "c.csv": cylinder([100, 0, 0], [100, 0, -15], 8.005, 4),
        "t.csv": cylinder([-25, -100, 0], [-25 + 0.060, -100 + 0.030, -40], 10.005, 9),
    }
    for name, p in clouds.items():
        moved = p @ rotation.T + translation
        np.savetxt(os.path.join(directory, name), moved, fmt="%.9f", delimiter=",")
    side = rotation @ np.array([0.0, 0.0, -1.0])
    with open(os.path.join(directory, "plan.toml"), "w") as f:
        f.write(PLAN.format(side="[" + ", ".join(f"{x:.15f}" for x in side) + "]"))
    out = os.path.join(directory, "out.json")
    csv = os.path.join(directory, "out.csv")
    p = subprocess.run([CLI, "check", os.path.join(directory, "plan.toml"), "--json", out,
                        "--csv", csv], capture_output=True, text=True)
    if p.returncode not in (0, 1):
        failures.append(f"cylzone check exited {p.returncode}: {p.stderr.strip()[:300]}")
        return None
    # The terminal report names the reading per bore too.
    for bore_id, phrase in (("FIX", "simulator fixed at its basic location"),
                            ("SLIDE", "its simulator translating")):
        lines = [l for l in p.stdout.splitlines() if l.startswith(f"datum mobility, bore {bore_id}:")]
        check(f"terminal, {bore_id}", len(lines) == 1 and phrase in lines[0],
              f"expected one 'datum mobility' line with {phrase!r}, got {lines}")
    with open(out) as f:
        return {b["id"]: b for b in json.load(f)["bores"]}


def check(name, condition, detail):
    if not condition:
        failures.append(f"{name}: {detail}")


def main():
    turn = 0.7
    rotation = np.array([[math.cos(turn), -math.sin(turn), 0.0],
                         [math.sin(turn), math.cos(turn), 0.0], [0.0, 0.0, 1.0]])
    tilt = 0.2
    rotation = rotation @ np.array([[1.0, 0.0, 0.0], [0.0, math.cos(tilt), -math.sin(tilt)],
                                    [0.0, math.sin(tilt), math.cos(tilt)]])
    results = []
    for label, r, t in (("as built", np.eye(3), np.zeros(3)),
                        ("moved", rotation, np.array([250.0, -40.0, 75.0]))):
        with tempfile.TemporaryDirectory() as d:
            bores = run_part(d, r, t)
        if bores is None:
            return 1
        results.append(bores)
        for bore_id, reading, want, verdict in (("FIX", "fixed_at_basic", 0.131185, "does not conform"),
                                                ("SLIDE", "translating", 0.092162, "conforms")):
            b = bores[bore_id]
            name = f"{label}, {bore_id}"
            check(name, abs(b["position"]["value"] - 0.134164) < 2e-6,
                  f"fixed-frame position {b['position']['value']}, expected 0.134164")
            m = b["position_with_mobility"]
            check(name, m is not None, "no position after the datum mobility")
            if m is None:
                continue
            check(name, m["datum_c_simulator"] == reading,
                  f"datum_c_simulator {m['datum_c_simulator']!r}, expected {reading!r}")
            check(name, abs(m["value"] - want) < 2e-6, f"position {m['value']}, expected {want}")
            check(name, m["verdict"] == verdict, f"verdict {m['verdict']!r}, expected {verdict!r}")
            phrase = "fixed at its basic location" if reading == "fixed_at_basic" else "translating"
            check(name, phrase in m["reason"], f"reason {m['reason']!r} lacks {phrase!r}")
    for bore_id in ("FIX", "SLIDE"):
        a, b = results[0][bore_id]["position_with_mobility"], results[1][bore_id]["position_with_mobility"]
        if a and b:
            check(f"rigid motion, {bore_id}", abs(a["value"] - b["value"]) < 1e-7,
                  f"{a['value']} as built, {b['value']} moved")
    for f in failures:
        print(f, file=sys.stderr)
    if failures:
        return 1
    print("both readings of datum C's simulator agree with the scipy reference, before and after "
          "a rigid motion")
    return 0


if __name__ == "__main__":
    sys.exit(main())
