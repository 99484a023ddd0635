"""`cylzone forecast` through the command line: the worked example of docs/forecast.md (numbers
worked by hand there), the exit codes of the three verdicts, the JSON object on a file and on
standard output, the safety caution in every output, inch input, and argument errors (one
`cylzone: error:` line naming the option, exit code 2, nothing written).

Usage: /usr/bin/python3 test_forecast.py PATH_TO_CYLZONE
"""
import json
import math
import os
import tempfile


from cli_harness import check, expect_error, failures, finish, run, with_option

CAUTION = "do not replace, the approved inspection procedure"

# The worked example of docs/forecast.md: A = R = 8 um, 50 um/m squareness, 60 mm deep.
WORKED = ["forecast", "--x-accuracy", "0.008", "--x-repeatability", "0.008",
          "--y-accuracy", "0.008", "--y-repeatability", "0.008", "--squareness", "50",
          "--depth", "60", "--position-tolerance", "0.025",
          "--perpendicularity-tolerance", "0.006"]


# --- the worked example: table, exit code 0, figures worked by hand
code, out, err = run(WORKED)
check("worked: exit code", code == 0, f"{code} {err}")
for text in ("0.0170", "0.0230", "0.0047", "0.0138", "120.0000", "can hold", CAUTION):
    check("worked: table", text in out, f"lacks {text!r}")

# --- JSON on standard output: the table goes to stderr
code, out, err = run(WORKED + ["--json", "-"])
check("json stdout: exit code", code == 0, f"{code} {err}")
try:
    j = json.loads(out)
except ValueError as e:
    j = {}
    failures.append(f"json stdout: not JSON: {e}: {out[:200]!r}")
if j:
    check("json: schema", j.get("schema") == "cylzone-forecast-1", j.get("schema"))
    check("json: caution", CAUTION in j.get("caution", ""))
    top = j["position"]["top"]
    # hand: 2 * 3 s * sqrt 2 with s = 2 um; 2 s sqrt(2 ln 2); 2 s sqrt(-2 ln 0.0027)
    check("json: top worst", abs(top["worst_case"] - 0.012 * math.sqrt(2)) < 1e-9, top)
    check("json: top median", abs(top["median"] - 0.004 * math.sqrt(2 * math.log(2))) < 1e-9, top)
    check("json: top quantile", abs(top["quantile"] - 0.004 * math.sqrt(-2 * math.log(0.0027))) < 1e-9, top)
    check("json: full depth worst", abs(j["position"]["full_depth"]["worst_case"] - (0.012 * math.sqrt(2) + 0.006)) < 1e-9)
    check("json: perpendicularity", abs(j["perpendicularity"]["figures"]["worst_case"] - 0.003) < 1e-12)
    check("json: deepest", j["deepest_bore"]["kind"] == "at-depth" and abs(j["deepest_bore"]["depth"] - 120) < 1e-6, j["deepest_bore"])
    check("json: verdict", j["verdict"] == "can-hold", j["verdict"])
check("json stdout: table on stderr", "can hold" in err and CAUTION in err, err[:200])

# --- inch: the same machine in inch gives the same figures divided by 25.4
inch = ["forecast", "--units", "inch"]
for option in ("--x-accuracy", "--x-repeatability", "--y-accuracy", "--y-repeatability"):
    inch += [option, repr(0.008 / 25.4)]
inch += ["--squareness", "50", "--depth", repr(60 / 25.4), "--position-tolerance", repr(0.025 / 25.4),
         "--json", "-", "--quiet"]
code, out, err = run(inch)
check("inch: exit code", code == 0, f"{code} {err}")
try:
    ji = json.loads(out)
    check("inch: units", ji["units"] == "inch")
    check("inch: top quantile", abs(ji["position"]["top"]["quantile"] * 25.4 - 0.004 * math.sqrt(-2 * math.log(0.0027))) < 1e-9)
except (ValueError, KeyError) as e:
    failures.append(f"inch: {e}: {out[:200]!r}")

# --- verdicts and exit codes: cannot hold (1), marginal (3)
no_tilt = with_option(with_option(WORKED, "--squareness", "0"), "--x-accuracy", "0.016")
no_tilt = with_option(no_tilt, "--y-accuracy", "0.016")
code, out, err = run(with_option(no_tilt, "--position-tolerance", "0.014"))
check("cannot hold: exit code 1", code == 1 and "CANNOT HOLD" in out, f"{code} {out[-400:]}")
code, out, err = run(with_option(no_tilt, "--position-tolerance", "0.019"))
check("marginal: exit code 3", code == 3 and "MARGINAL" in out, f"{code} {out[-400:]}")
code, out, err = run(with_option(WORKED, "--depth", "300"))
check("systematic alone: exit code 1", code == 1 and "systematic part alone" in out, f"{code} {out[-400:]}")

# --- help: units and exit codes
code, out, err = run(["forecast", "--help"])
check("help", code == 0 and "um/m" in out and "Exit codes" in out and "--x-repeatability" in out, out[-300:])

# --- argument errors
expect_error("negative", with_option(WORKED, "--x-repeatability", "-0.002"), "--x-repeatability")
expect_error("nan", with_option(WORKED, "--depth", "nan"), "--depth")
expect_error("inf", with_option(WORKED, "--squareness", "inf"), "--squareness")
expect_error("zero tolerance", with_option(WORKED, "--position-tolerance", "0"), "--position-tolerance")
expect_error("zero perpendicularity", with_option(WORKED, "--perpendicularity-tolerance", "0"),
             "--perpendicularity-tolerance")
expect_error("micrometres typed as mm", with_option(WORKED, "--y-accuracy", "8"), "--y-accuracy", "unit")
expect_error("tolerance in um", with_option(WORKED, "--position-tolerance", "25"), "--position-tolerance")
expect_error("absurd tilt", with_option(WORKED, "--squareness", "50000"), "--squareness")
expect_error("negative random tilt", WORKED + ["--tilt-random", "-3"], "--tilt-random")
expect_error("accuracy below repeatability", with_option(WORKED, "--x-accuracy", "0.004"), "--x-accuracy", "A >= R")
expect_error("unknown unit", with_option(WORKED, "--units", "furlong"), "--units")
expect_error("coverage 100", with_option(WORKED, "--coverage", "100"), "--coverage")
expect_error("limits reversed", WORKED + ["--capable-share", "5", "--marginal-share", "1"], "--marginal-share")
expect_error("systematic", with_option(WORKED, "--systematic", "sometimes"), "--systematic")
expect_error("not a number", with_option(WORKED, "--depth", "sixty"), "--depth")
expect_error("missing option", [a for a in WORKED if a not in ("--depth", "60")], "--depth")
expect_error("unknown option", WORKED + ["--bogus", "1"], "--bogus")

with tempfile.TemporaryDirectory() as tmp:
    target = os.path.join(tmp, "forecast.json")
    code, out, err = run(WORKED + ["--json", target])
    check("json file: exit code", code == 0, f"{code} {err}")
    with open(target) as f:
        written = f.read()
    check("json file: caution", CAUTION in written)
    # An argument error afterwards leaves the file as it was.
    expect_error("error keeps file", with_option(WORKED, "--depth", "-1") + ["--json", target], "--depth")
    with open(target) as f:
        check("json file intact", f.read() == written)
    expect_error("json into a missing folder", WORKED + ["--json", os.path.join(tmp, "no", "f.json")], "f.json", "does not exist")
    expect_error("json onto a folder", WORKED + ["--json", tmp], "directory")
    check("no temporary files", sorted(os.listdir(tmp)) == ["forecast.json"], os.listdir(tmp))

# --- --compare: measured parts' JSON reports against the forecast. The demo's report is
# written once; copies get known full-depth positions and mouth deviations, so the observed
# figures are known: mean and 95th percentile by numpy (numpy.percentile's default is
# definition 7 of Hyndman & Fan), the Clopper-Pearson interval by scipy.stats.beta.
import numpy as np
from scipy import stats

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
with tempfile.TemporaryDirectory() as tmp:
    demo = os.path.join(tmp, "demo.json")
    code, out, err = run(["check", os.path.join(ROOT, "point-clouds", "valve-manifold", "plan.toml"),
                          "--json", demo, "--csv", os.path.join(tmp, "demo.csv"), "--quiet",
                          "--time", "2026-12-02T17:29:13Z", "--no-sensitivity"])
    check("compare: demo report written", code in (0, 1) and os.path.exists(demo), f"{code} {err}")
    with open(demo) as f:
        report = json.load(f)
    rng = np.random.default_rng(3)
    known, mouths, files = [], [], []
    for part in range(6):
        r = json.loads(json.dumps(report))
        for c in r["characteristics"]:
            if c["id"].endswith("/position"):
                c["value"] = float(rng.uniform(0.002, 0.034))
                known.append((c["feature"], c["value"]))
        for b in r["bores"]:
            if b.get("depth_profile"):
                dx, dy = rng.normal(0.0, 0.003, 2)
                b["depth_profile"]["samples"][0]["dx"] = float(dx)
                b["depth_profile"]["samples"][0]["dy"] = float(dy)
                mouths.append((b["id"], dx, dy))
        name = os.path.join(tmp, f"part{part}.json")
        with open(name, "w") as f:
            json.dump(r, f)
        files.append(name)
    code, out, err = run(WORKED + ["--compare", *files, "--json", "-"])
    check("compare: exit code is the forecast's", code == 0, f"{code} {err[:300]}")
    try:
        c = json.loads(out)["comparison"]
    except (ValueError, KeyError) as e:
        c = None
        failures.append(f"compare: no comparison object: {e}: {out[:200]!r}")
    if c:
        values = np.array([v for _, v in known])
        n = len(values)
        check("compare: bores", c["bores"] == n, c["bores"])
        check("compare: mean", abs(c["observed"]["mean"] - values.mean()) < 1e-12, c["observed"])
        check("compare: sd", abs(c["observed"]["standard_deviation"] - values.std(ddof=1)) < 1e-12)
        check("compare: 95th percentile", abs(c["observed"]["quantile95"] - np.percentile(values, 95)) < 1e-12)
        k = int((values > 0.025).sum())
        check("compare: outside", c["outside"]["count"] == k, (c["outside"], k))
        lo = 0.0 if k == 0 else stats.beta.ppf(0.025, k, n - k + 1)
        hi = 1.0 if k == n else stats.beta.ppf(0.975, k + 1, n - k)
        check("compare: Clopper-Pearson", abs(c["outside"]["interval"]["lower"] - lo) < 1e-9
              and abs(c["outside"]["interval"]["upper"] - hi) < 1e-9, (c["outside"], lo, hi))
        dx = np.array([m[1] for m in mouths])
        check("compare: mouth dx mean", abs(c["mouth"]["x"]["observed_mean"] - dx.mean()) < 1e-12, c["mouth"])
        # Uniform positions up to 0.034 against a forecast whose 95 % quantile is 0.017: worse.
        check("compare: worse", c["performance"] == "worse-than-forecast", c["performance"])
        check("compare: depth mismatches (P3, P5, P6 are not 60 deep)", c["depth_mismatches"] == 3 * 6,
              c["depth_mismatches"])
    check("compare: table on stderr", "Compared with measured parts" in err and "WORSE" in err
          and CAUTION in err, err[-600:])
    # Only P1 and P2.
    code, out, err = run(WORKED + ["--compare", *files, "--compare-bore", "P1", "--compare-bore", "P2",
                                   "--json", "-", "--quiet"])
    try:
        check("compare-bore: two per report", json.loads(out)["comparison"]["bores"] == 12)
    except (ValueError, KeyError) as e:
        failures.append(f"compare-bore: {e}: {out[:200]!r}")
    # Errors: a malformed report (named), a missing file, no bore left, the JSON over a report.
    broken = os.path.join(tmp, "broken.json")
    with open(broken, "w") as f:
        f.write('{"schema": "cylzone-report-1", "bores": [')
    expect_error("compare: malformed report", WORKED + ["--compare", broken], "broken.json")
    expect_error("compare: missing report", WORKED + ["--compare", os.path.join(tmp, "none.json")], "none.json")
    expect_error("compare: no such bore", WORKED + ["--compare", files[0], "--compare-bore", "Q9"],
                 "--compare", "--compare-bore")
    expect_error("compare-bore without compare", WORKED + ["--compare-bore", "P1"], "--compare-bore")
    with open(files[0]) as f:
        before = f.read()
    expect_error("compare: json over a report", WORKED + ["--compare", files[0], "--json", files[0]], "part0.json")
    with open(files[0]) as f:
        check("compare: report intact", f.read() == before)

finish("forecast CLI")
