"""`cylzone check PLAN --parts DIR... --out DIR` end to end on a generated batch (docs/batch.md).

The batch is written here with the demo's own generator (point-clouds/valve-manifold/
generate.py: its bore model, probing noise and placement): six parts share the demo's datum
files; every bore is probed anew with its axis deviation from true position drawn at random
(normal, sigma SCATTER_UM per axis at the mouth and at the bottom), and bore P1 carries a known
systematic offset SYSTEMATIC_UM at both ends on top of the scatter. Checked against numpy /
scipy (Debian's /usr/bin/python3):
* the summary's mean deviation vector, standard deviations and mean radial deviation equal
  numpy's from the per-part JSON reports (numpy.mean, numpy.std with ddof=1);
* Hotelling's T² and its p-value equal numpy's T² = n m^T S^-1 m and scipy.stats.f.sf of
  T² (n-2)/(2(n-1)) with (2, n-2) degrees of freedom (Hotelling 1931; Montgomery, Introduction
  to Statistical Quality Control, multivariate charts);
* P1's mean lies within 4 standard errors (sigma/sqrt(n), plus 1 um for fitting noise) of the
  offset the generator put in, and the summary calls it systematic;
* each per-part JSON equals `cylzone check` on that part alone, figure by figure;
* batch.csv: one row per part and characteristic, serials, SHA-256 of the inputs (hashlib);
* a part with a missing file is reported failed, the others evaluated, exit 2;
* progress is silent when stderr is not a terminal; bad --parts arguments are one
  `cylzone: error:` line with exit code 2.

Usage: /usr/bin/python3 test_batch.py PATH_TO_CYLZONE PLAN
"""
import csv
import hashlib
import importlib.util
import json
import math
import os
import shutil
import subprocess
import sys
import tempfile

import numpy as np
from scipy import stats

CLI, PLAN = sys.argv[1], os.path.abspath(sys.argv[2])
DEMO = os.path.dirname(PLAN)
PARTS = 6
SEED = 20261203
SCATTER_UM = 3.0
SYSTEMATIC_UM = np.array([9.0, -6.0])
TIME = "2026-12-03T08:00:00Z"
failures = []


def check(condition, message):
    if not condition:
        failures.append(message)


def run(*args):
    return subprocess.run([CLI, *args], capture_output=True, text=True)


def sha256(path):
    with open(path, "rb") as f:
        return hashlib.sha256(f.read()).hexdigest()


def one_error_line(p, name, *fragments):
    lines = p.stderr.strip().splitlines()
    check(p.returncode == 2, f"{name}: exit {p.returncode}, expected 2")
    check(len(lines) == 1 and lines[0].startswith("cylzone: error:"),
          f"{name}: expected one error line, got {p.stderr[:400]!r}")
    for f in fragments:
        check(f in p.stderr, f"{name}: message lacks {f!r}: {p.stderr[:400]!r}")


spec = importlib.util.spec_from_file_location("demo_generator", os.path.join(DEMO, "generate.py"))
gen = importlib.util.module_from_spec(spec)
spec.loader.exec_module(gen)


def write_part(folder, rng):
    """One part: the demo's datum files, each bore probed anew with a random deviation."""
    points = os.path.join(folder, "points")
    os.makedirs(points)
    for label in "ABC":
        shutil.copy(os.path.join(DEMO, "points", f"datum-{label}.csv"), points)
    truth = {}
    for bore in gen.BORES:
        b = dict(bore)
        systematic = SYSTEMATIC_UM if b["id"] == "P1" else np.zeros(2)
        top = systematic + rng.normal(0.0, SCATTER_UM, 2)
        bottom = systematic + rng.normal(0.0, SCATTER_UM, 2)
        b["dev_top"], b["dev_bottom"] = tuple(top), tuple(bottom)
        pts, normals, _ = gen.probe_bore(b, rng)
        noisy = pts + rng.normal(0, gen.SIGMA, len(pts))[:, None] * normals
        gen.write_csv(os.path.join(points, f"{b['id']}.csv"), *gen.to_measurement(noisy, normals))
        truth[b["id"]] = (top, bottom)
    return truth


with tempfile.TemporaryDirectory() as tmp:
    rng = np.random.default_rng(SEED)
    folders = [os.path.join(tmp, "parts", f"SN-{k + 1:03d}") for k in range(PARTS)]
    for folder in folders:
        write_part(folder, rng)
    # A seventh part lacks a bore's file: reported failed, the others still run.
    broken = os.path.join(tmp, "parts", "SN-BROKEN")
    write_part(broken, rng)
    os.remove(os.path.join(broken, "points", "P4.csv"))
    listing = os.path.join(tmp, "parts.txt")
    with open(listing, "w") as f:
        f.write("# generated batch\n\n" + "".join(f"parts/{os.path.basename(d)}\n" for d in folders))

    out = os.path.join(tmp, "out")
    p = run("check", PLAN, "--parts-list", listing, "--out", out, "--time", TIME, "--threads", "2")
    check(p.returncode in (0, 1, 3), f"batch: exit {p.returncode}; stderr {p.stderr[:500]}")
    # stderr is a pipe here, not a terminal: no progress at all.
    check(p.stderr == "", f"progress or noise on a non-terminal stderr: {p.stderr[:300]!r}")
    check("Caution:" in p.stdout, "summary table lacks the caution")
    summary = json.load(open(os.path.join(out, "batch-summary.json")))
    check(summary["schema"] == "cylzone-batch-1", "summary schema")
    check("Caution" in summary["caution"], "summary caution")
    check(summary["counts"]["evaluated"] == PARTS and summary["counts"]["failed"] == 0, "counts")

    reports = {os.path.basename(d): json.load(open(os.path.join(out, os.path.basename(d) + ".json")))
               for d in folders}
    for serial, r in reports.items():
        check(r["part"]["serial"] == serial, f"{serial}: serial {r['part']['serial']}")
        check(r["part"]["timestamp"] == TIME, f"{serial}: timestamp")
        for entry in r["inputs"]:  # FIPS 180-4 via hashlib
            check(entry["sha256"] == sha256(entry["path"]), f"{serial}: sha256 of {entry['path']}")

    # ---- mean, spread and Hotelling's T² against numpy / scipy, from the per-part JSON.
    spreads = {b["bore"]: b for b in summary["positions"]["bores"]}
    check(set(spreads) == {b["id"] for b in gen.BORES}, f"position bores {sorted(spreads)}")
    for bore in gen.BORES:
        for end in ("top", "bottom"):
            d = np.array([[next(b for b in r["bores"] if b["id"] == bore["id"])["position"][end][k]
                           for k in ("dx", "dy")] for r in reports.values()])
            s = spreads[bore["id"]][end]
            n = len(d)
            mean, sd = d.mean(axis=0), d.std(axis=0, ddof=1)
            check(s["count"] == n, f"{bore['id']} {end}: count")
            check(np.allclose([s["mean"]["dx"], s["mean"]["dy"]], mean, rtol=0, atol=1e-12),
                  f"{bore['id']} {end}: mean {s['mean']} vs numpy {mean}")
            check(np.allclose([s["standard_deviation"]["dx"], s["standard_deviation"]["dy"]], sd,
                              rtol=0, atol=1e-12), f"{bore['id']} {end}: sd vs numpy {sd}")
            check(abs(s["mean_radial"] - np.linalg.norm(d, axis=1).mean()) < 1e-12,
                  f"{bore['id']} {end}: mean radial")
            t2 = n * mean @ np.linalg.solve(np.cov(d.T, ddof=1), mean)
            p_value = stats.f.sf(t2 * (n - 2) / (2 * (n - 1)), 2, n - 2)
            check(s["t_squared"] is not None and math.isclose(s["t_squared"], t2, rel_tol=1e-9),
                  f"{bore['id']} {end}: T² {s['t_squared']} vs numpy {t2}")
            check(s["p_value"] is not None and math.isclose(s["p_value"], p_value, rel_tol=1e-9),
                  f"{bore['id']} {end}: p {s['p_value']} vs scipy {p_value}")
            check(s["systematic"] == (p_value < 0.05), f"{bore['id']} {end}: finding")
            if bore["id"] == "P1":
                # The generator's offset, within 4 standard errors and 1 um of fitting noise.
                tolerance = (4 * SCATTER_UM / math.sqrt(n) + 1.0) * 1e-3
                check(np.all(np.abs(mean - SYSTEMATIC_UM * 1e-3) < tolerance),
                      f"P1 {end}: mean {mean} far from the offset {SYSTEMATIC_UM * 1e-3}")
                check(s["systematic"], f"P1 {end}: systematic offset not found ({s['note']})")

    # ---- the thread count changes no byte of any output (same --time).
    serial_out = os.path.join(tmp, "out-serial")
    p = run("check", PLAN, "--parts-list", listing, "--out", serial_out, "--time", TIME,
            "--threads", "1", "--quiet")
    for name in ["batch.csv", "batch-summary.json"] + [s + ".json" for s in reports]:
        check(open(os.path.join(out, name), "rb").read() == open(os.path.join(serial_out, name), "rb").read(),
              f"{name} differs between --threads 2 and --threads 1")
    check(p.stdout == "", "--quiet printed the summary")

    # ---- tallies: counts per characteristic equal the per-part reports' verdicts.
    for t in summary["characteristics"]:
        verdicts = [next(c for c in r["characteristics"] if c["id"] == t["id"])["verdict"]
                    for r in reports.values()]
        check((t["conforming"], t["not_conforming"], t["not_proven"]) ==
              (verdicts.count("conforms"), verdicts.count("does not conform"),
               verdicts.count("not proven")), f"{t['id']}: tally")

    # ---- batch.csv: one row per part and characteristic, serial and input hashes.
    rows = list(csv.DictReader(open(os.path.join(out, "batch.csv"))))
    expected = sum(len(r["characteristics"]) for r in reports.values())
    check(len(rows) == expected, f"batch.csv: {len(rows)} rows, expected {expected}")
    for row in rows:
        r = reports.get(row["serial"])
        check(r is not None, f"batch.csv: unknown serial {row['serial']}")
        if r is None:
            continue
        check(row["plan_sha256"] == sha256(PLAN), "batch.csv: plan digest")
        bore_input = next(e for e in r["inputs"] if e["role"] == "bore " + row["bore"])
        check(row["points_sha256"] == sha256(bore_input["path"]), "batch.csv: points digest")
        check(f"bore {row['bore']}={bore_input['sha256']}" in row["inputs_sha256"], "inputs digests")
        check("Caution" in row["caution"], "batch.csv: caution")
        check(row["timestamp"] == TIME, "batch.csv: timestamp")
    # The per-part CSV rows are the batch's rows of that part (one renderer).
    for serial in reports:
        own = list(csv.DictReader(open(os.path.join(out, serial + ".csv"))))
        mine = [{k: v for k, v in row.items() if k in own[0]} for row in rows if row["serial"] == serial]
        check(own == mine, f"{serial}: batch.csv rows differ from {serial}.csv")

    # ---- each part alone: `cylzone check` on a copy of the plan in the part's folder.
    for folder in folders[:2]:
        serial = os.path.basename(folder)
        alone_plan = os.path.join(folder, "plan.toml")
        shutil.copy(PLAN, alone_plan)
        alone = os.path.join(tmp, serial + "-alone.json")
        q = run("check", alone_plan, "--json", alone, "--serial", serial, "--time", TIME, "--quiet")
        check(q.returncode in (0, 1, 3), f"{serial} alone: exit {q.returncode} {q.stderr[:300]}")
        a, b = json.load(open(alone)), reports[serial]
        # The plan is read from another path (same bytes, same digest); all else is equal.
        check(a["inputs"][0]["sha256"] == b["inputs"][0]["sha256"], f"{serial}: plan digest")
        for j in (a, b):
            j["inputs"][0].pop("path")
            j["plan"].pop("file")
        check(a == b, f"{serial}: the batch's report differs from the part checked alone")
        os.remove(alone_plan)

    # ---- a failed part: reported, the others evaluated, exit 2; --html per part as a flag.
    out2 = os.path.join(tmp, "out2")
    p = run("check", PLAN, "--parts", folders[0], broken, folders[1], "--out", out2, "--html",
            "--time", TIME)
    check(p.returncode == 2, f"failed part: exit {p.returncode}, expected 2")
    check("SN-BROKEN" in p.stderr and "P4.csv" in p.stderr and p.stderr.startswith("cylzone: error:"),
          f"failed part: stderr {p.stderr[:300]!r}")
    s2 = json.load(open(os.path.join(out2, "batch-summary.json")))
    failed = [x for x in s2["parts"] if x["status"] == "failed"]
    check(len(failed) == 1 and failed[0]["serial"] == "SN-BROKEN" and "P4.csv" in failed[0]["reason"],
          f"failed part in the summary: {failed}")
    check(s2["counts"]["evaluated"] == 2, "failed part: the others are evaluated")
    check(not os.path.exists(os.path.join(out2, "SN-BROKEN.json")), "a failed part has no report")
    for folder in (folders[0], folders[1]):
        html = os.path.join(out2, os.path.basename(folder) + ".html")
        check(os.path.isfile(html) and "Caution" in open(html).read(), f"no HTML report {html}")
    rows2 = list(csv.DictReader(open(os.path.join(out2, "batch.csv"))))
    broken_rows = [r for r in rows2 if r["serial"] == "SN-BROKEN"]
    check(len(broken_rows) == 1 and broken_rows[0]["part_verdict"] == "failed"
          and "P4.csv" in broken_rows[0]["reason"] and "Caution" in broken_rows[0]["caution"],
          f"batch.csv row of the failed part: {broken_rows}")

    # ---- bad arguments: one error line, exit 2, nothing written.
    one_error_line(run("check", PLAN, "--parts", os.path.join(tmp, "nowhere"), "--out", out),
                   "missing folder", "nowhere", "does not exist")
    one_error_line(run("check", PLAN, "--parts", folders[0]), "no --out", "--out")
    one_error_line(run("check", PLAN, "--parts", folders[0], os.path.join(tmp, "parts", "..", "parts",
                                                                          "SN-001"), "--out", out),
                   "duplicate serial", "SN-001")
    one_error_line(run("check", PLAN, "--parts", folders[0], "--out", out, "--json", "x.json"),
                   "--json in a batch", "--json")
    one_error_line(run("check", PLAN, "--parts", listing, "--out", out), "a file as a part",
                   "parts.txt", "not a folder")
    empty_list = os.path.join(tmp, "empty.txt")
    open(empty_list, "w").write("# nothing\n")
    one_error_line(run("check", PLAN, "--parts-list", empty_list, "--out", out), "empty list",
                   "empty.txt", "no folder")
    one_error_line(run("check", PLAN, "--out", out), "--out without --parts", "--out")
    one_error_line(run("check", PLAN, "--parts", folders[0], "--out", out, "--html", "x.html"),
                   "--html FILE in a batch", "--html")
    one_error_line(run("check", PLAN, "--parts", folders[0], "--out", out, "--serial", "S"),
                   "--serial in a batch", "--serial")
    one_error_line(run("check", PLAN, "--parts", folders[0], "--out", os.path.join(tmp, "no", "out")),
                   "--out's parent missing", "out")
    # A report never overwrites an input: a part folder named "P1" with --out its points folder
    # would write P1.csv over the bore's point file. Refused before anything is evaluated.
    p1 = os.path.join(tmp, "parts", "P1")
    shutil.copytree(folders[0], p1)
    before = sha256(os.path.join(p1, "points", "P1.csv"))
    one_error_line(run("check", PLAN, "--parts", p1, "--out", os.path.join(p1, "points")),
                   "report over an input", "P1.csv")
    check(sha256(os.path.join(p1, "points", "P1.csv")) == before, "an input was overwritten")

if failures:
    print("FAILED:\n  " + "\n  ".join(failures))
    sys.exit(1)
print("ok")
