"""`cylzone check --uncertainty` through the command line: the study is off unless asked (the
reports without it carry no trace of it), the JSON `uncertainty` section names every evaluated
characteristic with its u, interval, kind, trials and seed, the CSV gains `u`,
`interval_low`, `interval_high` after its existing columns, the table a section and the
caution; the same seed gives the same numbers on 1 and 2 threads; the plan's [uncertainty]
table is read and its errors name the file, line and key; argument errors are one
`cylzone: error:` line with exit code 2.

Usage: /usr/bin/python3 test_uncertainty.py PATH_TO_CYLZONE DEMO_PLAN
"""
import csv
import io
import json
import os
import shutil
import sys
import tempfile

from cli_harness import check, expect_error, finish
from cli_harness import run as run_cli

CLI, DEMO = sys.argv[1], sys.argv[2]
CAUTION = "do not replace, the approved inspection procedure"
TIME = ["--time", "2026-12-03T00:00:00Z"]


def run(args):
    # The study runs thousands of evaluations in some cases: a longer limit than the harness's.
    return run_cli(args, timeout=600)


with tempfile.TemporaryDirectory() as tmp:
    plain_json, plain_csv = os.path.join(tmp, "plain.json"), os.path.join(tmp, "plain.csv")
    code, plain_table, _ = run(["check", DEMO, *TIME, "--json", plain_json, "--csv", plain_csv])
    check("plain run", code in (0, 1, 3), f"exit {code}")
    plain = json.load(open(plain_json))
    check("off by default: no JSON section", "uncertainty" not in plain)
    check("off by default: no table section", "Measurement uncertainty" not in plain_table)
    plain_header = open(plain_csv).readline().strip().split(",")
    check("off by default: no CSV columns", "interval_low" not in plain_header)

    runs = {}
    for threads in ("1", "2"):
        j, c = os.path.join(tmp, f"u{threads}.json"), os.path.join(tmp, f"u{threads}.csv")
        code, table, err = run(["check", DEMO, *TIME, "--uncertainty", "--trials", "12",
                                "--seed", "5", "--threads", threads, "--json", j, "--csv", c])
        check(f"study on {threads} threads", code in (0, 1, 3), f"exit {code}: {err[:200]}")
        runs[threads] = (json.load(open(j)), open(c).read(), table)

    report, csv_text, table = runs["2"]
    u = report.get("uncertainty")
    check("JSON section", isinstance(u, dict))
    if isinstance(u, dict):
        check("trials and seed", u["trials"] == 12 and u["seed"] == 5, str(u["message"]))
        check("caution in the section", CAUTION in u["caution"])
        evaluated = [c["id"] for c in report["characteristics"] if c["status"] == "evaluated"]
        check("every evaluated characteristic", sorted(u["characteristics"]) == sorted(evaluated),
              f"{sorted(u['characteristics'])} vs {sorted(evaluated)}")
        for cid, c in u["characteristics"].items():
            check(f"{cid}: fields",
                  c["kind"] == "shortest" and c["trials"] == 12 and c["seed"] == 5 and
                  c["u"] > 0 and c["interval"][0] <= c["interval"][1] and c["ambiguity"] >= 0,
                  str(c))
            # The figures in the report's unit, like every other length (mm here).
            check(f"{cid}: value as the check's",
                  any(abs(x["value"] - c["value"]) < 1e-12 for x in report["characteristics"]
                      if x["id"] == cid))
        same = runs["1"][0]["uncertainty"]["characteristics"] == u["characteristics"]
        check("1 and 2 threads give the same numbers", same)
        # Everything else of the report is as without the study; each characteristic gains
        # the study's U (k u + the widening over equally good axes), shown but not counted
        # under the demo's simple acceptance, so no verdict or limit moves.
        for key in plain:
            if key not in ("part", "characteristics"):
                check(f"report key {key} unchanged", plain[key] == report[key])
        for before, after in zip(plain["characteristics"], report["characteristics"]):
            cid = after["id"]
            check(f"{cid}: only U added",
                  {k: v for k, v in before.items() if k != "uncertainty"} ==
                  {k: v for k, v in after.items() if k != "uncertainty"})
            mc = u["characteristics"].get(cid)
            if mc is not None:
                expected = 2.0 * mc["u"] + mc["interval_widening"]
                got = after["uncertainty"]
                check(f"{cid}: U = 2 u + widening",
                      got is not None and abs(got["expanded"] - expected) <= 1e-12 and
                      got["k"] == 2 and got["source"].startswith("Monte Carlo, 12 trials"),
                      f"{got} vs {expected}")
    rows = list(csv.reader(io.StringIO(csv_text)))
    header = rows[0]
    check("CSV columns appended at the end", header[:len(plain_header)] == plain_header and
          header[len(plain_header):] == ["u", "interval_low", "interval_high"], str(header[-5:]))
    for row in rows[1:]:
        check("CSV row width", len(row) == len(header))
        if row[header.index("status")] == "evaluated":
            check(f"CSV u of {row[header.index('id')]}", float(row[header.index("u")]) > 0)
    check("table section", "Measurement uncertainty (Monte Carlo, JCGM 101:2008" in table)
    check("table caution", CAUTION.split(",")[0] in table)

    # ISO 14253-1:2017 with the study's U: conformance proven at or below allowed - U,
    # non-conformance beyond allowed + U (upper limits; mirrored for lower ones), otherwise not
    # proven; each verdict recomputed here from value, allowed and U, and the exit code from
    # them (1: a proven non-conformance, else 3: something not proven, else 0).
    j = os.path.join(tmp, "iso.json")
    code, _, err = run(["check", DEMO, *TIME, "--uncertainty", "--trials", "12", "--seed", "5",
                        "--decision-rule", "iso-14253-1", "--no-sensitivity", "--json", j])
    iso = json.load(open(j)) if os.path.exists(j) else {"characteristics": []}
    verdicts = []
    for c in iso["characteristics"]:
        if c["status"] != "evaluated" or c["uncertainty"] is None:
            continue
        U, allowed, value = c["uncertainty"]["expanded"], c["allowed"], c["value"]
        sign = -1.0 if c["comparison"] == "<=" else 1.0
        inside = (value <= allowed - U + 1e-12) if sign < 0 else (value >= allowed + U - 1e-12)
        outside = (value > allowed + U + 1e-12) if sign < 0 else (value < allowed - U - 1e-12)
        expected = "conforms" if inside else "does not conform" if outside else "not proven"
        check(f"ISO 14253-1 {c['id']}", c["verdict"] == expected and c["rule"] == "ISO 14253-1",
              f"{c['verdict']} / {c['rule']}, expected {expected} (value {value}, allowed "
              f"{allowed}, U {U})")
        if c["decisive"]:
            verdicts.append(expected)
    check("ISO 14253-1: rows with the study's U", len(verdicts) > 10, str(len(verdicts)))
    want = 1 if "does not conform" in verdicts else 3 if "not proven" in verdicts else 0
    check("ISO 14253-1: exit code from the verdicts", code == want, f"{code} vs {want}: {err[:200]}")

    # The plan's [uncertainty] table: read, then overridden by the command line.
    folder = os.path.join(tmp, "part")
    shutil.copytree(os.path.dirname(DEMO), folder)
    plan = os.path.join(folder, os.path.basename(DEMO))
    text = open(plan).read()
    with open(plan, "w") as f:
        f.write(text + "\n[uncertainty]\nprobing_sigma = 0.0008\nmpe_a = 0.0015\nmpe_k = 333\n"
                "trials = 6\nseed = 17\n")
    j = os.path.join(tmp, "plan.json")
    code, _, err = run(["check", plan, *TIME, "--uncertainty", "--json", j])
    check("plan table run", code in (0, 1, 3), err[:200])
    if code in (0, 1, 3):
        s = json.load(open(j))["uncertainty"]
        check("plan's trials, seed and sigma", s["trials"] == 6 and s["seed"] == 17 and
              s["probing_model"] == "sigma" and
              all(abs(f["sigma"] - 0.0008) < 1e-15 for f in s["feature_sigma"]), str(s)[:300])
        check("plan's length error", s["length_error"] and s["length_error"]["k"] == 333)
    bad_lines = len(text.splitlines()) + 2
    for body, key, fragment in (
            ("probing_sigma = -1\n", "uncertainty.probing_sigma", "above 0"),
            ("trials = \"many\"\n", "uncertainty.trials", "adaptive"),
            ("trials = 1\n", "uncertainty.trials", "2 to 10000000"),
            ("mpe_a = 0.001\n", "uncertainty.mpe_k", "both mpe_a and mpe_k"),
            ("sigma = 0.001\n", "uncertainty.sigma", "unknown key")):
        with open(plan, "w") as f:
            f.write(text + "\n[uncertainty]\n" + body)
        expect_error(f"plan [uncertainty] {body.strip()}", ["check", plan, "--uncertainty"],
                     os.path.basename(plan), key, fragment)

    expect_error("--trials needs --uncertainty", ["check", DEMO, "--trials", "10"],
                 "--uncertainty")
    expect_error("bad --trials", ["check", DEMO, "--uncertainty", "--trials", "ten"], "--trials")
    expect_error("bad --probing-sigma", ["check", DEMO, "--uncertainty", "--probing-sigma", "-2"],
                 "--probing-sigma")

finish("uncertainty: the command line's study agrees with its contract")
