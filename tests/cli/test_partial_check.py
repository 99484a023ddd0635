"""`cylzone check` on the demo part with one bore's points cut to one probing level: the check
goes on, the bore is reported as not evaluated with its reason in the table, the JSON and the
CSV, and the part's decision is "not proven" (exit code 3). Then the plan key
axis_direction = "nominal" on that bore: position evaluated on the held axis, perpendicularity
not evaluated; an unknown value of the key is a plan error (exit code 2, the key named).

The plan is copied to a temporary folder with bores P1 and P3 only (both conform in the demo, so
nothing is proven not to conform and the decision is decided by the bore not evaluated), P3's
points cut to the level nearest one end of the bore. References:
  * the three-outcome decision (ISO 14253-1:2017 section 5, from memory for the clause): what
    is not measured is not proven; exit codes as docs/evaluation.md lists them (0 conforms,
    1 does not conform, 2 input error, 3 not proven);
  * P1's figures depend on its own points, the datum frame and its plan only (ASME Y14.5-2018
    section 7, from memory): they must equal, digit for digit, P1's figures in a run of the
    same plan in which P3 is probed over its full depth;
  * P3 held at the nominal direction: its position is twice the offset of the least-squares
    circle of its points projected along the frame's z (scipy.optimize.least_squares here, in
    the frame the JSON report gives) from the true position, when P3 uses the least-squares axis.

Usage: /usr/bin/python3 test_partial_check.py PATH_TO_CYLZONE PLAN
"""
import csv
import json
import os
import re
import shutil
import subprocess
import sys
import tempfile

import numpy as np
from scipy.optimize import least_squares

CLI, PLAN = sys.argv[1], sys.argv[2]
failures = []


def check(condition, message):
    if not condition:
        failures.append(message)


def run(plan, folder, *extra):
    out_json = os.path.join(folder, "report.json")
    out_csv = os.path.join(folder, "report.csv")
    for f in (out_json, out_csv):
        if os.path.exists(f):
            os.remove(f)
    p = subprocess.run([CLI, "check", plan, "--json", out_json, "--csv", out_csv,
                        "--time", "2026-12-02T12:00:00Z", *extra],
                       capture_output=True, text=True, timeout=600)
    return p, out_json, out_csv


def keep_bores(text, ids):
    head, *blocks = text.split("[[bore]]")
    kept = [b for b in blocks if re.search(r'^id = "(%s)"' % "|".join(ids), b, re.M)]
    return head + "".join("[[bore]]" + b for b in kept)


def read_points(path):
    with open(path) as f:
        lines = f.read().splitlines()
    return lines[0], lines[1:], np.array([[float(v) for v in l.split(",")[:3]] for l in lines[1:]])


with tempfile.TemporaryDirectory() as folder:
    source = os.path.dirname(os.path.abspath(PLAN))
    shutil.copytree(os.path.join(source, "points"), os.path.join(folder, "points"))
    with open(PLAN) as f:
        plan_text = keep_bores(f.read(), ["P1", "P3"])
    plan = os.path.join(folder, "plan.toml")
    with open(plan, "w") as f:
        f.write(plan_text)

    # The run with every bore probed over its depth: P1's figures for comparison.
    full, full_json, _ = run(plan, folder)
    check(full.returncode in (0, 1), f"full run: exit {full.returncode}: {full.stderr}")
    full_report = json.load(open(full_json))
    full_p1 = [c for c in full_report["characteristics"] if c["feature"] == "P1"]

    # P3 cut to one level: the points within 0.5 mm of the extreme level along its axis (the
    # principal direction of its points: a deep, narrow bore).
    header, lines, points = read_points(os.path.join(folder, "points", "P3.csv"))
    centred = points - points.mean(axis=0)
    axis = np.linalg.svd(centred, full_matrices=False)[2][0]
    heights = centred @ axis
    level = np.abs(heights - heights.max()) < 0.5
    check(3 <= level.sum() < len(lines) // 3, f"one level has {level.sum()} of {len(lines)} points")
    with open(os.path.join(folder, "points", "P3.csv"), "w") as f:
        f.write("\n".join([header] + [l for l, k in zip(lines, level) if k]) + "\n")

    p, out_json, out_csv = run(plan, folder)
    check(p.returncode == 3, f"one-level bore: exit {p.returncode}, expected 3: {p.stderr}")
    check(os.path.exists(out_json) and os.path.exists(out_csv), "report files not written")
    table = p.stdout
    check(re.search(r"P3 not evaluated: bore P3: .*cross-section", table) is not None,
          "the table does not show P3 not evaluated with its reason")
    check('axis_direction = "nominal"' in table, "the reason does not name the plan key")
    check("Part verdict: NOT PROVEN" in table, "the part verdict is not NOT PROVEN")
    check("Caution:" in table, "the table lost the safety caution")

    report = json.load(open(out_json))
    check(report["verdict"] == "not proven", f"JSON verdict {report['verdict']}")
    bores = {b["id"]: b for b in report["bores"]}
    check(bores["P3"]["status"] == "not evaluated", "JSON: P3 status")
    check("cross-section" in (bores["P3"]["reason"] or ""), "JSON: P3 reason")
    check(bores["P3"]["position"] is None and bores["P3"]["fits"] is None,
          "JSON: P3 carries figures it does not have")
    check(bores["P1"]["status"] == "evaluated" and bores["P1"]["reason"] is None, "JSON: P1 status")
    p3 = [c for c in report["characteristics"] if c["feature"] == "P3"]
    check({c["id"] for c in p3} >= {"P3/position", "P3/perpendicularity", "P3/size/lower",
                                   "P3/size/upper"}, f"JSON: P3 rows {[c['id'] for c in p3]}")
    for c in p3:
        check(c["status"] == "not evaluated" and c["verdict"] == "not proven" and
              c["value"] is None and c["reason"], f"JSON: row {c['id']}")
    p1 = [c for c in report["characteristics"] if c["feature"] == "P1"]
    check(len(p1) == len(full_p1) and all(
        a["id"] == b["id"] and a["value"] == b["value"] and a["verdict"] == b["verdict"]
        for a, b in zip(p1, full_p1)), "P1's figures changed when P3 was not evaluated")

    rows = list(csv.DictReader(open(out_csv)))
    for r in rows:
        if r["bore"] == "P3":
            check(r["status"] == "not evaluated" and r["value"] == "" and
                  "cross-section" in r["reason"] and r["verdict"] == "not proven",
                  f"CSV: row {r['id']}")
        else:
            check(r["status"] == "evaluated" and r["reason"] == "", f"CSV: row {r['id']}")
    check(all(r["caution"].startswith("Caution:") for r in rows), "CSV lost the caution")

    # The plan key: P3's axis held at its nominal direction (least-squares axis).
    held_text = plan_text.replace('id = "P3"', 'id = "P3"\naxis = "least-squares"\n'
                                  'axis_direction = "nominal"')
    with open(plan, "w") as f:
        f.write(held_text)
    h, held_json, held_csv = run(plan, folder)
    check(h.returncode == 3, f"held direction: exit {h.returncode}, expected 3 "
                             f"(perpendicularity not proven): {h.stderr}")
    held = json.load(open(held_json))
    hb = {b["id"]: b for b in held["bores"]}["P3"]
    check(hb["status"] == "evaluated" and hb["axis_direction"] == "nominal", "JSON: held P3")
    check("axis direction held at the nominal direction for P3" in " ".join(h.stdout.split()),
          "the table does not note the held direction")
    rows = {c["id"]: c for c in held["characteristics"]}
    check(rows["P3/perpendicularity"]["verdict"] == "not proven" and
          "direction held at nominal" in rows["P3/perpendicularity"]["reason"],
          "held: perpendicularity is not 'not proven' with its reason")
    check(rows["P3/position"]["status"] == "evaluated", "held: position not evaluated")
    # Independent position: the frame from the report, the points into it, projected along z.
    frame = held["frame"]
    rotation = np.array([frame["x_axis"], frame["y_axis"], frame["z_axis"]], float)
    origin = np.array(frame["origin"], float)
    _, _, cut = read_points(os.path.join(folder, "points", "P3.csv"))
    xy = ((cut - origin) @ rotation.T)[:, :2]
    fit = least_squares(lambda q: np.hypot(xy[:, 0] - q[0], xy[:, 1] - q[1]) - q[2],
                        [xy[:, 0].mean(), xy[:, 1].mean(), 6.0], xtol=1e-15, ftol=1e-15,
                        gtol=1e-15)
    expected = 2.0 * np.hypot(fit.x[0] - 85.0, fit.x[1] - 25.0)  # P3's basic location
    check(abs(rows["P3/position"]["value"] - expected) < 1e-7,
          f"held: position {rows['P3/position']['value']} vs scipy {expected:.9f}")
    check(expected > 1e-3, f"held: the reference position {expected} is too small to test")

    # An unknown value of the key: exit 2, one line naming the key.
    with open(plan, "w") as f:
        f.write(held_text.replace('axis_direction = "nominal"', 'axis_direction = "held"'))
    bad, _, _ = run(plan, folder)
    check(bad.returncode == 2, f"unknown axis_direction: exit {bad.returncode}")
    check(bad.stderr.count("\n") == 1 and "cylzone: error:" in bad.stderr and
          "axis_direction" in bad.stderr, f"unknown axis_direction message: {bad.stderr!r}")

for f in failures:
    print("FAIL:", f)
print(f"{len(failures)} failures")
sys.exit(1 if failures else 0)
