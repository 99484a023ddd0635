"""Raw probe points end to end: the demo part re-written as stylus-ball centres gives the figures
of its surface points, and spikes and double hits injected into a bore are removed by the
outlier stages, listed with their file lines, and the figures return to the clean ones.

External reference: the demo's geometry. generate.py writes each point with its true unit
normal out of the material (the probe vector), so the ball centre of a tip of radius r is
p + r n exactly (the ball-centre relation, common practice); the figures of the surface points
are the reference for the figures of the compensated ball centres.

Usage: /usr/bin/python3 test_raw_points.py PATH_TO_CYLZONE PLAN
"""
import csv
import json
import os
import shutil
import subprocess
import sys
import tempfile

CLI, PLAN = sys.argv[1], os.path.abspath(sys.argv[2])
DEMO = os.path.dirname(PLAN)
TIP = 2.0  # mm: the demo plan's tip diameter
failures = []


def check(condition, message):
    if not condition:
        failures.append(message)


REPORTS = tempfile.mkdtemp(prefix="cylzone-raw-points-")  # never beside the demo's own plan


def run(plan, *args):
    out = os.path.join(REPORTS, "report.json")
    p = subprocess.run([CLI, "check", plan, "--json", out, "--time", "2026-01-01T00:00:00Z", *args],
                       capture_output=True, text=True)
    check(p.returncode in (0, 1), f"{plan} {args}: exit {p.returncode}: {p.stderr.strip()}")
    with open(out) as f:
        return json.load(f), p


def figures(report):
    return {c["id"]: c["value"] for c in report["characteristics"]}


def copy_demo(tmp, name):
    folder = os.path.join(tmp, name)
    shutil.copytree(DEMO, folder, ignore=shutil.ignore_patterns("*.py", "*.json", "*.md"))
    return folder


def rewrite(folder, transform, with_vectors=True):
    """Rewrites every point file of `folder` through transform(x, y, z, i, j, k) -> (x, y, z)."""
    points = os.path.join(folder, "points")
    for name in os.listdir(points):
        path = os.path.join(points, name)
        with open(path) as f:
            rows = list(csv.DictReader(f))
        with open(path, "w") as f:
            f.write("x,y,z,i,j,k\n" if with_vectors else "x,y,z\n")
            for r in rows:
                p = [float(r[k]) for k in "xyz"]
                n = [float(r[k]) for k in "ijk"]
                x, y, z = transform(p, n)
                f.write(f"{x:.9f},{y:.9f},{z:.9f}" +
                        (f",{n[0]:.7f},{n[1]:.7f},{n[2]:.7f}\n" if with_vectors else "\n"))


def set_probe(folder, text):
    plan = os.path.join(folder, "plan.toml")
    with open(plan) as f:
        body = f.read()
    body = body.replace('[probe]\npoints = "surface"\ntip_diameter = 2.0\n', "[probe]\n" + text)
    with open(plan, "w") as f:
        f.write(body)
    return plan


def ball_centre(p, n):
    return [p[k] + 0.5 * TIP * n[k] for k in range(3)]


with tempfile.TemporaryDirectory() as tmp:
    surface, _ = run(PLAN)
    reference = figures(surface)

    # ---- 1. Ball centres with the probe vectors: compensation along each vector is exact up to
    # the 1e-9 mm the centres are written with; the figures agree to 1e-6 mm (the table's
    # 4 decimals are far coarser).
    folder = copy_demo(tmp, "centres-vectors")
    rewrite(folder, ball_centre)
    plan = set_probe(folder, 'points = "ball-centre"\ntip_diameter = 2.0\n')
    report, p = run(plan)
    got = figures(report)
    check(got.keys() == reference.keys(), "ball centres with vectors: other characteristics")
    worst = max(abs(got[k] - reference[k]) for k in reference)
    check(worst < 1e-6, f"ball centres with vectors: figures differ by up to {worst:.3g} mm")
    check(report["verdict"] == surface["verdict"], "ball centres with vectors: verdict changed")
    prep = {e["role"]: e for e in report["preparation"]}
    check(all(e["compensation"]["mode"] == "along-vectors" for e in prep.values()),
          "ball centres with vectors: not every feature compensated along its vectors")
    check(all(not e["compensation"]["vectors_reversed"] for e in prep.values()),
          "ball centres with vectors: vectors reported reversed")
    check("Preparation of the points" in p.stdout, "table lacks the preparation notes")
    print(f"ball centres with vectors: largest figure difference {worst:.3g} mm")

    # ---- 2. The same without vectors: compensation along the fitted element's normal. The
    # true normals of the lobed, tapered, bell-mouthed bores are off the fitted radial direction
    # by at most a few 1e-4 rad, so the points move by the cosine error r(1 - cos t) < 1e-7 mm
    # and r sin t < 1 um along the surface, where it barely changes a distance to the element:
    # figures agree to 1e-5 mm, far inside the 0.5 um probing noise (measured: about 2e-6 mm).
    folder = copy_demo(tmp, "centres-plain")
    rewrite(folder, ball_centre, with_vectors=False)
    plan = set_probe(folder, 'points = "ball-centre"\ntip_diameter = 2.0\n')
    report, _ = run(plan)
    got = figures(report)
    worst = max(abs(got[k] - reference[k]) for k in reference)
    check(worst < 1e-5, f"ball centres without vectors: figures differ by up to {worst:.3g} mm")
    check(report["verdict"] == surface["verdict"], "ball centres without vectors: verdict changed")
    check(all(e["compensation"]["mode"] == "along-fitted-normal" for e in report["preparation"]),
          "ball centres without vectors: not compensated along the fitted normal")
    print(f"ball centres without vectors: largest figure difference {worst:.3g} mm")

    # ---- 3. Vectors written in the approach sense (into the material): detected and reversed.
    folder = copy_demo(tmp, "centres-approach")
    rewrite(folder, lambda p, n: ball_centre(p, n))
    for name in os.listdir(os.path.join(folder, "points")):
        path = os.path.join(folder, "points", name)
        rows = open(path).read().splitlines()
        out = [rows[0]]
        for line in rows[1:]:
            v = line.split(",")
            out.append(",".join(v[:3] + [f"{-float(c):.7f}" for c in v[3:]]))
        open(path, "w").write("\n".join(out) + "\n")
    plan = set_probe(folder, 'points = "ball-centre"\ntip_diameter = 2.0\n')
    report, _ = run(plan)
    worst = max(abs(figures(report)[k] - reference[k]) for k in reference)
    check(worst < 1e-6, f"approach-sense vectors: figures differ by up to {worst:.3g} mm")
    check(all(e["compensation"]["vectors_reversed"] for e in report["preparation"]),
          "approach-sense vectors not reported reversed")
    check(any("approach sense" in w for b in report["bores"] for w in b["warnings"]),
          "approach-sense vectors: no warning on the bores")

    # ---- 4. Spikes and a double hit in bore P1: removed, listed by file line, figures back.
    folder = copy_demo(tmp, "spikes")
    path = os.path.join(folder, "points", "P1.csv")
    rows = open(path).read().splitlines()
    header, data = rows[0], rows[1:]

    def moved(line, size):
        v = [float(c) for c in line.split(",")]
        # Along the point's vector (out of the material, toward the axis): into the hole.
        return ",".join(f"{v[k] + size * v[k + 3]:.6f}" for k in range(3)) + "," + \
            ",".join(line.split(",")[3:])

    spike_line = 12                     # file line of data row 11 (the header is line 1)
    data[spike_line - 2] = moved(data[spike_line - 2], 0.030)
    data.append(moved(data[40], 0.020))  # a second trigger at the spot of file line 42
    double_line = len(data) + 1
    open(path, "w").write("\n".join([header] + data) + "\n")
    spiked, _ = run(os.path.join(folder, "plan.toml"))
    check(figures(spiked)["P1/size/lower"] < reference["P1/size/lower"] - 0.010,
          "the injected spike does not move P1's mating size: the test proves nothing")
    report, _ = run(os.path.join(folder, "plan.toml"), "--neighbour-filter", "on",
                    "--residual-rejection", "on")
    p1 = next(e for e in report["preparation"] if e["role"] == "bore P1")
    lines = sorted(r["line"] for s in ("neighbour_filter", "residual_rejection")
                   for r in p1[s]["removed"])
    check(lines == [spike_line, double_line], f"P1 removed lines {lines}, expected "
                                              f"{[spike_line, double_line]}")
    check(p1["removed_count"] == 2, f"P1 removed_count {p1['removed_count']}")
    check(all(r["envelope_contact"] for s in ("neighbour_filter", "residual_rejection")
              for r in p1[s]["removed"]), "removed points inside the hole not marked as contacts")
    others = [e for e in report["preparation"] if e["role"] != "bore P1"]
    check(all(e["removed_count"] == 0 for e in others), "clean features lost points")
    got = figures(report)
    worst = max(abs(got[k] - reference[k]) for k in reference if k.startswith("P1/"))
    # One genuine point (the spiked one) is gone: the figures move by a fraction of the noise.
    check(worst < 0.5e-3, f"P1 after rejection differs from the clean part by {worst:.3g} mm")
    check(all(abs(got[k] - reference[k]) == 0.0 for k in reference if not k.startswith("P1/")),
          "bores without outliers changed")
    print(f"spikes: removed lines {lines}; P1 within {worst:.3g} mm of the clean figures")
    csv_path = os.path.join(folder, "rows.csv")
    subprocess.run([CLI, "check", os.path.join(folder, "plan.toml"), "--csv", csv_path, "--quiet",
                    "--neighbour-filter", "on", "--residual-rejection", "on"], capture_output=True)
    rows = list(csv.DictReader(open(csv_path)))
    check(all(r["outliers_removed"] == ("2" if r["bore"] == "P1" else "0") for r in rows),
          "CSV outliers_removed column")

    # The plan's keys do the same; the command line overrides them.
    plan = set_probe(folder, "neighbour_filter = true\nresidual_rejection = true\n")
    check(figures(run(plan)[0]) == got, "plan keys and command-line switches disagree")
    off, _ = run(plan, "--neighbour-filter", "off", "--residual-rejection", "off")
    check(figures(off) == figures(spiked), "--...=off did not override the plan")

    # Vectors of both senses in one file: refused, naming the file and the line, exit 2.
    folder = copy_demo(tmp, "centres-mixed")
    rewrite(folder, ball_centre)
    path = os.path.join(folder, "points", "P3.csv")
    rows = open(path).read().splitlines()
    v = rows[6].split(",")  # file line 7
    rows[6] = ",".join(v[:3] + [f"{-float(c):.7f}" for c in v[3:]])
    open(path, "w").write("\n".join(rows) + "\n")
    mixed = set_probe(folder, 'points = "ball-centre"\ntip_diameter = 2.0\n')
    p = subprocess.run([CLI, "check", mixed], capture_output=True, text=True)
    check(p.returncode == 2 and p.stderr.startswith("cylzone: error:") and
          "P3.csv:7:" in p.stderr and "ambiguous" in p.stderr and p.stderr.count("\n") == 1,
          f"mixed vector senses: exit {p.returncode}, stderr {p.stderr!r}")

    # A bad switch value: one error line, exit 2.
    p = subprocess.run([CLI, "check", plan, "--neighbour-filter", "maybe"], capture_output=True,
                       text=True)
    check(p.returncode == 2 and p.stderr.startswith("cylzone: error:") and
          p.stderr.count("\n") == 1, f"bad switch: exit {p.returncode}, stderr {p.stderr!r}")

shutil.rmtree(REPORTS, ignore_errors=True)
if failures:
    print("\n".join(failures))
    sys.exit(1)
print("ok")
