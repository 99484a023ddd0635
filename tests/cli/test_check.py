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
    check(not [n for n in os.listdir(tmp) if ".tmp-" in n], "temporary file left behind")

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
print("cylzone check behaves")
