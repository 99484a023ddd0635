"""`cylzone advise` through the command line: the linear-propagation reference of
docs/probing-advice.md (u of the axis at each end through two sections, derived there), the exit
codes (0 the candidate meets the target, 1 it does not), the search's result, the JSON object on
a file and on standard output, the same bytes for 1 and 2 threads, inch input, the safety
caution in every output, and argument errors (one `cylzone: error:` line naming the option,
exit code 2, nothing written).

Usage: /usr/bin/python3 test_advise.py PATH_TO_CYLZONE
"""
import json
import math
import os
import tempfile


from cli_harness import check, expect_error, failures, finish, run, with_option

CAUTION = "do not replace, the approved inspection procedure"

# A 10 mm bore 60 deep, probed in two sections 2 and 58 below the mouth, 8 points each.
BASE = ["advise", "--diameter", "10", "--depth", "60", "--position-tolerance", "0.025",
        "--perpendicularity-tolerance", "0.015", "--sigma", "0.001", "--sections", "2,58",
        "--points", "8", "--trials", "3000", "--seed", "7"]


def parsed(name, out):
    try:
        return json.loads(out)
    except ValueError as e:
        failures.append(f"{name}: not JSON: {e}: {out[:200]!r}")
        return None


# --- the candidate alone: linear propagation (docs/probing-advice.md, "Linear reference"):
# u_c = sigma sqrt(2 / n) per section, u(z) = u_c sqrt((1 - s)^2 + s^2), s = (z - z1) / h.
code, out, err = run(BASE + ["--no-search", "--json", "-", "--quiet", "--threads", "1"])
check("candidate: exit code 1 (misses 10 %)", code == 1, f"{code} {err}")
j = parsed("candidate", out)
if j:
    check("json: schema", j.get("schema") == "cylzone-probing-advice-1", j.get("schema"))
    check("json: caution", CAUTION in j.get("caution", ""))
    check("json: no search", j.get("search") is None)
    c = j["candidate"]
    uc = 0.001 * math.sqrt(2 / 8)
    for end, z in (("top", 0.0), ("bottom", -60.0)):
        s = (z - (-2.0)) / (-58.0 - (-2.0))
        u = uc * math.sqrt((1 - s) ** 2 + s ** 2)
        for axis in ("u_x", "u_y"):
            # Monte Carlo error of a standard deviation from 3000 trials: 1.3 % (common practice)
            check(f"linear u {end} {axis}", abs(c[end][axis] / u - 1) < 0.05, f"{c[end][axis]} vs {u}")
        # Rayleigh (from memory): mean 2 u sqrt(pi / 2), 95 % quantile 4.895 u
        check(f"rayleigh mean {end}", abs(c[end]["position"]["mean"] / (2 * u * math.sqrt(math.pi / 2)) - 1) < 0.04)
        check(f"rayleigh q95 {end}", abs(c[end]["position"]["quantile95"] / (2 * u * math.sqrt(-2 * math.log(0.05))) - 1) < 0.05)
    check("json: not met", c["meets_target"] is False and j["meets_target"] is False)
    check("json: share", abs(c["position_uncertainty"]["share"] - c["position_uncertainty"]["expanded"] / 0.025) < 1e-12)

# --- the same bytes for any thread count
code2, out2, err2 = run(BASE + ["--no-search", "--json", "-", "--quiet", "--threads", "2"])
check("threads: same JSON", code2 == code and out2 == out, "1 and 2 threads differ")

# --- a generous target: exit code 0
code, out, err = run(with_option(BASE, "--target", "30") + ["--no-search"])
check("target 30 %: exit code 0", code == 0 and "meets the target" in out and CAUTION in out, f"{code} {out[-300:]}")

# --- the search: the smallest pattern meets, the one before it does not
code, out, err = run(with_option(BASE, "--trials", "1000") + ["--usable", "2,58", "--json", "-", "--quiet"])
j = parsed("search", out)
if j:
    s = j["search"]
    check("search: found", s["smallest"] is not None, s)
    if s["smallest"]:
        check("search: smallest meets", s["smallest"]["meets_target"] is True)
        check("search: ends first", s["smallest"]["pattern"]["section_heights"][0] == -2.0
              and s["smallest"]["pattern"]["section_heights"][-1] == -58.0, s["smallest"]["pattern"])
        check("search: previous misses", s["previous"] is not None and s["previous"]["meets_target"] is False)
        check("search: previous smaller", s["previous"]["pattern"]["total_points"] <= s["smallest"]["pattern"]["total_points"])

# --- inch: the same bore in inch gives the same figures divided by 25.4
inch = ["advise", "--units", "inch", "--diameter", repr(10 / 25.4), "--depth", repr(60 / 25.4),
        "--position-tolerance", repr(0.025 / 25.4), "--sigma", repr(0.001 / 25.4),
        "--sections", f"{2 / 25.4!r},{58 / 25.4!r}", "--points", "8", "--trials", "3000", "--seed", "7",
        "--no-search", "--json", "-", "--quiet"]
code, out, err = run(inch)
ji = parsed("inch", out)
mm = parsed("mm", run(BASE + ["--no-search", "--json", "-", "--quiet"])[1])
if ji and mm:
    check("inch: units", ji["units"] == "inch")
    a, b = ji["candidate"]["top"]["u_x"] * 25.4, mm["candidate"]["top"]["u_x"]
    check("inch: u_x", abs(a - b) < 1e-9 * b + 1e-12, f"{a} vs {b}")

# --- help: units and exit codes
code, out, err = run(["advise", "--help"])
check("help", code == 0 and "Exit codes" in out and "--sigma" in out and "length unit" in out, out[-300:])

# --- unknown command lists advise
code, out, err = run(["advize"])
check("unknown command", code == 2 and "advise" in err, err)

# --- argument errors
expect_error("zero sigma", with_option(BASE, "--sigma", "0"), "--sigma")
expect_error("negative sigma", with_option(BASE, "--sigma", "-0.001"), "--sigma")
expect_error("sigma in um", with_option(BASE, "--sigma", "1"), "--sigma", "unit")
expect_error("two points", with_option(BASE, "--points", "2"), "--points")
expect_error("one section", with_option(BASE, "--sections", "5"), "--sections")
expect_error("section below the bore", with_option(BASE, "--sections", "2,80"), "--sections")
expect_error("negative depth", with_option(BASE, "--sections", "-2,58"), "--sections")
expect_error("both section options", BASE + ["--section-count", "3"], "--section-count")
expect_error("arc", with_option(BASE, "--arc", "400"), "--arc")
expect_error("axis", with_option(BASE, "--axis", "median-line"), "--axis")
expect_error("trials", with_option(BASE, "--trials", "10"), "--trials")
expect_error("target", with_option(BASE, "--target", "0"), "--target")
expect_error("usable reversed", BASE + ["--usable", "58,2"], "--usable")
expect_error("not a number", with_option(BASE, "--diameter", "ten"), "--diameter")
expect_error("nan", with_option(BASE, "--position-tolerance", "nan"), "--position-tolerance")
expect_error("unknown unit", BASE + ["--units", "furlong"], "--units")
expect_error("missing sigma", [a for a in BASE if a not in ("--sigma", "0.001")], "--sigma")

with tempfile.TemporaryDirectory() as tmp:
    target = os.path.join(tmp, "advice.json")
    code, out, err = run(BASE + ["--no-search", "--json", target])
    check("json file: exit code", code == 1, f"{code} {err}")
    with open(target) as f:
        written = f.read()
    check("json file: caution", CAUTION in written)
    expect_error("error keeps file", with_option(BASE, "--sigma", "0") + ["--json", target], "--sigma")
    with open(target) as f:
        check("json file intact", f.read() == written)
    expect_error("json into a missing folder", BASE + ["--json", os.path.join(tmp, "no", "f.json")], "f.json")
    check("no temporary files", sorted(os.listdir(tmp)) == ["advice.json"], os.listdir(tmp))

# --- check --predict-probing: the prediction for the pattern each demo bore was probed with, beside
# the measured figures; off by default (the report is then as before).
ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
PLAN = os.path.join(ROOT, "point-clouds", "valve-manifold", "plan.toml")
code, out, err = run(["check", PLAN, "--json", "-", "--quiet", "--no-sensitivity"])
plain = parsed("check plain", out)
if plain:
    check("check: no prediction by default", all("probing_prediction" not in b for b in plain["bores"]))
code, out, err = run(["check", PLAN, "--json", "-", "--no-sensitivity", "--predict-probing", "0.001",
                      "--threads", "2"])
check("check --predict-probing: exit code as without", code == 1, f"{code} {err[-300:]}")
j = parsed("check --predict-probing", out)
if j:
    for b in j["bores"]:
        p = b.get("probing_prediction")
        if p is None:
            failures.append(f"check --predict-probing: {b['id']} has no prediction")
            continue
        s = b["sampling"]
        check(f"{b['id']}: sections as sampled", len(p["pattern"]["section_heights"]) == len(s["sections"]),
              (p["pattern"], len(s["sections"])))
        check(f"{b['id']}: points as sampled", p["pattern"]["points_per_section"] == s["section_points_median"],
              (p["pattern"], s["section_points_median"]))
        check(f"{b['id']}: heights as sampled",
              all(abs(h - sec["z"]) < 1e-9 for h, sec in zip(p["pattern"]["section_heights"], s["sections"])),
              p["pattern"])
        check(f"{b['id']}: predicted", p["status"] == "predicted" and p["probing_sigma"] == 0.001, p["status"])
        check(f"{b['id']}: tolerance", abs(p["position_uncertainty"]["tolerance"] - b["position"]["tolerance"]) < 1e-12)
check("check --predict-probing: table section", "Probing prediction for the pattern probed" in err
      and CAUTION in err, err[-800:])
# --trials adaptive: the JCGM 101 7.9 procedure of the Monte Carlo study, the trials used reported
# (whole batches of J = 2000), the same in the check's prediction; a fixed count stays as before.
code, out, err = run(with_option(BASE, "--trials", "adaptive") + ["--no-search", "--json", "-", "--quiet"])
j = parsed("advise --trials adaptive", out)
if j:
    c = j["candidate"]
    check("adaptive: inputs say adaptive", j["inputs"]["trials"] == "adaptive", j["inputs"]["trials"])
    check("adaptive: converged in whole batches", c["adaptive"] and c["converged"] and
          c["batches"] >= 2 and c["trials"] == 2000 * c["batches"], (c["trials"], c["batches"]))
code, out, err = run(with_option(BASE, "--trials", "1000") + ["--no-search", "--json", "-", "--quiet"])
j = parsed("advise --trials 1000", out)
if j:
    c = j["candidate"]
    check("fixed: as asked", not c["adaptive"] and c["trials"] == 1000 and c["batches"] == 1, c["trials"])
# The check's prediction takes --predict-trials the same way (a fixed count here: the demo's bores are
# predicted on their mating envelopes, and an adaptive run is minutes on a shared machine).
code, out, err = run(["check", PLAN, "--json", "-", "--no-sensitivity", "--predict-probing", "0.001",
                      "--predict-trials", "300", "--threads", "2"])
j = parsed("check --predict-probing --predict-trials 300", out)
if j:
    for b in j["bores"]:
        p = b.get("probing_prediction") or {}
        check(f"{b['id']}: prediction with the trials asked", p.get("trials") == 300 and
              p.get("adaptive") is False and "uncertainty" not in j, (p.get("trials"), p.get("adaptive")))
expect_error("check --predict-trials 50", ["check", PLAN, "--predict-probing", "0.001", "--predict-trials", "50"],
             "--predict-trials")
expect_error("check --predict-trials alone", ["check", PLAN, "--predict-trials", "adaptive"], "--predict-trials")
expect_error("advise --trials many", with_option(BASE, "--trials", "many"), "--trials")
expect_error("check --predict-probing zero", ["check", PLAN, "--predict-probing", "0"], "--predict-probing")
expect_error("check --predict-probing in um", ["check", PLAN, "--predict-probing", "1"], "--predict-probing")

finish("advise CLI")
