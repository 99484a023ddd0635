"""`cylzone check`: the sampling adequacy of every bore (evaluate/sampling_coverage.hpp) in the
table, the JSON and the CSV, against the demo's own construction and against cuts of its data.

References:
  * the demo part's generator (point-clouds/valve-manifold/generate.py, imported here): every
    bore is probed at `levels` levels from 2 mm below the mouth to 2 mm above the bottom of its
    plan depth, with `per_level` points evenly spaced round each level. So the probed span is
    depth - 4 mm, 2 mm are extrapolated at each end, the magnification of a tilt error is
    depth / (depth - 4) (small-angle geometry: a tilt error moves the axis by the angle times
    the distance between two heights; common practice), and n evenly spaced points leave gaps
    of 360/n degrees, so each level covers 360 - 360/n degrees (plane geometry). The noise
    (0.5 um) and the bores' tilts (at most 0.4 mrad over a 6 mm radius) move these by a few
    micrometres, hence the tolerances below;
  * P1 cut to its top three levels: span and magnification from the generator's level heights;
  * P3 with its middle level cut to 4 neighbouring points (10 degrees apart): 4 points, 30
    degrees covered in that section, against the default thresholds of 8 points (common
    practice) and 180 degrees;
  * a [sampling] threshold out of its bounds is a plan error: exit code 2, one line naming the
    plan, the line and the key.

Usage: /usr/bin/python3 test_sampling.py PATH_TO_CYLZONE PLAN
"""
import csv
import importlib.util
import json
import os
import re
import shutil
import subprocess
import sys
import tempfile

import numpy as np

CLI, PLAN = sys.argv[1], sys.argv[2]
failures = []


def check(condition, message):
    if not condition:
        failures.append(message)


spec = importlib.util.spec_from_file_location(
    "generate", os.path.join(os.path.dirname(os.path.abspath(PLAN)), "generate.py"))
generate = importlib.util.module_from_spec(spec)
spec.loader.exec_module(generate)
TRUTH = {b["id"]: b for b in generate.BORES}


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


def sampling_rows(out_csv):
    rows = list(csv.DictReader(open(out_csv)))
    return {r["bore"]: r for r in rows}


def levels_of(path):
    """The file's lines and, per point, the index of its probed level (heights along the
    principal direction of the points, split at gaps over 0.5 mm), top level first."""
    with open(path) as f:
        lines = f.read().splitlines()
    points = np.array([[float(v) for v in l.split(",")[:3]] for l in lines[1:]])
    centred = points - points.mean(axis=0)
    axis = np.linalg.svd(centred, full_matrices=False)[2][0]
    heights = centred @ axis
    order = np.argsort(heights)
    level = np.zeros(len(heights), dtype=int)
    for rank in range(1, len(order)):
        level[order[rank]] = level[order[rank - 1]] + (heights[order[rank]] - heights[order[rank - 1]] > 0.5)
    # The generator writes the top level (at the mouth) first: number from it.
    if level[0] == level.max():
        level = level.max() - level
    return lines, level


with tempfile.TemporaryDirectory() as folder:
    source = os.path.dirname(os.path.abspath(PLAN))
    shutil.copytree(os.path.join(source, "points"), os.path.join(folder, "points"))
    plan = os.path.join(folder, "plan.toml")
    plan_text = open(PLAN).read()
    shutil.copy(PLAN, plan)

    # ---- The demo as generated: every figure from the generator's construction, no warning.
    p, out_json, out_csv = run(plan, folder)
    check(p.returncode == 1, f"demo: exit {p.returncode}: {p.stderr}")
    report = json.load(open(out_json))
    rows = sampling_rows(out_csv)
    for bore in report["bores"]:
        t = TRUTH[bore["id"]]
        s = bore["sampling"]
        depth, n = t["depth"], t["per_level"]
        name = bore["id"]
        check(abs(s["span"]["length"] - (depth - 4.0)) < 0.01, f"{name}: span {s['span']}")
        check(abs(s["range"]["length"] - depth) < 1e-9, f"{name}: range {s['range']}")
        for end in ("top", "bottom"):
            check(abs(s["extrapolation"][end] - 2.0) < 0.01, f"{name}: extrapolation {end}")
        check(abs(s["magnification"] - depth / (depth - 4.0)) < 1e-3,
              f"{name}: magnification {s['magnification']}, expected {depth / (depth - 4.0)}")
        check(s["section_count"] == t["levels"] == len(s["sections"]), f"{name}: sections")
        check(s["section_points_min"] == n and s["section_points_median"] == n,
              f"{name}: points per section {s['section_points_min']}, {s['section_points_median']}")
        check(abs(s["worst_section_coverage_deg"] - (360.0 - 360.0 / n)) < 0.5,
              f"{name}: worst section covers {s['worst_section_coverage_deg']}")
        check(s["coverage_deg"] >= s["worst_section_coverage_deg"], f"{name}: overall coverage")
        heights = sorted(generate.level_heights(depth, t["levels"]))
        check(all(abs(a["z"] - b) < 0.01 for a, b in zip(s["sections"], heights)),
              f"{name}: section heights {[a['z'] for a in s['sections']]}")
        check(s["warnings"] == [], f"{name}: sampling warnings {s['warnings']}")
        r = rows[name]
        check(r["probed_span"] == f"{s['span']['length']:.4f}" and
              r["tilt_magnification"] == f"{s['magnification']:.3f}" and
              r["sections"] == str(t["levels"]) and r["section_points_min"] == str(n) and
              r["sampling_warnings"] == "", f"{name}: CSV sampling columns {r}")
    table = p.stdout
    check("Sampling (probed span" in table, "table: no sampling section")
    for name in TRUTH:
        check(re.search(rf"^{name} .* 1\.0[78] .*", table, re.M) is not None,
              f"table: no sampling line for {name}")
    check(max(len(l) for l in table.splitlines()) <= 120, "table: a line over 120 columns")

    # ---- P1 cut to its top three levels: 2 mm above and depth - 2 - span below.
    lines, level = levels_of(os.path.join(folder, "points", "P1.csv"))
    keep = [lines[0]] + [l for l, k in zip(lines[1:], level) if k < 3]
    # ---- P3's middle level cut to 4 neighbouring points (written in order of angle).
    lines3, level3 = levels_of(os.path.join(folder, "points", "P3.csv"))
    middle = TRUTH["P3"]["levels"] // 2
    seen = 0
    keep3 = [lines3[0]]
    for l, k in zip(lines3[1:], level3):
        if k == middle:
            seen += 1
            if seen > 4:
                continue
        keep3.append(l)
    with open(os.path.join(folder, "points", "P1.csv"), "w") as f:
        f.write("\n".join(keep) + "\n")
    with open(os.path.join(folder, "points", "P3.csv"), "w") as f:
        f.write("\n".join(keep3) + "\n")
    p, out_json, out_csv = run(plan, folder)
    check(p.returncode == 1, f"cut: exit {p.returncode}: {p.stderr}")
    bores = {b["id"]: b for b in json.load(open(out_json))["bores"]}
    rows = sampling_rows(out_csv)
    depth = TRUTH["P1"]["depth"]
    top_levels = generate.level_heights(depth, TRUTH["P1"]["levels"])[:3]
    span = top_levels[0] - top_levels[-1]
    expected = depth / span
    s1 = bores["P1"]["sampling"]
    check(abs(s1["span"]["length"] - span) < 0.01, f"P1 cut: span {s1['span']}, expected {span}")
    check(abs(s1["magnification"] - expected) < 1e-3,
          f"P1 cut: magnification {s1['magnification']}, expected {expected}")
    warning = [w for w in s1["warnings"] if "magnified" in w]
    check(len(warning) == 1 and f"magnified {expected:.2f} times" in warning[0],
          f"P1 cut: warning {s1['warnings']}")
    check(warning and warning[0] in bores["P1"]["warnings"], "P1 cut: not among the bore's warnings")
    check(f"magnified {expected:.2f} times" in rows["P1"]["sampling_warnings"],
          f"P1 cut: CSV {rows['P1']['sampling_warnings']}")
    flowing = " ".join(p.stdout.split())  # the table wraps long warnings
    check(re.search(rf"warning: bore P1: [^:]*: the axis is extrapolated, and an error in its "
                    rf"fitted tilt is magnified {expected:.2f}", flowing) is not None,
          "P1 cut: the table does not warn")
    s3 = bores["P3"]["sampling"]
    check(s3["section_points_min"] == 4 and s3["sparse_sections"] == 1,
          f"P3 cut: {s3['section_points_min']} points, {s3['sparse_sections']} sparse")
    check(abs(s3["worst_section_coverage_deg"] - 30.0) < 0.5,
          f"P3 cut: worst section covers {s3['worst_section_coverage_deg']}")
    check(any("fewer than 8 points (fewest 4)" in w for w in s3["warnings"]) and
          any("covers an arc of only" in w for w in s3["warnings"]), f"P3 cut: {s3['warnings']}")
    check("fewest 4" in rows["P3"]["sampling_warnings"], "P3 cut: CSV")
    check(re.search(r"warning: bore P3: 1 of 7 sections have fewer than 8", flowing) is not None,
          "P3 cut: the table does not warn")

    # ---- The plan's thresholds: a larger magnification and fewer points accepted.
    with open(plan, "w") as f:
        f.write(plan_text.replace('units = "mm"', 'units = "mm"\n\n[sampling]\nmax_magnification = 4\n'
                                  'min_section_points = 4\nmin_coverage = 20\n', 1))
    p, out_json, _ = run(plan, folder)
    check(p.returncode == 1, f"thresholds: exit {p.returncode}: {p.stderr}")
    bores = {b["id"]: b for b in json.load(open(out_json))["bores"]}
    check(bores["P1"]["sampling"]["warnings"] == [] and bores["P3"]["sampling"]["warnings"] == [],
          f"thresholds: {bores['P1']['sampling']['warnings']} {bores['P3']['sampling']['warnings']}")
    check(bores["P1"]["sampling"]["thresholds"]["max_magnification"] == 4, "thresholds: not reported")

    # ---- A threshold out of bounds: exit 2, the plan's line and key, no report.
    bad = plan_text.replace('units = "mm"', 'units = "mm"\n\n[sampling]\nmin_coverage = 400\n', 1)
    with open(plan, "w") as f:
        f.write(bad)
    line = bad.splitlines().index("min_coverage = 400") + 1
    p, out_json, out_csv = run(plan, folder)
    err = p.stderr.strip().splitlines()
    check(p.returncode == 2, f"bad threshold: exit {p.returncode}")
    check(len(err) == 1 and err[0].startswith("cylzone: error:") and f"plan.toml:{line}:" in err[0]
          and "sampling.min_coverage" in err[0] and "at most 360" in err[0],
          f"bad threshold: {err}")
    check(not os.path.exists(out_json) and not os.path.exists(out_csv), "bad threshold: a report")

for f in failures:
    print("FAIL:", f)
print(f"sampling through the CLI: {len(failures)} failures")
sys.exit(1 if failures else 0)
