"""`cylzone check --html`: the demo's HTML report rendered by a real browser.

Renders the report with Debian's chromium, headless and without network, then checks
* the screenshot: a PNG (ISO/IEC 15948:2004) of the window's size that is not blank, decoded
  here with zlib alone (no imaging library): chunks, IDAT inflated, scanline filters undone;
* the DOM chromium built (--dump-dom): one figure set per bore of the JSON report of the same
  run, in order, each with its three figures; the safety caution; no script element and no
  script error on the console; P2's exit mark at the height the JSON gives;
* with --uncertainty, --decision-rule iso-14253-1 and --predict-probing: the study's section,
  the rule beside the verdict, each row's limits and one prediction table per bore, as the JSON
  of the same run gives them, and no script error;
* printing: on Letter and on A4 every bore's section takes one page of its own;
* the command line: the HTML is committed with the other reports as one set, '-' and an input
  file are refused with one error line and exit code 2.

The screenshot and the report are kept in ARTEFACT_DIR (DEVELOPERS.md says where). chromium
missing is a failure, not a skip: the README's test command installs it.

Usage: /usr/bin/python3 test_html_report.py PATH_TO_CYLZONE PLAN ARTEFACT_DIR
"""
import csv
import json
import os
import re
import shutil
import struct
import subprocess
import sys
import tempfile
import zlib

CLI, PLAN, ARTEFACTS = sys.argv[1], os.path.abspath(sys.argv[2]), os.path.abspath(sys.argv[3])
WIDTH, HEIGHT = 1280, 2000
failures = []


def check(condition, message):
    if not condition:
        failures.append(message)


def run(*args):
    return subprocess.run([CLI, *args], capture_output=True, text=True, timeout=300)


def refused(name, p, *fragments):
    lines = [l for l in p.stderr.splitlines() if l.strip()]
    check(p.returncode == 2, f"{name}: exit {p.returncode}, expected 2")
    check(len(lines) == 1 and lines[0].startswith("cylzone: error:"),
          f"{name}: expected one error line, got {p.stderr[:300]!r}")
    for f in fragments:
        check(f in p.stderr, f"{name}: stderr lacks {f!r}: {p.stderr.strip()[:300]}")


def png_pixels(data):
    """(width, height, channels, rows) of an 8-bit RGB or RGBA PNG, rows with filters undone
    (ISO/IEC 15948:2004 clause 9: filter types 0-4, Paeth predictor)."""
    if data[:8] != b"\x89PNG\r\n\x1a\n":
        raise ValueError("not a PNG signature")
    pos, idat, header = 8, [], None
    while pos < len(data):
        length, kind = struct.unpack(">I4s", data[pos:pos + 8])
        body = data[pos + 8:pos + 8 + length]
        if zlib.crc32(kind + body) != struct.unpack(">I", data[pos + 8 + length:pos + 12 + length])[0]:
            raise ValueError(f"bad CRC in chunk {kind!r}")
        if kind == b"IHDR":
            header = struct.unpack(">IIBBBBB", body)
        elif kind == b"IDAT":
            idat.append(body)
        elif kind == b"IEND":
            break
        pos += 12 + length
    width, height, depth, colour, _, _, interlace = header
    if depth != 8 or colour not in (2, 6) or interlace != 0:
        raise ValueError(f"unexpected PNG format: depth {depth}, colour type {colour}, interlace {interlace}")
    channels = 3 if colour == 2 else 4
    raw = zlib.decompress(b"".join(idat))
    stride = width * channels
    if len(raw) != height * (stride + 1):
        raise ValueError("IDAT size does not match the header")
    rows, previous = [], bytearray(stride)
    for y in range(height):
        kind = raw[y * (stride + 1)]
        line = bytearray(raw[y * (stride + 1) + 1:(y + 1) * (stride + 1)])
        if kind == 1:
            for i in range(channels, stride):
                line[i] = (line[i] + line[i - channels]) & 0xFF
        elif kind == 2:
            line = bytearray((a + b) & 0xFF for a, b in zip(line, previous))
        elif kind == 3:
            for i in range(stride):
                left = line[i - channels] if i >= channels else 0
                line[i] = (line[i] + ((left + previous[i]) >> 1)) & 0xFF
        elif kind == 4:
            for i in range(stride):
                a = line[i - channels] if i >= channels else 0
                b = previous[i]
                c = previous[i - channels] if i >= channels else 0
                p = a + b - c
                pa, pb, pc = abs(p - a), abs(p - b), abs(p - c)
                predictor = a if pa <= pb and pa <= pc else (b if pb <= pc else c)
                line[i] = (line[i] + predictor) & 0xFF
        elif kind != 0:
            raise ValueError(f"unknown filter type {kind} in row {y}")
        rows.append(bytes(line))
        previous = line
    return width, height, channels, rows


def chromium(*args):
    """chromium headless, no GPU, no network services, its own profile; (stdout, stderr)."""
    with tempfile.TemporaryDirectory() as profile:
        p = subprocess.run(
            [BROWSER, "--headless", "--no-sandbox", "--disable-gpu", "--disable-extensions",
             "--no-first-run", "--disable-background-networking", "--disable-sync",
             "--metrics-recording-only", "--disable-default-apps", "--mute-audio",
             "--hide-scrollbars", f"--user-data-dir={profile}", "--enable-logging=stderr",
             "--v=0", *args],
            capture_output=True, text=True, timeout=180)
    return p


BROWSER = shutil.which("chromium")
if BROWSER is None:
    print("FAILED: chromium is not installed; the README's test command installs it "
          "(apt-get install chromium)")
    sys.exit(1)

os.makedirs(ARTEFACTS, exist_ok=True)
html = os.path.join(ARTEFACTS, "demo-report.html")
screenshot = os.path.join(ARTEFACTS, "demo-report.png")
for old in (html, screenshot):
    if os.path.exists(old):
        os.remove(old)

with tempfile.TemporaryDirectory() as tmp:
    report = os.path.join(tmp, "report.json")
    p = run("check", PLAN, "--json", report, "--html", html, "--time", "2026-01-01T00:00:00Z")
    check(p.returncode == 1, f"demo check: exit {p.returncode}, expected 1; {p.stderr[:300]}")
    check(os.path.isfile(html) and os.path.isfile(report), "the HTML and JSON were not both written")
    with open(report, encoding="utf-8") as f:
        model = json.load(f)
    with open(html, encoding="utf-8") as f:
        source = f.read()
    bores = [b["id"] for b in model["bores"]]
    check(len(bores) == 7, f"the demo has 7 bores, the JSON lists {len(bores)}")
    check(len(source.encode()) < 1_000_000, f"the report is {len(source.encode())} bytes")

    # '-' is refused (a file only); so is an input file, which stays untouched.
    refused("--html -", run("check", PLAN, "--html", "-"), "--html")
    with open(PLAN, "rb") as f:
        plan_bytes = f.read()
    refused("--html over the plan", run("check", PLAN, "--html", PLAN), "over an input file")
    with open(PLAN, "rb") as f:
        check(f.read() == plan_bytes, "the plan was changed")
    # A set: with a bad second target nothing is written, not even the HTML.
    lonely = os.path.join(tmp, "lonely.html")
    refused("set", run("check", PLAN, "--html", lonely, "--json", os.path.join(tmp, "no", "x.json")))
    check(not os.path.exists(lonely), "the HTML was written although the set was refused")

# ---- The screenshot: the window's size, not blank.
url = "file://" + html
p = chromium(f"--screenshot={screenshot}", f"--window-size={WIDTH},{HEIGHT}", url)
check(os.path.isfile(screenshot), f"no screenshot; chromium said: {p.stderr[-500:]}")
if os.path.isfile(screenshot):
    with open(screenshot, "rb") as f:
        width, height, channels, rows = png_pixels(f.read())
    check((width, height) == (WIDTH, HEIGHT), f"screenshot is {width}x{height}, expected {WIDTH}x{HEIGHT}")
    distinct, dark = set(), 0
    for row in rows[::4]:
        for x in range(0, len(row), channels * 2):
            pixel = row[x:x + 3]
            distinct.add(pixel)
            dark += sum(pixel) < 3 * 128
    sampled = len(rows[::4]) * ((width + 1) // 2)
    # Text, tables and the zone figures: many grey levels and a few per cent of dark pixels.
    check(len(distinct) > 50, f"screenshot looks blank: {len(distinct)} distinct colours")
    check(0.005 < dark / sampled < 0.5, f"dark pixel share {dark / sampled:.4f} is implausible")

# ---- The DOM chromium built from it.
p = chromium("--dump-dom", url)
dom = p.stdout
check("<body" in dom, f"no DOM dumped; chromium said: {p.stderr[-500:]}")
sets = re.findall(r'<div class="figure-set" data-bore="([^"]*)">', dom)
check(sets == bores, f"figure sets {sets} do not match the bores {bores}")
for kind in ("top-view", "side-view", "surface-map"):
    n = len(re.findall(rf'<figure class="{kind}"', dom))
    check(n == len(bores), f"{n} {kind} figures for {len(bores)} bores")
check(len(re.findall(r"<svg", dom)) == 3 * len(bores), "not three SVG figures per bore")
check(dom.count(model["caution"]) == 2, "the caution is not at the top and the foot of the report")
check("<script" not in dom, "the DOM holds a script element")
console = [l for l in p.stderr.splitlines() if "CONSOLE" in l or "Uncaught" in l]
check(not console, f"console messages: {console[:3]}")
# P2 leaves its zone at the height the JSON gives, marked in its top view and its three panels.
p2 = next(b for b in model["bores"] if b["id"] == "P2")
exit_z = p2["depth_profile"]["leaves_zone_at"]
section = dom[dom.find('data-bore="P2"'):]
section = section[:section.find("</section>")]
marks = [float(z) for z in re.findall(r'class="exit" data-z="(-?[0-9.]+)"', section)]
check(len(marks) == 4, f"P2: {len(marks)} exit marks, expected 4 (top view and three panels)")
check(all(abs(z - exit_z) < 1e-4 for z in marks), f"P2 exit marks at {marks}, JSON {exit_z}")
# Bores that stay inside have no exit mark.
p1 = dom[dom.find('data-bore="P1"'):]
check('class="exit"' not in p1[:p1.find("</section>")], "P1 stays inside but has an exit mark")

# ---- With a Monte Carlo study, the ISO 14253-1 rule and the probing prediction: the study's
# section, the rule beside the verdict with each row's limits, one prediction table per bore
# predicted, every figure as the JSON of the same run gives it (the report's own numbers,
# formatted as docs/html-report.md says: lengths to 4 decimals in mm, u and intervals to 6).
studied_html = os.path.join(ARTEFACTS, "demo-study-report.html")
if os.path.exists(studied_html):
    os.remove(studied_html)
with tempfile.TemporaryDirectory() as tmp:
    report = os.path.join(tmp, "report.json")
    table = os.path.join(tmp, "report.csv")
    p = run("check", PLAN, "--uncertainty", "--trials", "12", "--decision-rule", "iso-14253-1",
            "--predict-probing", "0.001", "--json", report, "--csv", table, "--html",
            studied_html, "--time", "2026-01-01T00:00:00Z")
    check(p.returncode in (1, 3), f"studied check: exit {p.returncode}; {p.stderr[:300]}")
    with open(report, encoding="utf-8") as f:
        studied = json.load(f)
    # The CSV: the prediction's columns last, after the study's, each row's from its bore's
    # prediction in the JSON of the same run (docs/report-schema.md).
    with open(table, encoding="utf-8", newline="") as f:
        rows = list(csv.DictReader(f))
    with open(table, encoding="utf-8", newline="") as f:
        header = next(csv.reader(f))
    check(header[-13:-10] == ["u", "interval_low", "interval_high"] and
          header[-10] == "prediction_status" and header[-1] == "prediction_meets_target",
          f"CSV: the prediction's columns are not last: {header[-13:]}")
    by_bore = {b["id"]: b.get("probing_prediction") for b in studied["bores"]}
    for r in rows:
        pp = by_bore.get(r["bore"])
        if not pp or pp["status"] != "predicted":
            continue
        u = pp["position_uncertainty"]
        got = (r["prediction_sections"], r["prediction_points_per_section"],
               r["prediction_position_expanded"], r["prediction_position_share"])
        want = (str(len(pp["pattern"]["section_heights"])),
                str(pp["pattern"]["points_per_section"]), f"{u['expanded']:.4f}",
                f"{100 * u['share']:.1f}")
        check(got == want, f"CSV {r['id']}: prediction {got}, JSON {want}")
p = chromium("--dump-dom", "file://" + studied_html)
dom = p.stdout
check("<body" in dom, f"studied report: no DOM dumped; chromium said: {p.stderr[-500:]}")
console = [l for l in p.stderr.splitlines() if "CONSOLE" in l or "Uncaught" in l]
check(not console, f"studied report: console messages: {console[:3]}")
check("<script" not in dom, "studied report: the DOM holds a script element")
check(dom.count(studied["caution"]) == 2, "studied report: the caution is not at top and foot")
study = studied.get("uncertainty") or {}
sections = re.findall(r'<section id="uncertainty" data-trials="(\d+)" data-seed="(\d+)">', dom)
check(sections == [(str(study.get("trials")), str(study.get("seed")))],
      f"study sections {sections}, JSON trials {study.get('trials')} seed {study.get('seed')}")
block = dom[dom.find('<section id="uncertainty"'):]
block = block[:block.find("</section>")]
for cid, c in (study.get("characteristics") or {}).items():
    row = re.search(r'<tr data-id="' + re.escape(cid) + r'">(.*?)</tr>', block)
    check(row is not None, f"study: no row for {cid}")
    if row is None or c["u"] is None:
        continue
    cells = re.findall(r"<td[^>]*>(.*?)</td>", row.group(1))
    check(cells[1] == f"{c['value']:.4f}", f"study {cid}: value {cells[1]}, JSON {c['value']}")
    check(cells[2] == f"{c['u']:.6f}", f"study {cid}: u {cells[2]}, JSON {c['u']}")
    low, high = c["interval"]
    check(cells[4] == f"[{low:.6f}, {high:.6f}]", f"study {cid}: interval {cells[4]}")
    check(cells[5] == c["kind"], f"study {cid}: kind {cells[5]}, JSON {c['kind']}")
check('<p class="decision-rule">Decision rule in force: <strong>ISO 14253-1' in dom,
      "studied report: the rule in force is not stated beside the verdict")
# Each row decided by ISO 14253-1 shows its acceptance and rejection limits (JSON's, rounded).
for c in studied["characteristics"]:
    if c["rule"] != "ISO 14253-1":
        continue
    at_most = c["comparison"] == "<="
    text = (f"accept {'&lt;=' if at_most else '&gt;='} {c['acceptance_limit']:.4f}, "
            f"reject {'&gt;' if at_most else '&lt;'} {c['rejection_limit']:.4f}")
    check(text in dom, f"{c['id']}: limits {text!r} not in the characteristic table")
predicted = [b["id"] for b in studied["bores"] if b.get("probing_prediction")]
check(len(predicted) == len(bores), f"predictions for {predicted}, bores {bores}")
tables = re.findall(r'<table class="prediction" data-bore="([^"]*)">', dom)
check(tables == predicted, f"prediction tables {tables}, JSON predictions {predicted}")
for b in studied["bores"]:
    pp = b.get("probing_prediction")
    if not pp or pp["status"] != "predicted":
        continue
    t = dom[dom.find(f'<table class="prediction" data-bore="{b["id"]}">'):]
    t = t[:t.find("</table>")]
    u = pp["position_uncertainty"]
    cell = f'<td class="num">{u["expanded"]:.4f}</td><td class="num">{100 * u["share"]:.1f}</td>'
    check(cell in t, f"{b['id']}: prediction's position U and share {cell!r} not in its table")

# ---- Print: every bore's section starts a page and fits on it, on Letter and on A4. The
# document as written leaves the paper to the printer (@page without a size); a copy with the
# size set stands for each paper. Pages are counted as the PDF's page objects (ISO 32000-1,
# 7.7.3.3: /Type /Page).
with tempfile.TemporaryDirectory() as tmp:
    for paper in ("letter", "A4"):
        copy = os.path.join(tmp, f"report-{paper}.html")
        pdf = os.path.join(tmp, f"report-{paper}.pdf")
        printed = source.replace("@page{", f"@page{{size:{paper};", 1)
        check(printed != source, "no @page rule in the report")
        with open(copy, "w", encoding="utf-8") as f:
            f.write(printed)
        chromium("--no-pdf-header-footer", f"--print-to-pdf={pdf}", "file://" + copy)
        if not os.path.isfile(pdf):
            failures.append(f"{paper}: no PDF printed")
            continue
        with open(pdf, "rb") as f:
            pages = len(re.findall(rb"/Type\s*/Page(?![s\w])", f.read()))
        # A first page (header, summary, datums), one page per bore, one or two for the rest.
        check(len(bores) + 1 < pages <= len(bores) + 3,
              f"{paper}: {pages} printed pages for {len(bores)} bores: a bore's section does not "
              "fit on one page")

if failures:
    print("FAILED:\n" + "\n".join(failures))
    sys.exit(1)
print(f"ok: screenshot {screenshot}, report {html}")
