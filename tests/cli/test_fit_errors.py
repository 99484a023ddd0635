"""Bad input and degenerate geometry through `cylzone fit`: one line on stderr naming the file,
the line and the problem, exit code 2, nothing on stdout (so no half-written JSON).

Usage: /usr/bin/python3 test_fit_errors.py PATH_TO_CYLZONE
"""
import math
import os
import subprocess
import sys
import tempfile

CLI = sys.argv[1]
failures = []


def run(*args):
    p = subprocess.run([CLI, *args], capture_output=True, text=True)
    return p.returncode, p.stdout, p.stderr


def expect_error(name, args, *fragments):
    code, out, err = run(*args)
    lines = [l for l in err.splitlines() if l.strip()]
    problems = []
    if code != 2:
        problems.append(f"exit code {code}, expected 2")
    if out.strip():
        problems.append(f"stdout not empty: {out[:80]!r}")
    if len(lines) != 1:
        problems.append(f"expected one line on stderr, got {len(lines)}: {err[:300]!r}")
    for f in fragments:
        if f not in err:
            problems.append(f"stderr lacks {f!r}: {err.strip()[:300]!r}")
    if problems:
        failures.append(f"{name}: " + "; ".join(problems))


def write(directory, name, content, mode="w"):
    path = os.path.join(directory, name)
    with open(path, mode) as f:
        f.write(content)
    return path


def circle_rows(n, z_levels, r=10.0, cx=3.0, cy=-2.0):
    rows = []
    for z in z_levels:
        for k in range(n):
            a = 2 * math.pi * k / n
            rows.append(f"{cx + r * math.cos(a):.9f},{cy + r * math.sin(a):.9f},{z:.9f}")
    return "\n".join(rows) + "\n"


with tempfile.TemporaryDirectory() as tmp:
    good = write(tmp, "good.csv", "x,y,z\n0,0,0\n1,0,0\n0,1,0\n1,1,0.001\n")

    # --- point input (the reader's own tests cover every case in depth; these check the CLI path)
    expect_error("missing file", ["fit", "plane", os.path.join(tmp, "nope.csv")], "nope.csv")
    expect_error("empty file", ["fit", "plane", write(tmp, "empty.csv", "")], "empty.csv")
    expect_error("nan", ["fit", "plane", write(tmp, "nan.csv", "0,0,0\n1,0,nan\n0,1,0\n")],
                 "nan.csv:2")
    expect_error("non-numeric", ["fit", "plane",
                                 write(tmp, "word.csv", "0,0,0\n1,0,0\n0,abc,0\n")],
                 "word.csv:3", "abc")
    expect_error("column count", ["fit", "plane",
                                  write(tmp, "cols.csv", "0,0,0\n1,0,0\n0,1\n")], "cols.csv:3")
    expect_error("binary as text", ["fit", "plane",
                                    write(tmp, "blob.csv", bytes(range(256)) * 8, "wb")],
                 "blob.csv", "binary")

    # --- arguments
    expect_error("unknown element", ["fit", "cone", good], "cone")
    expect_error("unknown method", ["fit", "plane", good, "--method", "best"], "best")
    expect_error("unknown unit", ["fit", "plane", good, "--units", "furlong"], "furlong")
    expect_error("bad axis hint", ["fit", "cylinder", good, "--axis-hint", "1,2"], "--axis-hint")
    expect_error("zero axis hint", ["fit", "cylinder", good, "--axis-hint", "0,0,0"],
                 "--axis-hint")
    expect_error("undefined combination", ["fit", "plane", good, "--method", "max-inscribed"],
                 "max-inscribed plane")

    # --- degenerate geometry: FitError messages, prefixed with the file
    collinear = write(tmp, "collinear.csv", "".join(f"{k},{2*k},{3*k}\n" for k in range(5)))
    expect_error("collinear plane", ["fit", "plane", collinear], "collinear.csv", "collinear")
    three = write(tmp, "three.csv", "0,0,0\n1,0,0\n0,1,0\n")
    expect_error("too few points", ["fit", "sphere", three], "three.csv", "at least 4")
    one_level = write(tmp, "one_level.csv", circle_rows(24, [5.0]))
    expect_error("cylinder in one cross-section", ["fit", "cylinder", one_level],
                 "one_level.csv", "cross-section")
    # A 5-degree strip along 36 mm of a 10 mm radius bore, with 5 um radial noise: its sagitta
    # (10 (1 - cos 2.5 deg) = 9.5 um, common practice geometry) is within the noise, so it is a
    # plane to the fit. The message must name the arc, not "one cross-section".
    import random
    rng = random.Random(3)
    strip = []
    for z in range(0, 37, 4):
        for k in range(11):
            a = math.radians(0.5 * k)
            r = 10.0 + rng.gauss(0.0, 0.005)
            strip.append(f"{3 + r * math.cos(a):.9f},{-2 + r * math.sin(a):.9f},{z:.9f}\n")
    strip_file = write(tmp, "strip.csv", "".join(strip))
    expect_error("cylinder on a 5-degree strip", ["fit", "cylinder", strip_file], "strip.csv",
                 "degrees of arc (axial span 36.0")
    code, out, err = run("fit", "cylinder", strip_file)
    if "cross-section" in err:
        failures.append(f"5-degree strip blamed on one cross-section: {err.strip()}")
    arc = write(tmp, "arc.csv", "".join(
        f"{10*math.cos(math.radians(a)):.9f},{10*math.sin(math.radians(a)):.9f},0\n"
        for a in range(0, 91, 5)))
    expect_error("inscribed circle of a 90-degree arc", ["fit", "circle", arc, "--method",
                                                         "max-inscribed"], "arc.csv")

    # --- coordinates whose squares overflow double precision (IEEE 754 binary64: largest finite
    # value about 1.8e308): refused in words for every element, never "rms": null and exit 0
    huge = write(tmp, "huge.csv", "".join(
        f"{1e200 + 1e190 * math.cos(a):.17g},{2e200 + 1e190 * math.sin(a):.17g},"
        f"{3e200 + 1e189 * math.cos(2 * a):.17g}\n"
        for a in (2 * math.pi * k / 24 for k in range(24))))
    for element in ("line", "plane", "circle", "sphere", "cylinder"):
        expect_error(f"overflowing {element}", ["fit", element, huge], "huge.csv",
                     "coordinates too large", f"a {element} cannot be fitted")
        expect_error(f"overflowing {element}, JSON", ["fit", element, huge, "--json"],
                     "huge.csv", "coordinates too large")
    expect_error("overflowing plane, minimum zone", ["fit", "plane", huge, "--method",
                                                     "minimum-zone"], "coordinates too large")
    expect_error("overflowing cylinder, maximum inscribed", ["fit", "cylinder", huge, "--method",
                                                             "max-inscribed"],
                 "coordinates too large")

    # --- and a good run answers with exactly one JSON object and exit code 0
    code, out, err = run("fit", "plane", good, "--json")
    if code != 0:
        failures.append(f"good plane: exit {code}: {err.strip()}")
    else:
        import json
        j = json.loads(out)
        for key in ("element", "method", "points", "units", "rms", "form", "point", "normal",
                    "status"):
            if key not in j:
                failures.append(f"good plane: JSON lacks {key!r}")

if failures:
    print("\n".join(failures))
    sys.exit(1)
print("all CLI error cases behave")
