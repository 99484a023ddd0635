"""`cylzone check` output handling: reports go to regular files only, as a set, never twice to
one file, and '-' means standard output. Each refusal is one line on stderr and exit code 2.

POSIX rename() replaces whatever directory entry has the target's name (POSIX.1-2017), so a
program that writes reports by rename must refuse device nodes and FIFOs itself; these checks
hold cylzone to that.

Usage: /usr/bin/python3 test_report_output.py PATH_TO_CYLZONE PLAN
"""
import csv
import io
import json
import os
import stat
import subprocess
import sys
import tempfile

CLI, PLAN = sys.argv[1], os.path.abspath(sys.argv[2])
failures = []


def run(*args):
    # A timeout so that a regression that opens a FIFO for writing fails instead of hanging.
    try:
        return subprocess.run([CLI, *args], capture_output=True, text=True, timeout=120)
    except subprocess.TimeoutExpired:
        failures.append(f"timed out: {args}")
        return subprocess.CompletedProcess(args, -1, "", "")


def check(condition, message):
    if not condition:
        failures.append(message)


def refused(name, p, *fragments):
    lines = [l for l in p.stderr.splitlines() if l.strip()]
    check(p.returncode == 2, f"{name}: exit {p.returncode}, expected 2")
    check(len(lines) == 1 and lines[0].startswith("cylzone: error:"),
          f"{name}: expected one error line, got {p.stderr[:300]!r}")
    for f in fragments:
        check(f in p.stderr, f"{name}: stderr lacks {f!r}: {p.stderr.strip()[:300]}")
    check("Part verdict" not in p.stdout, f"{name}: the table was printed")


def leftovers(directory):
    return [n for n in os.listdir(directory) if "cylzone-tmp" in n]


with tempfile.TemporaryDirectory() as tmp:
    # A FIFO at the report path: refused, still a FIFO (a reader waiting on it gets nothing).
    fifo = os.path.join(tmp, "pipe.json")
    os.mkfifo(fifo)
    p = run("check", PLAN, "--json", fifo)
    refused("FIFO", p, "pipe.json", "FIFO", "regular files only")
    fifo_kept = stat.S_ISFIFO(os.lstat(fifo).st_mode)
    check(fifo_kept, "the FIFO was replaced")

    # A link to /dev/null: refused, the link and /dev/null as they were.
    link = os.path.join(tmp, "null.csv")
    os.symlink("/dev/null", link)
    p = run("check", PLAN, "--csv", link)
    refused("link to /dev/null", p, "null.csv", "a link to a device")
    check(os.path.islink(link), "the link to /dev/null was replaced")

    # /dev/null itself, only once the FIFO refusal works, so that a regression cannot replace
    # the system's /dev/null when the suite runs as root.
    if fifo_kept and p.returncode == 2:
        p = run("check", PLAN, "--json", "/dev/null")
        refused("/dev/null", p, "/dev/null", "a device")
        check(stat.S_ISCHR(os.stat("/dev/null").st_mode), "/dev/null is no longer a device")

    # One file named twice, also spelled differently: refused before any work, nothing written.
    twice = os.path.join(tmp, "twice.out")
    for other in (twice, os.path.join(tmp, ".", "twice.out"),
                  os.path.join(tmp, "sub", "..", "twice.out")):
        os.makedirs(os.path.join(tmp, "sub"), exist_ok=True)
        p = run("check", PLAN, "--json", twice, "--csv", other)
        refused(f"same file {other}", p, "same file", "--json")
        check(not os.path.exists(twice), f"same file {other}: a report was written")

    # Both reports to standard output: refused.
    p = run("check", PLAN, "--json", "-", "--csv", "-")
    refused("two reports on stdout", p, "standard output")

    # The CSV cannot be written: the JSON must not be left behind either. Not running as root, a
    # directory without write permission; as root (who may write anywhere), a directory of /proc
    # takes no new files, which only the write itself finds out.
    json_path = os.path.join(tmp, "set.json")
    if os.geteuid() != 0:
        locked = os.path.join(tmp, "locked")
        os.mkdir(locked)
        os.chmod(locked, 0o555)
        csv_path = os.path.join(locked, "set.csv")
    else:
        csv_path = "/proc/cylzone-report-test.csv"
    p = run("check", PLAN, "--json", json_path, "--csv", csv_path)
    refused("unwritable CSV directory", p, csv_path)
    check(not os.path.exists(json_path), "the JSON was left behind without its CSV")
    check(not leftovers(tmp), f"temporary files left: {leftovers(tmp)}")

    # An existing pair is replaced as a pair; a stale temporary of a process that is gone (a
    # process id above Linux's largest pid_max, 2^22) is removed, other files are not.
    pair_json, pair_csv = os.path.join(tmp, "pair.json"), os.path.join(tmp, "pair.csv")
    stale = os.path.join(tmp, ".pair.json.cylzone-tmp-999999999-0")
    foreign = os.path.join(tmp, ".pair.json.tmp-keep")
    for path in (pair_json, pair_csv, stale, foreign):
        with open(path, "w") as f:
            f.write("old")
    p = run("check", PLAN, "--json", pair_json, "--csv", pair_csv, "--quiet")
    check(p.returncode == 1, f"pair: exit {p.returncode}: {p.stderr.strip()}")
    check(open(pair_json).read().startswith("{"), "pair: JSON not replaced")
    check(open(pair_csv).read().startswith("part,"), "pair: CSV not replaced")
    check(not os.path.exists(stale), "stale temporary not removed")
    check(os.path.exists(foreign), "a file of another naming was removed")

    # --json -: the report on stdout, the table on stderr, the exit code unchanged.
    p = run("check", PLAN, "--json", "-")
    check(p.returncode == 1, f"--json -: exit {p.returncode}")
    try:
        j = json.loads(p.stdout)
        check(j.get("schema") == "cylzone-report-1", "--json -: schema")
        check("do not replace" in j.get("caution", ""), "--json -: caution")
        ids = [c["id"] for c in j.get("characteristics", [])]
        check(len(ids) == len(set(ids)) > 0, "--json -: characteristic ids missing or repeated")
    except json.JSONDecodeError as e:
        failures.append(f"--json -: stdout is not JSON ({e}): {p.stdout[:200]!r}")
    check("Part verdict: DOES NOT CONFORM" in p.stderr and "Caution:" in p.stderr,
          "--json -: the table is not on stderr")
    check(not os.path.exists("-"), "--json -: a file named '-' was written")

    # --csv - with --json FILE: both written, the CSV parses, every row carries id and caution.
    both = os.path.join(tmp, "both.json")
    p = run("check", PLAN, "--csv", "-", "--json", both, "--quiet")
    rows = list(csv.DictReader(io.StringIO(p.stdout)))
    check(p.returncode == 1 and rows and p.stderr == "", f"--csv -: exit {p.returncode}")
    check(all(r["id"].startswith(r["bore"] + "/") for r in rows), "--csv -: id column")
    check(all("do not replace" in r["caution"] for r in rows), "--csv -: caution column")
    if os.path.exists(both):
        check([c["id"] for c in json.load(open(both))["characteristics"]] == [r["id"] for r in rows],
              "CSV and JSON list different characteristics")
    else:
        failures.append("--csv - --json FILE: JSON not written")

# A whole-part scan is an input like any point file: a report over it is refused, the cloud
# stays as it was (the plan's features name no files of their own there).
SCAN_PLAN = os.path.join(os.path.dirname(PLAN), "plan-scan.toml")
SCAN = os.path.join(os.path.dirname(PLAN), "scan", "manifold-scan.csv")
if os.path.exists(SCAN_PLAN):
    before = open(SCAN, "rb").read()
    refused("--json over the scan", run("check", SCAN_PLAN, "--json", SCAN), "over an input file")
    check(open(SCAN, "rb").read() == before, "the scan cloud was changed")
else:
    failures.append(f"{SCAN_PLAN} is missing")

if failures:
    print("\n".join(failures))
    sys.exit(1)
print("reports go to regular files only, as a set, and '-' to standard output")
