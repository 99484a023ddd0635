"""`cylzone check` end to end on the demo plan: exit codes, the reports it writes, and the refusals
that protect inputs and never leave a damaged output.

Usage: /usr/bin/python3 test_check.py PATH_TO_CYLZONE PLAN
"""
import csv
import hashlib
import json
import os
import shutil
import subprocess
import sys
import tempfile

CLI, PLAN = sys.argv[1], os.path.abspath(sys.argv[2])
failures = []


def run(*args):
    return subprocess.run([CLI, *args], capture_output=True, text=True)


def check(condition, message):
    if not condition:
        failures.append(message)


def sha256(path):
    with open(path, "rb") as f:
        return hashlib.sha256(f.read()).hexdigest()


with tempfile.TemporaryDirectory() as tmp:
    report = os.path.join(tmp, "report.json")
    table = os.path.join(tmp, "rows.csv")
    p = run("check", PLAN, "--json", report, "--csv", table)
    # The demo part has bores that do not conform (point-clouds/*/README.md): exit code 1.
    check(p.returncode == 1, f"demo check: exit {p.returncode}, expected 1; stderr: {p.stderr}")
    check("Part verdict: DOES NOT CONFORM" in p.stdout, "table lacks the part verdict")
    check("Caution:" in p.stdout, "table lacks the safety caution")
    check(p.stderr.strip() == "", f"unexpected stderr: {p.stderr[:300]}")

    if os.path.exists(report):
        j = json.load(open(report))
        check(j.get("schema") == "cylzone-report-1", "JSON schema id")
        check(j.get("verdict") == "does not conform", "JSON part verdict")
        check("Caution" in j.get("caution", ""), "JSON caution")
        # Every input is recorded with the SHA-256 of its bytes (FIPS 180-4, via hashlib).
        for entry in j["inputs"]:
            check(entry["sha256"] == sha256(entry["path"]), f"sha256 of {entry['path']}")
        check(any(e["role"] == "plan" for e in j["inputs"]), "plan not among inputs")
        for bore in j["bores"]:
            for key in ("position", "perpendicularity", "size", "form", "tilt", "sensitivity"):
                check(key in bore, f"bore {bore.get('id')}: JSON lacks {key}")
    else:
        failures.append("JSON report not written")

    if os.path.exists(table):
        rows = list(csv.DictReader(open(table)))
        check(len(rows) > 0, "CSV has no rows")
        check({"bore", "characteristic", "value", "allowed", "verdict"} <= set(rows[0].keys()),
              "CSV header")
        check(any(r["verdict"] == "does not conform" for r in rows), "CSV has no failing row")
    else:
        failures.append("CSV not written")

    # Refuse to write over an input: the plan and a point file stay byte-identical, exit 2.
    work = os.path.join(tmp, "copy")
    shutil.copytree(os.path.dirname(PLAN), work)
    plan_copy = os.path.join(work, os.path.basename(PLAN))
    before = sha256(plan_copy)
    p = run("check", plan_copy, "--json", plan_copy)
    check(p.returncode == 2, f"--json over the plan: exit {p.returncode}, expected 2")
    check(sha256(plan_copy) == before, "the plan was modified")
    check("input" in p.stderr, f"refusal message: {p.stderr.strip()}")

    # A missing output directory: exit 2, nothing written, one line naming the path.
    p = run("check", plan_copy, "--csv", os.path.join(tmp, "no-such-dir", "x.csv"))
    check(p.returncode == 2 and "no-such-dir" in p.stderr and len(p.stderr.splitlines()) == 1,
          f"missing directory: exit {p.returncode}, stderr {p.stderr.strip()}")

    # An existing report is replaced whole, and no temporary file is left behind.
    with open(report, "w") as f:
        f.write("old")
    p = run("check", plan_copy, "--json", report, "--quiet")
    check(p.returncode == 1 and p.stdout == "", "--quiet run")
    check(json.load(open(report)).get("schema") == "cylzone-report-1", "report not replaced")
    check(not [n for n in os.listdir(tmp) if ".tmp-" in n or "cylzone-tmp" in n], "temporary file left behind")

    # A broken plan: exit 2, a one-line message naming the plan file and the line, no report.
    broken = os.path.join(work, "broken.toml")
    with open(plan_copy) as f:
        text = f.read()
    with open(broken, "w") as f:
        f.write(text.replace('modifier = "MMC"', 'modifier = "MCC"', 1))
    bad_report = os.path.join(tmp, "bad.json")
    p = run("check", broken, "--json", bad_report)
    check(p.returncode == 2, f"broken plan: exit {p.returncode}")
    check("broken.toml:" in p.stderr and "modifier" in p.stderr, f"message: {p.stderr.strip()}")
    check(not os.path.exists(bad_report), "a report was written for a broken plan")

if failures:
    print("\n".join(failures))
    sys.exit(1)
print("cylzone check behaves in mm")


# ---- The same part in inches: every reported length must be the millimetre value / 25.4
# (the inch is 25.4 mm exactly by definition, common practice), and every verdict the same.
import tomllib

LENGTH_KEYS = {"tip_diameter", "basic", "lower", "upper", "mmb", "top", "bottom", "tolerance",
               "cylindricity", "projected"}


def scaled(value, key):
    if key in LENGTH_KEYS:
        return [v / 25.4 for v in value] if isinstance(value, list) else value / 25.4
    if isinstance(value, dict):
        return {k: scaled(v, k) for k, v in value.items()}
    return value


def toml_value(v):
    if isinstance(v, str):
        return json.dumps(v)
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, (int, float)):
        return repr(float(v))
    if isinstance(v, list):
        return "[" + ", ".join(toml_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{ " + ", ".join(f"{k} = {toml_value(x)}" for k, x in v.items()) + " }"
    raise TypeError(v)


def write_inch_copy(plan_path, directory):
    with open(plan_path, "rb") as f:
        plan = tomllib.load(f)
    base = os.path.dirname(plan_path)
    lines = []
    for key, value in plan.items():
        if not isinstance(value, (dict, list)) or (isinstance(value, list) and key != "bore"):
            lines.append(f"{key} = {toml_value('inch' if key == 'units' else value)}")
    for section in ("probe",):
        if section in plan:
            lines.append(f"[{section}]")
            lines += [f"{k} = {toml_value(scaled(v, k))}" for k, v in plan[section].items()]
    items = [(f"datum.{label}", table) for label, table in plan["datum"].items()]
    items += [("[bore]", table) for table in plan["bore"]]
    for header, table in items:
        lines.append(f"[{header}]")
        for k, v in table.items():
            lines.append(f"{k} = {toml_value(scaled(v, k))}")
            if k == "points":
                source = os.path.join(base, v)
                target = os.path.join(directory, v)
                os.makedirs(os.path.dirname(target), exist_ok=True)
                with open(source) as fin, open(target, "w") as fout:
                    rows = fin.read().splitlines()
                    fout.write(rows[0] + "\n")
                    for row in rows[1:]:
                        fields = row.split(",")
                        xyz = [f"{float(x) / 25.4:.17g}" for x in fields[:3]]
                        fout.write(",".join(xyz + fields[3:]) + "\n")
    path = os.path.join(directory, "plan-inch.toml")
    with open(path, "w") as f:
        f.write("\n".join(lines) + "\n")
    return path


def numbers(node, path=""):
    """Every (path, value) pair of numbers in a JSON tree."""
    if isinstance(node, dict):
        for k, v in node.items():
            yield from numbers(v, f"{path}.{k}")
    elif isinstance(node, list):
        for i, v in enumerate(node):
            yield from numbers(v, f"{path}[{i}]")
    elif isinstance(node, (int, float)) and not isinstance(node, bool):
        yield path, float(node)


# Numbers without a length unit, by the name of their own key (array elements take their
# array's name): directions, angles, counts and point numbers.
UNITLESS = {"direction", "normal", "x_axis", "y_axis", "z_axis", "points", "two_point_count",
            "screened", "point_number",
            # sampling adequacy: a ratio and counts
            "magnification", "max_magnification", "section_count", "section_points_min",
            "section_points_median", "sparse_sections", "min_section_points"}


def unitless(path):
    import re
    name = re.sub(r"(\[\d+\])+$", "", path).rsplit(".", 1)[-1]
    return name in UNITLESS or name.endswith("_rad") or name.endswith("_deg")

with tempfile.TemporaryDirectory() as tmp:
    mm_json = os.path.join(tmp, "mm.json")
    inch_json = os.path.join(tmp, "inch.json")
    inch_plan = write_inch_copy(PLAN, tmp)
    run("check", PLAN, "--json", mm_json, "--quiet")
    p = run("check", inch_plan, "--json", inch_json, "--quiet")
    check(p.returncode == 1, f"inch plan: exit {p.returncode}: {p.stderr.strip()}")
    if os.path.exists(inch_json):
        a, b = json.load(open(mm_json)), json.load(open(inch_json))
        check(b["plan"]["units"] == "inch", "inch report states its unit")
        pa = dict(numbers(a["bores"], "bores"))
        pb = dict(numbers(b["bores"], "bores"))
        check(pa.keys() == pb.keys(), "same report structure in mm and inch")
        worst = 0.0
        for key, value in pa.items():
            if key not in pb:
                continue
            expected = value if unitless(key) else value / 25.4
            worst = max(worst, abs(pb[key] - expected))
        # Rounding of the inch files to 17 digits and the fits' tolerances: far below 1 nm.
        check(len(pa) > 500, f"too few numbers compared: {len(pa)}")
        check(worst < 1e-8, f"inch report differs from mm / 25.4 by {worst:.3g}")
        verdicts = lambda r: [(x["id"], x["verdict"]) for x in r["bores"]]
        check(verdicts(a) == verdicts(b), "verdicts differ between mm and inch")

if failures:
    print("\n".join(failures))
    sys.exit(1)
print("the inch part reports the same figures")


# ---- Datum C as a slot or a tab. The demo's clocking bore is replaced by a width feature whose
# centre plane is constructed, from the demo's own report, to run from B's axis through C's
# axis, perpendicular to A: faces at y = +-4 in the frame for x in [110, 130]. All points lie
# exactly on the faces, so the simulator (two parallel planes about a centre plane through B's
# axis, ASME Y14.5-2018 datum feature simulator; from memory for the clause) settles on them
# with mating width 8 and clocks the frame exactly as the bore did: every bore's figures must
# agree with the demo's to rounding.
def frame_to_measurement(frame, p):
    return [frame["origin"][i] + p[0] * frame["x_axis"][i] + p[1] * frame["y_axis"][i]
            + p[2] * frame["z_axis"][i] for i in range(3)]


def width_points(frame, z_values):
    rows = []
    for side in (1.0, -1.0):
        for k in range(9):
            for z in z_values:
                rows.append(frame_to_measurement(frame, (110.0 + 2.5 * k, 4.0 * side, z)))
    return rows


with tempfile.TemporaryDirectory() as tmp:
    mm_json = os.path.join(tmp, "bore-c.json")
    run("check", PLAN, "--json", mm_json, "--quiet")
    reference = json.load(open(mm_json))
    work = os.path.join(tmp, "part")
    shutil.copytree(os.path.dirname(PLAN), work)
    with open(os.path.join(work, os.path.basename(PLAN))) as f:
        text = f.read()
    start = text.index("[datum.C]")
    end = text.index("[[bore]]")
    for kind, z_values, limits in (("slot", (-2.0, -7.0, -12.0), "{ lower = 7.990, upper = 8.020 }"),
                                   ("tab", (2.0, 6.0, 10.0), "{ lower = 7.980, upper = 8.010 }")):
        points = os.path.join(work, "points", f"datum-C-{kind}.csv")
        with open(points, "w") as f:
            f.write("x,y,z\n")
            for p in width_points(reference["frame"], z_values):
                f.write(",".join(f"{v:.17g}" for v in p) + "\n")
        block = (f'[datum.C]\nfeature = "{kind}"\npoints = "points/datum-C-{kind}.csv"\n'
                 f"basic = [120.0, 0.0]\nsize = {limits}\n\n")
        plan = os.path.join(work, f"plan-{kind}.toml")
        with open(plan, "w") as f:
            f.write(text[:start] + block + text[end:])
        out = os.path.join(tmp, f"{kind}.json")
        p = run("check", plan, "--json", out)
        check(p.returncode == 1, f"{kind} C: exit {p.returncode}: {p.stderr.strip()}")
        check(f"C  {kind}, related mating width 8.000" in p.stdout,
              f"{kind} C: table lacks the datum line")
        if not os.path.exists(out):
            failures.append(f"{kind} C: no report")
            continue
        j = json.load(open(out))
        c = j["datums"]["C"]
        check(c["feature"] == kind, f"{kind} C: JSON feature {c['feature']}")
        check(abs(c["mating_width"] - 8.0) < 1e-9, f"{kind} C: mating width {c['mating_width']}")
        check(c["basic"] == [120.0, 0.0], f"{kind} C: basic {c['basic']}")
        for axis in ("x_axis", "y_axis", "z_axis"):
            d = max(abs(u - v) for u, v in zip(j["frame"][axis], reference["frame"][axis]))
            check(d < 1e-12, f"{kind} C: frame {axis} differs by {d:.3g}")
        pa = dict(numbers(reference["bores"], "bores"))
        pb = dict(numbers(j["bores"], "bores"))
        check(pa.keys() == pb.keys(), f"{kind} C: report structure differs")
        # Not the sensitivity columns: there the frame is rebuilt on another datum plane A,
        # at whose slightly different normal the bore's axis meets A, and the slot's faces
        # project onto it, differently (by micrometres); the two clockings agree only on the
        # plane A they were constructed for. Nor the Chebyshev fits' ambiguity, a bound on how
        # far a non-unique optimum can move, resolved only to 1e-9 of the coordinates' size
        # (here about 5e-7 mm, src/chebyshev.cpp), which a frame change of 1e-16 can tip.
        worst = max(abs(pb[k] - v) for k, v in pa.items()
                    if k in pb and ".sensitivity" not in k and not k.endswith(".ambiguity"))
        check(worst < 1e-9, f"{kind} C: bore figures differ from the bore-C frame by {worst:.3g}")
        verdicts = lambda r: [(x["id"], x["verdict"]) for x in r["bores"]]
        check(verdicts(j) == verdicts(reference), f"{kind} C: verdicts differ")

    # One face only: refused with one line naming datum C, exit 2, no report.
    points = os.path.join(work, "points", "datum-C-slot.csv")
    with open(points) as f:
        rows = f.read().splitlines()
    with open(points, "w") as f:
        f.write("\n".join(rows[: 1 + 27]) + "\n")
    out = os.path.join(tmp, "one-face.json")
    p = run("check", os.path.join(work, "plan-slot.toml"), "--json", out)
    check(p.returncode == 2, f"one-face slot: exit {p.returncode}")
    check(len(p.stderr.strip().splitlines()) == 1 and "datum C" in p.stderr
          and "not told apart" in p.stderr, f"one-face slot: message {p.stderr.strip()}")
    check(not os.path.exists(out), "one-face slot: a report was written")

if failures:
    print("\n".join(failures))
    sys.exit(1)
print("datum C as a slot or a tab clocks the frame as the bore it replaces")
