"""`cylzone check` gives the same report whichever way the part sat on the machine.

The demo's point files are moved by seeded random rigid motions (uniform random rotations from
unit quaternions, K. Shoemake, "Uniform random rotations", Graphics Gems III, 1992; translations
of metres), written with numpy to a temporary directory in their own format (the same header and
columns, surface vectors turned with the points), the plan's material side (a direction in
measurement coordinates) turned too, and the built tool run on each. The JSON reports are walked
leaf by leaf against the unmoved run's, so figures added to the report later are covered too.

Tolerances (the C++ suite, tests/test_invariance.cpp, derives them): lengths 1e-7 mm, angles and
unit-vector components 1e-9 rad, integers and verdicts exact, numbers inside texts to one unit of
their last printed digit. Coordinates are written with 17 significant digits, so the files carry
the moved doubles exactly (IEEE 754 round trip) and the only rounding is the motion's own.

Fields that legitimately change are checked after transforming back, not skipped: the frame's
origin and axes, datum A's point and normal, datums B's and C's axes (measurement coordinates:
the moved report must hold R p + t and R d); the input files' paths and SHA-256 digests (they must
name and hash the moved files, FIPS 180-4 via hashlib); the plan file's path.

Usage: /usr/bin/python3 test_invariance.py PATH_TO_CYLZONE PATH_TO_DEMO_PLAN
"""
import hashlib
import json
import math
import os
import re
import shutil
import subprocess
import sys
import tempfile
import tomllib

import numpy as np

CLI = sys.argv[1]
PLAN = os.path.abspath(sys.argv[2])
LENGTH = 1e-7  # mm
ANGLE = 1e-9   # rad

MACHINE_POINTS = re.compile(
    r"frame\.origin|datums\.A\.point|datums\.[BC]\.axis\.point|datums\.[BC]\.axis_on_a"
    r"|datums\.C\.point")
MACHINE_DIRECTIONS = re.compile(
    r"frame\.[xyz]_axis|datums\.A\.normal|datums\.[BC]\.axis\.direction"
    r"|datums\.C\.(centre_plane_normal|centre_direction|normal)")
ANGLE_KEYS = {"angle_rad", "rotation_rad", "direction", "normal", "x_axis", "y_axis", "z_axis",
              "centre_plane_normal", "centre_direction"}
NUMBER = re.compile(r"[-+]?\d+(\.\d+)?([eE][-+]?\d+)?")


def random_motion(seed, reach):
    """Shoemake's uniform rotation and a translation uniform in [-reach, reach]^3 mm."""
    rng = np.random.default_rng(seed)
    u1, u2, u3 = rng.uniform(size=3)
    w, x, y, z = (math.sqrt(u1) * math.cos(2 * math.pi * u3),
                  math.sqrt(1 - u1) * math.sin(2 * math.pi * u2),
                  math.sqrt(1 - u1) * math.cos(2 * math.pi * u2),
                  math.sqrt(u1) * math.sin(2 * math.pi * u3))
    r = np.array([[1 - 2 * (y * y + z * z), 2 * (x * y - z * w), 2 * (x * z + y * w)],
                  [2 * (x * y + z * w), 1 - 2 * (x * x + z * z), 2 * (y * z - x * w)],
                  [2 * (x * z - y * w), 2 * (y * z + x * w), 1 - 2 * (x * x + y * y)]])
    return r, rng.uniform(-reach, reach, size=3)


def move_csv(source, target, r, t):
    """A delimited point file moved: its header kept, x y z moved, i j k turned."""
    with open(source) as f:
        lines = f.read().splitlines()
    header = lines[0]
    columns = header.split(",")
    assert columns[:3] == ["x", "y", "z"], f"{source}: unexpected header {header!r}"
    data = np.array([[float(v) for v in line.split(",")] for line in lines[1:] if line.strip()])
    data[:, 0:3] = data[:, 0:3] @ r.T + t
    if len(columns) >= 6:
        data[:, 3:6] = data[:, 3:6] @ r.T
    with open(target, "w") as f:
        f.write(header + "\n")
        for row in data:
            f.write(",".join(repr(float(v)) for v in row) + "\n")


def moved_plan(directory, r, t):
    """The demo's plan and point files in `directory`, moved; the plan's path."""
    source_dir = os.path.dirname(PLAN)
    os.makedirs(os.path.join(directory, "points"))
    with open(PLAN) as f:
        text = f.read()

    def turn_side(m):
        side = r @ np.array([float(v) for v in m.group(1).split(",")])
        return "material_side = [" + ", ".join(repr(float(v)) for v in side) + "]"

    text = re.sub(r"material_side = \[([^\]]*)\]", turn_side, text)
    parsed = tomllib.loads(text)
    files = [d["points"] for d in parsed.get("datum", {}).values()]
    files += [b["points"] for b in parsed.get("bore", [])]
    for rel in files:
        move_csv(os.path.join(source_dir, rel), os.path.join(directory, rel), r, t)
    plan = os.path.join(directory, "plan.toml")
    with open(plan, "w") as f:
        f.write(text)
    return plan


def run(plan, out):
    p = subprocess.run([CLI, "check", plan, "--json", out], capture_output=True, text=True,
                       timeout=600)
    if p.returncode not in (0, 1):
        raise SystemExit(f"FAIL: cylzone check {plan} exited {p.returncode}: {p.stderr[:300]}")
    with open(out) as f:
        return json.load(f)


class Comparer:
    def __init__(self, r, t, files):
        self.r, self.t, self.files = r, t, files
        self.differences = []
        self.worst_length = 0.0
        self.worst_angle = 0.0
        self.leaves = 0
        self.tilt = 0.0

    def differ(self, path, what):
        self.differences.append(f"{path}: {what}")

    def number(self, path, a, b, tolerance, is_angle):
        self.leaves += 1
        d = abs(a - b)
        if is_angle:
            self.worst_angle = max(self.worst_angle, d)
        else:
            self.worst_length = max(self.worst_length, d)
        if not d <= tolerance:
            self.differ(path, f"{a!r} vs {b!r} (difference {d:.3g}, allowed {tolerance:.3g})")

    def text(self, path, a, b):
        self.leaves += 1
        if a == b:
            return
        na, nb = list(NUMBER.finditer(a)), list(NUMBER.finditer(b))
        words_a = NUMBER.sub("#", a)
        words_b = NUMBER.sub("#", b)
        if words_a != words_b or len(na) != len(nb):
            self.differ(path, f"{a!r} vs {b!r}")
            return

        def resolution(m):
            decimals = len(m.group(1)) - 1 if m.group(1) else 0
            exponent = int(m.group(2)[1:]) if m.group(2) else 0
            return 10.0 ** (exponent - decimals)

        for ma, mb in zip(na, nb):
            allowed = max(LENGTH, resolution(ma), resolution(mb))
            if not abs(float(ma.group(0)) - float(mb.group(0))) <= allowed * (1 + 1e-9):
                self.differ(path, f"{a!r} vs {b!r}")
                return

    def machine(self, path, a, b):
        if a is None or b is None:
            self.leaves += 1
            if a != b:
                self.differ(path, f"{a!r} vs {b!r}")
            return
        is_point = MACHINE_POINTS.fullmatch(path) is not None
        expected = self.r @ np.array(a, float) + (self.t if is_point else 0.0)
        for k in range(3):
            self.number(f"{path}[{k}] (moved back)", float(expected[k]), float(b[k]),
                        LENGTH if is_point else ANGLE, not is_point)

    def walk(self, a, b, path="", key=""):
        if MACHINE_POINTS.fullmatch(path) or MACHINE_DIRECTIONS.fullmatch(path):
            self.machine(path, a, b)
            return
        # The records of the moved input files: paths and digests of the files written here.
        # The run's own time (the tool stamps each report): an ISO 8601 UTC time, no figure.
        if path == "part.timestamp":
            self.leaves += 1
            if not re.fullmatch(r"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\dZ", str(b)):
                self.differ(path, f"{b!r} is not an ISO 8601 UTC time")
            return
        m = re.fullmatch(r"inputs\[(\d+)\]\.(path|sha256)", path)
        if m or path == "plan.file":
            self.leaves += 1
            expected = None
            if path == "plan.file":
                expected = self.files["plan"][0]
            else:
                role = self.moved_roles[int(m.group(1))]
                expected = self.files[role][0 if m.group(2) == "path" else 1]
            if b != expected:
                self.differ(path, f"{b!r}, expected {expected!r}")
            return
        numeric = (int, float)
        if isinstance(a, bool) or isinstance(b, bool):
            self.leaves += 1
            if a != b:
                self.differ(path, f"{a!r} vs {b!r}")
        elif isinstance(a, dict) and isinstance(b, dict):
            if isinstance(a.get("angle_rad"), numeric):
                self.tilt = a["angle_rad"]
            for k, v in a.items():
                child = f"{path}.{k}" if path else k
                if k not in b:
                    self.differ(child, "missing in the moved report")
                else:
                    self.walk(v, b[k], child, k)
            for k in b:
                if k not in a:
                    self.differ(f"{path}.{k}", "only in the moved report")
        elif isinstance(a, list) and isinstance(b, list):
            if len(a) != len(b):
                self.differ(path, f"array of {len(a)} vs {len(b)}")
                return
            for k, (x, y) in enumerate(zip(a, b)):
                self.walk(x, y, f"{path}[{k}]", key)
        elif isinstance(a, int) and isinstance(b, int):
            self.leaves += 1
            if a != b:
                self.differ(path, f"{a} vs {b}")
        elif isinstance(a, numeric) and isinstance(b, numeric):
            if key == "azimuth_deg":
                # An angle of the tilt's slope: 1e-9 rad, or the lateral 1e-7 mm over 10 mm it
                # stands for when the tilt is small (tests/test_invariance.cpp).
                d = abs(a - b)
                d = min(d, 360.0 - d) * math.pi / 180.0
                allowed = max(ANGLE, LENGTH / (10.0 * math.tan(max(self.tilt, 1e-300))))
                self.number(path, 0.0, d, allowed, True)
            elif key in ANGLE_KEYS:
                self.number(path, float(a), float(b), ANGLE, True)
            else:
                self.number(path, float(a), float(b), LENGTH, False)
        elif isinstance(a, str) and isinstance(b, str) and key == "message":
            self.text(path, without_solver_path(a), without_solver_path(b))
        elif isinstance(a, str) and isinstance(b, str):
            self.text(path, a, b)
        else:
            self.leaves += 1
            if a != b:
                self.differ(path, f"{a!r} vs {b!r}")


def without_solver_path(message):
    """The solver's path in a fit's message (iteration and linear-programme counts, the winning
    start, the rows of the largest programme) is not the part's: tests/test_invariance.cpp."""
    return re.sub(r"\d+ (iterations?|linear programmes?)|start \d+ of \d+|at most \d+ rows",
                  "<solver path>", message)


def sha256(path):
    with open(path, "rb") as f:
        return hashlib.sha256(f.read()).hexdigest()


def main():
    failures = []
    with tempfile.TemporaryDirectory() as d:
        original = run(PLAN, os.path.join(d, "original.json"))
        for seed in (11, 23, 37):
            r, t = random_motion(seed, 3000.0)
            case = os.path.join(d, f"moved-{seed}")
            plan = moved_plan(case, r, t)
            moved = run(plan, os.path.join(d, f"moved-{seed}.json"))
            # Each input record must name and hash the moved file of its role.
            files = {"plan": (plan, sha256(plan))}
            roles = []
            for record in original["inputs"]:
                rel = os.path.relpath(record["path"], os.path.dirname(PLAN))
                path = os.path.join(case, rel)
                files[record["role"]] = (path, sha256(path))
                roles.append(record["role"])
            comparer = Comparer(r, t, files)
            comparer.moved_roles = roles
            comparer.walk(original, moved)
            label = f"seed {seed}, |t| = {np.linalg.norm(t):.0f} mm"
            print(f"{label}: {comparer.leaves} leaves; worst length difference "
                  f"{comparer.worst_length:.3g} mm, worst angle difference "
                  f"{comparer.worst_angle:.3g} rad")
            if comparer.leaves < 500:
                failures.append(f"{label}: only {comparer.leaves} leaves compared")
            failures += [f"{label}: {x}" for x in comparer.differences[:40]]
            shutil.rmtree(case)
    if failures:
        print("FAIL:\n  " + "\n  ".join(failures))
        sys.exit(1)
    print("OK: the demo's report is unchanged by rigid motions of its points")


if __name__ == "__main__":
    main()
