"""`cylzone audit --html FILE` in a real browser (Debian's chromium, headless, no network): the
audit page of the demo's single-plane summary, checked in the DOM chromium builds from it.

References:
  * the audit's own JSON report of the same run (the page must show the same findings and
    figures, in the plan's unit, 4 decimals);
  * the demo's ground truth (point-clouds/valve-manifold/ground-truth.json): P2 leaves its
    zone over the depth while the summary passes it, so its section carries the finding "blind
    to tilt" and the exit marks at the height the JSON gives; the other bores stay inside;
  * SHA-256 (FIPS 180-4, via hashlib) of every input listed on the page.
The page is kept in ARTEFACT_DIR (build/tests/html-report/demo-audit.html) for people to look at.

Usage: /usr/bin/python3 test_audit_html.py PATH_TO_CYLZONE PLAN ARTEFACT_DIR
"""
import hashlib
import json
import os
import re
import shutil
import subprocess
import sys
import tempfile

CLI, PLAN, ARTEFACTS = sys.argv[1], os.path.abspath(sys.argv[2]), sys.argv[3]
SUMMARY = os.path.join(os.path.dirname(PLAN), "summary-single-plane.csv")
failures = []


def check(condition, message):
    if not condition:
        failures.append(message)


def run(*args):
    return subprocess.run([CLI, *args], capture_output=True, text=True)


def chromium(*args):
    """chromium headless, no GPU, no network services, its own profile."""
    with tempfile.TemporaryDirectory() as profile:
        return subprocess.run(
            [BROWSER, "--headless", "--no-sandbox", "--disable-gpu", "--disable-extensions",
             "--no-first-run", "--disable-background-networking", "--disable-sync",
             "--disable-default-apps", "--mute-audio", f"--user-data-dir={profile}",
             "--enable-logging=stderr", "--v=0", *args],
            capture_output=True, text=True, timeout=180)


BROWSER = shutil.which("chromium")
if BROWSER is None:
    print("FAILED: chromium is not installed (the README's test command installs it)")
    sys.exit(1)

os.makedirs(ARTEFACTS, exist_ok=True)
page = os.path.join(ARTEFACTS, "demo-audit.html")
if os.path.exists(page):
    os.remove(page)
with tempfile.TemporaryDirectory() as tmp:
    report = os.path.join(tmp, "audit.json")
    p = run("audit", PLAN, "--summary", SUMMARY, "--json", report, "--html", page, "--quiet",
            "--time", "2026-12-02T12:00:00Z")
    check(p.returncode == 1, f"audit: exit {p.returncode}, expected 1 (P2 overturned); {p.stderr[:300]}")
    check(os.path.isfile(page) and os.path.isfile(report), "the HTML and JSON were not both written")
    audit = json.load(open(report))
    source = open(page, encoding="utf-8").read()
    # '-' and an input are refused: one error line, exit 2, the input untouched.
    q = run("audit", PLAN, "--summary", SUMMARY, "--html", "-")
    check(q.returncode == 2 and q.stderr.startswith("cylzone: error:") and "--html" in q.stderr,
          f"--html -: {q.returncode} {q.stderr[:200]}")
    before = open(SUMMARY, "rb").read()
    q = run("audit", PLAN, "--summary", SUMMARY, "--html", SUMMARY)
    check(q.returncode == 2 and len(q.stderr.strip().splitlines()) == 1, f"--html over the summary: {q.stderr[:200]}")
    check(open(SUMMARY, "rb").read() == before, "the summary was changed")

check(not re.search(r'(src|href)="(https?:)?//', source), "the page fetches something")
check("<script" not in source, "the page holds a script")
dom = chromium("--dump-dom", "file://" + page).stdout
check("<body" in dom, "no DOM dumped")
bores = {b["id"]: b for b in audit["bores"]}
sections = re.findall(r'<section class="audit-bore" id="[^"]*" data-bore="([^"]*)" '
                      r'data-finding="([^"]*)"', dom)
check([s[0] for s in sections] == list(bores), f"sections {sections} vs bores {list(bores)}")
for bore, finding in sections:
    check(finding == bores[bore]["finding"], f"{bore}: finding {finding} vs JSON {bores[bore]['finding']}")
check(dict(sections).get("P2") == "blind to tilt", "P2 is not found blind to tilt")
check(dom.count(audit["caution"]) == 2, "the caution is not at the top and the foot")
# Each bore: one side view with three panels, the summary's centre marked in each panel, the
# exit marks where the JSON says the axis leaves its zone.
for bore, _ in sections:
    text = dom[dom.find(f'data-bore="{bore}"'):]
    text = text[:text.find("</section>")]
    check(text.count('<figure class="side-view"') == 1, f"{bore}: no side view")
    marks = text.count('class="mark"')
    check(marks == 3 * len(bores[bore]["summary"]["centres"]), f"{bore}: {marks} summary marks")
    exits = [float(z) for z in re.findall(r'class="exit" data-z="(-?[0-9.]+)"', text)]
    leaves = bores[bore]["cylzone"]["leaves_zone_at"]
    if leaves is None:
        check(not exits, f"{bore}: stays inside but has exit marks")
    else:
        check(len(exits) == 3 and all(abs(z - leaves) < 1e-4 for z in exits),
              f"{bore}: exit marks {exits}, JSON {leaves}")
check(bores["P2"]["cylzone"]["leaves_zone_at"] is not None, "P2 does not leave its zone")
# The summary's and cylzone's figures at the plane and over the depth, as the JSON gives them
# (the plan's unit, mm: 4 decimals).
for bore, b in bores.items():
    c = b["summary"]["centres"][0]
    compared = next(p for p in c["cylzone"] if p["plane"] == c["compared"])
    rows = re.findall(rf'<tr[^>]*><td>(?:<a [^>]*>)?{re.escape(bore)}(?:</a>)?</td>(.*?)</tr>', dom)
    check(len(rows) == 2, f"{bore}: {len(rows)} table rows, expected 2")
    if len(rows) == 2:
        cells = re.findall(r'<td class="num">([^<]*)</td>', rows[0])
        want = [f"{v:.4f}" for v in (c["dx"], c["dy"], compared["dx"], compared["dy"])]
        for w in want:
            check(w.replace("-0.0000", "0.0000") in cells, f"{bore}: {w} not among {cells}")
        full = b["cylzone"]
        check(f"{full['position']:.4f} / {full['allowed']:.4f}" in rows[1],
              f"{bore}: full-depth position not on the page")
# Inputs with their digests.
for entry in audit["inputs"]:
    digest = hashlib.sha256(open(entry["path"], "rb").read()).hexdigest()
    check(digest in dom, f"input {entry['path']}: digest not on the page")

if failures:
    print("FAILED:\n  " + "\n  ".join(failures))
    sys.exit(1)
print(f"ok: {page}")
