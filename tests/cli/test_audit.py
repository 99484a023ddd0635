"""`cylzone audit` on the demo part: the single-plane summary the generator writes (deviations
at the mouth, position 2 sqrt(dx^2 + dy^2), verdict against tolerance + bonus) passes P2, whose
axis is drilled on a tilt and leaves its zone further down; the audit must overturn that
verdict (blind to tilt, exit 1) and let the other six stand. Then the plan's [audit] table and
--map, and malformed summaries: one bounded `cylzone: error:` line naming the file, line and
column or key, exit 2, no report written.

References:
  * the demo's ground truth (point-clouds/valve-manifold/ground-truth.json, written by the
    generator from the noise-free geometry): P2's full-depth position exceeds its allowed zone
    while its mouth position does not; every other bore's position conforms;
  * the single-plane position 2 sqrt(dx^2 + dy^2) (common practice), recomputed here from the
    summary file itself;
  * exit codes as docs/evaluation.md lists them for the audit (0 stands, 1 overturned,
    2 input error, 3 not decided).

Usage: /usr/bin/python3 test_audit.py PATH_TO_CYLZONE PLAN
"""
import csv
import json
import math
import os
import shutil
import subprocess
import sys
import tempfile

CLI, PLAN = sys.argv[1], sys.argv[2]
DEMO = os.path.dirname(os.path.abspath(PLAN))
SUMMARY = os.path.join(DEMO, "summary-single-plane.csv")
failures = []


def check(condition, message):
    if not condition:
        failures.append(message)


def run(*args):
    return subprocess.run([CLI, "audit", *args, "--time", "2026-12-02T12:00:00Z"],
                          capture_output=True, text=True, timeout=600)


def one_error_line(p, *fragments, label=""):
    lines = p.stderr.splitlines()
    check(p.returncode == 2, f"{label}: exit {p.returncode}, expected 2 ({p.stderr!r})")
    check(len(lines) == 1 and lines[0].startswith("cylzone: error: ") and len(lines[0]) <= 1000
          and all(0x20 <= ord(c) < 0x7f for c in lines[0]),
          f"{label}: not one printable error line: {p.stderr!r}")
    for f in fragments:
        check(f in p.stderr, f"{label}: the message lacks {f!r}: {p.stderr!r}")


truth = json.load(open(os.path.join(DEMO, "ground-truth.json")))
expected = {b["id"]: b["position"] for b in truth["bores"]}
check(expected["P2"]["value"] > expected["P2"]["allowed"] and
      expected["P2"]["top"]["position"] < expected["P2"]["allowed"],
      "ground truth: P2 should pass at its mouth and fail over the full depth")

with tempfile.TemporaryDirectory() as folder:
    out_json = os.path.join(folder, "audit.json")
    out_csv = os.path.join(folder, "audit.csv")
    p = run(PLAN, "--summary", SUMMARY, "--json", out_json, "--csv", out_csv)
    check(p.returncode == 1, f"demo audit: exit {p.returncode}, expected 1: {p.stderr}")
    table = p.stdout
    check("P2, blind to tilt:" in table, "the table does not name P2 blind to tilt")
    check("OVERTURNED (1 of 7 bores)" in table, "the table's summary verdict")
    check("Caution:" in table, "the table lost the safety caution")
    check(all(len(l) <= 120 for l in table.splitlines()), "a table line exceeds 120 columns")

    report = json.load(open(out_json))
    check(report["schema"] == "cylzone-audit-1", f"schema {report['schema']}")
    check(report["caution"].startswith("Caution:"), "JSON lost the caution")
    check(report["verdict"] == "overturned" and report["overturned"] == 1, "JSON verdict")
    bores = {b["id"]: b for b in report["bores"]}
    check(sorted(bores) == sorted(expected), f"JSON bores {sorted(bores)}")
    for bid, b in bores.items():
        want = "blind to tilt" if bid == "P2" else "consistent"
        check(b["finding"] == want, f"JSON {bid}: finding {b['finding']}, expected {want}")
        check(b["overturned"] == (bid == "P2"), f"JSON {bid}: overturned")
        # cylzone's full-depth verdict against the ground truth's.
        check(b["cylzone"]["position_verdict"] == expected[bid]["verdict"],
              f"JSON {bid}: position verdict {b['cylzone']['position_verdict']}, truth "
              f"{expected[bid]['verdict']}")
        check(abs(b["cylzone"]["position"] - expected[bid]["value"]) < 0.003,
              f"JSON {bid}: full-depth position {b['cylzone']['position']} far from the truth")
    check(report["unmatched_rows"] == [] and report["unmatched_bores"] == [], "unmatched lists")
    check(report["inputs"][-1]["role"] == "summary", "the summary is not among the inputs")

    with open(out_csv) as f:
        table_rows = list(csv.reader(f))
    check(all(len(r) == len(table_rows[0]) for r in table_rows),
          "CSV: a row's field count differs from the header's")
    rows = list(csv.DictReader(open(out_csv)))
    check(len(rows) == 7, f"CSV: {len(rows)} rows, expected one per bore")
    check(all(r["caution"].startswith("Caution:") for r in rows), "CSV lost the caution")
    with open(SUMMARY) as f:
        lines = [l for l in f.read().splitlines() if l and not l.startswith("#")]
    printed = {l.split(",")[0]: l.split(",") for l in lines[1:]}
    for r in rows:
        s = printed[r["bore"]]
        check(r["summary_dx"] == s[2] and r["summary_dy"] == s[3], f"CSV {r['bore']}: deviations")
        check(r["summary_diameter"] == s[5], f"CSV {r['bore']}: diameter as printed")
        # The summary's own arithmetic, recomputed from the file (common practice).
        check(abs(2 * math.hypot(float(s[2]), float(s[3])) - float(s[4])) <= 0.0002,
              f"summary {r['bore']}: position is not 2 sqrt(dx^2 + dy^2)")
        check(r["finding"] == ("blind to tilt" if r["bore"] == "P2" else "consistent"),
              f"CSV {r['bore']}: finding {r['finding']}")

    # The same summary without its z: cylzone's figures at the mouth, the probed centroid and
    # mid-depth, each labelled; the mouth is the closest for P2, still blind to tilt.
    no_z = os.path.join(folder, "no-z.csv")
    with open(no_z, "w") as f:
        f.write("id,dx,dy,position,verdict\n" + "".join(
            ",".join([k, v[2], v[3], v[4], v[6]]) + "\n" for k, v in printed.items()))
    p = run(PLAN, "--summary", no_z, "--json", out_json)
    check(p.returncode == 1, f"summary without z: exit {p.returncode}: {p.stderr}")
    for label in ("mouth", "probed centroid", "mid-depth"):
        check(label in p.stdout, f"summary without z: the table lacks the plane {label!r}")
    check(all(l == l.rstrip() for l in p.stdout.splitlines()), "table lines end in blanks")
    p2 = {b["id"]: b for b in json.load(open(out_json))["bores"]}["P2"]
    check(p2["summary"]["centres"][0]["compared"] == "mouth" and p2["finding"] == "blind to tilt",
          f"summary without z: P2 compared at {p2['summary']['centres'][0]['compared']}, "
          f"finding {p2['finding']}")

    # A summary of P1 only, under other column names, mapped on the command line; an unknown
    # row is listed. P1's verdict stands: exit 0.
    mapped = os.path.join(folder, "mapped.csv")
    with open(mapped, "w") as f:
        f.write("Feature;Z;DX;DY;Pos\n" + ";".join(printed["P1"][:5]) + "\nQ9;0;0;0;0\n")
    p = run(PLAN, "--summary", mapped, "--map", "id=Feature", "--map", "position=Pos")
    check(p.returncode == 0, f"mapped summary of P1: exit {p.returncode}: {p.stderr}")
    mapped_csv = os.path.join(folder, "mapped-report.csv")
    p2 = run(PLAN, "--summary", mapped, "--map", "id=Feature", "--map", "position=Pos",
             "--csv", mapped_csv)
    with open(mapped_csv) as f:
        mrows = list(csv.reader(f))
    check(all(len(r) == len(mrows[0]) for r in mrows) and len(mrows) == 1 + 1 + 1 + 6,
          "CSV of the mapped summary: header, P1, the unmatched row, six unmatched bores")
    check("Summary rows naming no bore of the plan: Q9 (line 3)" in p.stdout,
          "the unmatched row is not listed")
    check("Bores the summary does not give: P2, P3, P4, P5, P6, P7" in p.stdout,
          "the unmatched bores are not listed")

    # The plan's [audit] table: the same mapping and the summary path.
    shutil.copytree(os.path.join(DEMO, "points"), os.path.join(folder, "points"))
    with open(PLAN) as f:
        plan_text = f.read()
    plan = os.path.join(folder, "plan.toml")
    with open(plan, "w") as f:
        f.write(plan_text + '\n[audit]\nsummary = "mapped.csv"\nsame_plane_tolerance = 0.004\n'
                'columns = { id = "Feature", position = "Pos" }\n')
    p = run(plan)
    check(p.returncode == 0, f"[audit] in the plan: exit {p.returncode}: {p.stderr}")
    with open(plan, "w") as f:
        f.write(plan_text + '\n[audit]\ncolumns = { idd = "Feature" }\n')
    one_error_line(run(plan, "--summary", mapped), "key 'audit.columns.idd'",
                   "unknown summary field", label="[audit] unknown field")
    with open(plan, "w") as f:
        f.write(plan_text + '\n[audit]\nsame_plane_tolerance = -1\n')
    one_error_line(run(plan, "--summary", mapped), "key 'audit.same_plane_tolerance'",
                   label="[audit] negative tolerance")

    # Malformed summaries and arguments: exit 2, one line, no report written.
    def bad(name, text, *fragments, extra=()):
        path = os.path.join(folder, name)
        with open(path, "w") as f:
            f.write(text)
        report_path = os.path.join(folder, "bad.json")
        p = run(PLAN, "--summary", path, "--json", report_path, *extra)
        one_error_line(p, *fragments, label=name)
        check(not os.path.exists(report_path), f"{name}: a report was written")

    bad("empty.csv", "", "empty.csv", "the summary is empty")
    bad("missing.csv", "id,dx,dy\nP1,0,0\n", "missing.csv:1:", "key 'columns.id'",
        "no column 'Feature'", extra=("--map", "id=Feature"))
    bad("text.csv", "id,dx,dy\nP1,0.001,x1\n", "text.csv:2:", "field 3 ('dy') is not a number")
    bad("verdict.csv", "id,dx,dy,verdict\nP1,0,0,perhaps\n", "verdict.csv:2:",
        "not understood")
    bad("twice.csv", "id,dx,dy\nP1,0,0\nP1,0,0\n", "twice.csv:3:", "each needs its height z")
    one_error_line(run(PLAN, "--summary", SUMMARY, "--map", "colour=X"), "--map",
                   "unknown summary field", label="--map unknown key")
    one_error_line(run(PLAN, "--summary", os.path.join(folder, "absent.csv")), "absent.csv",
                   label="absent summary")
    one_error_line(run(PLAN), "no summary to audit", label="no summary")

for f in failures:
    print("FAIL:", f)
sys.exit(1 if failures else 0)
