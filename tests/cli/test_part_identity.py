"""`cylzone check` for reports people sign: part identity in every format, the range each bore
was evaluated over, the table's symbols chosen from the locale, figures that agree between the
table and the CSV, and argument errors in the tool's one-line form with exit code 2.

Usage: /usr/bin/python3 test_part_identity.py PATH_TO_CYLZONE PLAN
"""
import csv
import io
import json
import os
import re
import shutil
import subprocess
import sys
import tempfile

CLI, PLAN = sys.argv[1], os.path.abspath(sys.argv[2])
failures = []
FIXED = "2026-12-02T17:40:00Z"


def run(*args, lang="C.UTF-8"):
    env = {k: v for k, v in os.environ.items() if k not in ("LC_ALL", "LC_CTYPE", "LANG")}
    env["LANG"] = lang
    return subprocess.run([CLI, *args], capture_output=True, env=env, timeout=120)


def check(condition, message):
    if not condition:
        failures.append(message)


def refused(name, p, *fragments):
    """One printable line on stderr starting 'cylzone: error:', exit code 2."""
    err = p.stderr.decode("utf-8", "replace")
    lines = [l for l in err.splitlines() if l.strip()]
    check(p.returncode == 2, f"{name}: exit {p.returncode}, expected 2")
    check(len(lines) == 1 and lines[0].startswith("cylzone: error:"),
          f"{name}: expected one 'cylzone: error:' line, got {err[:300]!r}")
    check(all(len(l) <= 500 and l.isprintable() for l in lines), f"{name}: unbounded message")
    for f in fragments:
        check(f in err, f"{name}: message lacks {f!r}: {err[:300]!r}")


# ---- argument errors: one line, exit 2, never CLI11's own format
refused("unknown option", run("check", PLAN, "--frobnicate"), "--frobnicate")
refused("missing value", run("check", PLAN, "--json"), "--json")
refused("missing plan", run("check"), "PLAN")
refused("unknown command", run("inspect", PLAN), "inspect")
refused("bad time", run("check", PLAN, "--time", "yesterday"), "--time", "ISO 8601")
refused("time without zone", run("check", PLAN, "--time", "2026-12-02T17:40:00"), "--time")
refused("note without =", run("check", PLAN, "--note", "operator"), "--note", "KEY=VALUE")
refused("note key twice", run("check", PLAN, "--note", "a=1", "--note", "a=2"), "given twice")
refused("control character", run("check", PLAN, "--serial", "S\x1b[31m1"), "--serial")
refused("long argument", run("check", PLAN, "--part-id", "x" * 5000), "--part-id")

# ---- --help: the usage line says "cylzone", exit codes and defaults are listed; exit 0
for args in (["--help"], ["check", "--help"], ["fit", "--help"]):
    p = run(*args)
    out = p.stdout.decode()
    check(p.returncode == 0, f"{args}: exit {p.returncode}")
    check(re.search(r"^Usage: cylzone\b", out, re.M) is not None, f"{args}: usage line: {out[:200]!r}")
    check(os.path.dirname(CLI) not in out, f"{args}: the binary's path is printed")
    for code in ("0 every characteristic conforms", "1 a characteristic does not conform",
                 "2 input or argument error", "3 conformance not proven"):
        check(code in out, f"{args}: --help lacks exit code '{code}'")
out = run("fit", "--help").stdout.decode()
check(re.search(r"--method TEXT=least-squares", out) is not None, "fit --help: default method")
check(re.search(r"--units TEXT=mm", out) is not None, "fit --help: default unit")

with tempfile.TemporaryDirectory() as tmp:
    # The demo plan copied with P7's depth removed: P7 is evaluated over its probed extent.
    part = os.path.join(tmp, "part")
    shutil.copytree(os.path.dirname(PLAN), part)
    plan = os.path.join(part, "plan.toml")
    text = open(plan, encoding="utf-8").read()
    p7 = text.index('id = "P7"')
    depth = text.index("depth = ", p7)
    text = text[:depth] + text[text.index("\n", depth) + 1:]
    open(plan, "w", encoding="utf-8").write(text)

    j1, c1 = os.path.join(tmp, "a.json"), os.path.join(tmp, "a.csv")
    ident = ["--part-id", "HM-3207", "--serial", "S-0042", "--time", FIXED,
             "--note", "operator=Lee", "--note", "fixture=F2, rev b"]
    p = run("check", plan, "--json", j1, "--csv", c1, *ident)
    table = p.stdout.decode("utf-8")
    check(p.returncode == 1, f"check: exit {p.returncode}, expected 1 (the demo does not conform)")
    check(f"part: id HM-3207, serial S-0042, time {FIXED}, operator=Lee; fixture=F2, rev b"
          in table, "table header lacks the part identity")

    rows = list(csv.DictReader(open(c1, encoding="utf-8", newline="")))
    header = open(c1, encoding="utf-8").readline().strip().split(",")
    check(header[:14] == ["part", "bore", "characteristic", "reference", "value", "tolerance",
                          "bonus", "allowed", "comparison", "verdict", "decisive", "units", "id",
                          "caution"], f"existing CSV columns moved: {header}")
    for r in rows:
        check((r["part_id"], r["serial"], r["timestamp"]) == ("HM-3207", "S-0042", FIXED),
              f"CSV identity: {r['id']}")
        check(r["notes"] == "operator=Lee; fixture=F2, rev b", f"CSV notes: {r['notes']!r}")
        expected = "probed extent" if r["bore"] == "P7" else "plan depth"
        if r["id"].endswith(("/position", "/perpendicularity", "/virtual-condition")):
            check(r["range_source"] == expected, f"CSV range_source of {r['id']}: {r['range_source']}")

    j = json.load(open(j1, encoding="utf-8"))
    check(j["part"] == {"id": "HM-3207", "serial": "S-0042", "timestamp": FIXED,
                        "notes": {"operator": "Lee", "fixture": "F2, rev b"}}, f"JSON part: {j['part']}")
    for b in j["bores"]:
        expected = "probed extent" if b["id"] == "P7" else "plan depth"
        check(b["depth_source"] == expected, f"JSON depth_source of {b['id']}")
        check(b["depth_profile"]["range_source"] == expected, f"JSON range_source of {b['id']}")
        if b["id"] == "P7":
            # The probed extent is the range evaluated (common practice: no depth, no more).
            check(b["position"]["range"] == b["probed"], "P7: range is not the probed extent")
    check("no full depth in the plan for P7" in table, "table lacks the probed-extent note")

    # A fixed time gives byte-identical reports (reproducible output).
    j2, c2 = os.path.join(tmp, "b.json"), os.path.join(tmp, "b.csv")
    run("check", plan, "--json", j2, "--csv", c2, *ident)
    check(open(c1, "rb").read() == open(c2, "rb").read(), "CSV differs between two runs")
    check(open(j1, "rb").read() == open(j2, "rb").read(), "JSON differs between two runs")
    # Without --time, the run's UTC time in ISO 8601 (RFC 3339 profile).
    run("check", plan, "--csv", c2)
    stamp = next(csv.DictReader(open(c2, encoding="utf-8", newline="")))["timestamp"]
    check(re.fullmatch(r"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\dZ", stamp) is not None, f"default time {stamp!r}")

    # Every figure of the CSV is printed in the table with the same digits.
    for r in rows:
        line = next((l for l in table.splitlines()
                     if l.startswith(r["bore"] + " ") and f" {r['characteristic']} " in l), None)
        check(line is not None, f"table: no row for {r['id']}")
        if line:
            for key in ("value", "tolerance", "bonus", "allowed"):
                check(re.search(rf"(^|\s){re.escape(r[key])}(\s|$)", line) is not None,
                      f"table row {r['id']}: {key} {r[key]} missing")

    # Locale: UTF-8 symbols, else ASCII only; lines within 120 columns either way.
    ascii_table = run("check", plan, "--time", FIXED, lang="C").stdout
    check(all(b < 0x80 for b in ascii_table), "LANG=C: the table has non-ASCII bytes")
    check(b"tilt urad" in ascii_table and b" deg\n" in ascii_table, "LANG=C: urad / deg")
    check("tilt \u00b5rad" in table and "\u00b0\n" in table, "UTF-8 locale: \u00b5rad / \u00b0")
    for l in table.splitlines() + ascii_table.decode().splitlines():
        check(len(l) <= 120, f"table line longer than 120: {l[:60]!r}...")

# ---- identity in the plan's [part] table (docs/plan.md): the command line overrides it field
# by field, a --note replaces the plan's note of the same key in its place, new notes follow.
with tempfile.TemporaryDirectory() as tmp:
    part = os.path.join(tmp, "part")
    shutil.copytree(os.path.dirname(PLAN), part)
    plan = os.path.join(part, "plan.toml")
    with open(plan, "a", encoding="utf-8") as f:
        f.write('\n[part]\nid = "HM-3207"\nserial = "S-0007"\ntime = 2026-11-30T08:15:00Z\n'
                'notes = { operator = "Ada", fixture = "F1" }\n')
    out = os.path.join(tmp, "plan-only.json")
    p = run("check", plan, "--json", out, "--quiet")
    check(p.returncode in (0, 1, 3), f"[part]: exit {p.returncode}: {p.stderr[:300]!r}")
    if os.path.exists(out):
        j = json.load(open(out, encoding="utf-8"))
        check(j["part"] == {"id": "HM-3207", "serial": "S-0007", "timestamp": "2026-11-30T08:15:00Z",
                            "notes": {"operator": "Ada", "fixture": "F1"}},
              f"[part] alone: {j['part']}")
    out = os.path.join(tmp, "overridden.json")
    out_csv = os.path.join(tmp, "overridden.csv")
    p = run("check", plan, "--json", out, "--csv", out_csv, "--quiet", "--serial", "S-0042",
            "--time", FIXED, "--note", "fixture=F2", "--note", "shift=night")
    check(p.returncode in (0, 1, 3), f"[part] overridden: exit {p.returncode}")
    if os.path.exists(out):
        j = json.load(open(out, encoding="utf-8"))
        check(j["part"]["id"] == "HM-3207" and j["part"]["serial"] == "S-0042"
              and j["part"]["timestamp"] == FIXED, f"overrides: {j['part']}")
        check(j["part"]["notes"] == {"operator": "Ada", "fixture": "F2", "shift": "night"},
              f"notes merged: {j['part']['notes']}")
    if os.path.exists(out_csv):
        rows = list(csv.DictReader(open(out_csv, encoding="utf-8", newline="")))
        check(rows and all(r["notes"] == "operator=Ada; fixture=F2; shift=night" for r in rows),
              f"CSV notes in merged order: {rows[0]['notes'] if rows else None!r}")
    with open(plan, "a", encoding="utf-8") as f:
        f.write("\n")
    text = open(plan, encoding="utf-8").read().replace('serial = "S-0007"', 'serial = "S\\u0007"')
    open(plan, "w", encoding="utf-8").write(text)
    refused("[part] control character", run("check", plan), "part.serial", "control characters")

if failures:
    print("\n".join(failures))
    sys.exit(1)
print("part identity, range source, table and argument errors: all checks passed")
