"""The demo part's whole-part scan (point-clouds/valve-manifold/plan-scan.toml) through
`cylzone check`, against an independent numpy segmentation of the same cloud.

References:
  * the band rule as docs/plan.md ("[scan]") states it, recomputed here with numpy on the whole
    cloud at once (no code shared with cylzone): the placement p' = R p + t read from the plan
    with Python's tomllib; a cylinder takes the points with | |p' - axis| - R | <= band and axial
    parameter within its depth widened by the margin, a plane those with |n . p'| <= band within
    its extent widened by the margin; with vectors, |cos| of the angle to the surface normal at
    least cos(normal_agreement); the nearest surface wins, the first listed on a tie;
  * the scan's last column, written by the generator, names the feature each row came from:
    the truth the counts must equal;
  * angular coverage by its definition: 360 degrees minus the largest difference of the sorted
    azimuths about the nominal axis (with the wrap-around gap); probed depth = max - min of the
    axial parameter;
  * the same without vectors (the cloud rewritten as x, y, z only), so the normal agreement is
    not applied;
  * a spike appended to the scan on bore P1's wall is removed by the residual rejection and
    named by its line in the scan file;
  * bad input: a feature whose band holds no point, and a placement that is not a rotation, stop
    with exit code 2 and one `cylzone: error:` line naming the key, and write no report.

Usage: /usr/bin/python3 crosscheck_segmentation.py PATH_TO_CYLZONE PLAN_SCAN
"""
import csv
import json
import math
import os
import pathlib
import shutil
import subprocess
import sys
import tempfile
import tomllib

import numpy as np

CLI, PLAN = sys.argv[1], pathlib.Path(sys.argv[2]).resolve()
failures = []


def check(condition, message):
    if not condition:
        failures.append(message)


def read_scan(path):
    """The scan as numpy arrays: points, vectors (or None) and the feature column."""
    with open(path) as f:
        header = f.readline().strip().split(",")
        rows = [line.rstrip("\n").split(",") for line in f if line.strip()]
    cols = {name: k for k, name in enumerate(header)}
    pts = np.array([[float(r[cols[c]]) for c in "xyz"] for r in rows])
    vec = (np.array([[float(r[cols[c]]) for c in "ijk"] for r in rows]) if "i" in cols else None)
    labels = [r[cols["feature"]] for r in rows]
    return pts, vec, labels


def surfaces(plan):
    """(role, kind, origin, direction, radius, low, high, extent) per feature taking scan points,
    datums then bores, in the part's nominal frame (docs/plan.md)."""
    out = []
    for label in "ABC":
        d = plan["datum"].get(label)
        if d is None or "points" in d:
            continue
        if d["feature"] == "plane":
            out.append((f"datum {label}", "plane", np.zeros(3), np.array([0, 0, 1.0]), 0, 0, 0,
                        (d["extent"]["x"], d["extent"]["y"])))
            continue
        size = d.get("nominal_size", (d["size"]["lower"] + d["size"]["upper"]) / 2)
        basic = d.get("basic", [0.0, 0.0])
        out.append((f"datum {label}", "cylinder", np.array([*basic, 0.0]), np.array([0, 0, 1.0]),
                    size / 2, d["depth"]["bottom"], d["depth"]["top"], None))
    for b in plan["bore"]:
        if "points" in b:
            continue
        size = b.get("nominal_size", (b["size"]["lower"] + b["size"]["upper"]) / 2)
        direction = np.array(b.get("direction", [0, 0, 1.0]), float)
        direction /= np.linalg.norm(direction)
        direction *= np.sign(direction[2])
        out.append((f"bore {b['id']}", "cylinder", np.array([*b["basic"], 0.0]), direction,
                    size / 2, b["depth"]["bottom"] / direction[2], b["depth"]["top"] / direction[2],
                    None))
    return out


def segment(plan, pts, vec):
    scan = plan["scan"]
    m = np.array(scan["placement"], float)
    rot, shift = m[:3, :3], m[:3, 3]
    band = scan["band"]
    margin = scan.get("margin", band)
    cos_min = math.cos(math.radians(scan.get("normal_agreement", 30.0)))
    q = pts @ rot.T + shift
    v = None if vec is None else vec @ rot.T
    surf = surfaces(plan)
    dist = np.full((len(q), len(surf)), np.inf)
    for k, (_, kind, origin, d, radius, low, high, extent) in enumerate(surf):
        rel = q - origin
        axial = rel @ d
        if kind == "cylinder":
            radial = rel - axial[:, None] * d
            r = np.linalg.norm(radial, axis=1)
            dk = np.abs(r - radius)
            ok = (dk <= band) & (axial >= low - margin) & (axial <= high + margin)
            normal = radial / np.where(r > 0, r, 1.0)[:, None]
        else:
            dk = np.abs(axial)
            (x0, x1), (y0, y1) = extent
            ok = ((dk <= band) & (q[:, 0] >= x0 - margin) & (q[:, 0] <= x1 + margin)
                  & (q[:, 1] >= y0 - margin) & (q[:, 1] <= y1 + margin))
            normal = np.tile(d, (len(q), 1))
        if v is not None:
            ok &= np.abs(np.sum(v * normal, axis=1)) >= cos_min * np.linalg.norm(v, axis=1)
        dist[ok, k] = dk[ok]
    assigned = np.where(np.isfinite(dist).any(axis=1), np.argmin(dist, axis=1), -1)  # first on ties
    result = {}
    for k, (role, kind, origin, d, radius, low, high, _) in enumerate(surf):
        idx = np.flatnonzero(assigned == k)
        entry = {"points": len(idx)}
        if kind == "cylinder" and len(idx):
            rel = q[idx] - origin
            axial = rel @ d
            # any azimuth origin: the gaps do not depend on it
            u = np.cross(d, [1.0, 0, 0] if abs(d[0]) < 0.9 else [0, 1.0, 0])
            u /= np.linalg.norm(u)
            w = np.cross(d, u)
            az = np.sort(np.degrees(np.arctan2(rel @ w, rel @ u)) % 360.0)
            gaps = np.append(np.diff(az), 360.0 - (az[-1] - az[0]))
            entry["angular_coverage_deg"] = 360.0 - gaps.max()
            entry["probed_depth"] = axial.max() - axial.min()
            entry["nominal_depth"] = high - low
        result[role] = entry
    return result, int(np.sum(assigned < 0))


def run_check(plan_path, folder):
    out_json, out_csv = folder / "report.json", folder / "report.csv"
    p = subprocess.run([CLI, "check", str(plan_path), "--json", str(out_json), "--csv",
                        str(out_csv), "--time", "2026-01-01T00:00:00Z"],
                       capture_output=True, text=True, timeout=300)
    return p, out_json, out_csv


def compare(plan_path, pts, vec, labels, folder, name):
    plan = tomllib.loads(plan_path.read_text())
    p, out_json, out_csv = run_check(plan_path, folder)
    check(p.returncode == 1, f"{name}: exit code {p.returncode} (the demo does not conform): {p.stderr}")
    if p.returncode != 1:
        return
    seg = json.load(open(out_json))["segmentation"]
    # The CSV's scan columns (four in a row, found by name: later columns are appended after
    # them) and the table's section say the same as the JSON.
    with open(out_csv, newline="") as f:
        rows = list(csv.reader(f))
    head = rows[0]
    at = head.index("scan_points") if "scan_points" in head else len(head)
    scan = slice(at, at + 4)
    check(head[scan] == ["scan_points", "scan_angular_coverage_deg", "scan_probed_depth",
                         "scan_nominal_depth"], f"{name}: CSV scan columns {head[scan]}")
    by_role = {f["role"]: f for f in seg["features"]}
    for row in rows[1:]:
        f = by_role.get("bore " + row[head.index("bore")])
        cells = row[scan]
        check(f is not None and len(cells) == 4 and cells[0] == str(f["points"])
              and cells[1] == f"{f['angular_coverage_deg']:.1f}"
              and cells[2] == f"{f['probed_depth']:.4f}" and cells[3] == f"{f['nominal_depth']:.4f}",
              f"{name}: CSV scan columns {cells} for {row[1]}")
    check("Scan segmentation: " in p.stdout, f"{name}: the table has no segmentation section")
    expected, unassigned = segment(plan, pts, vec)
    check(seg["unassigned"] == unassigned, f"{name}: unassigned {seg['unassigned']} != numpy {unassigned}")
    check(seg["points"] == len(pts), f"{name}: points {seg['points']} != {len(pts)}")
    truth = {}
    for label in labels:
        truth[label] = truth.get(label, 0) + 1
    check(unassigned == truth.get("none", 0), f"{name}: numpy unassigned {unassigned} != truth")
    got = {f["role"]: f for f in seg["features"]}
    check(set(got) == set(expected), f"{name}: roles {sorted(got)} != {sorted(expected)}")
    for role, e in expected.items():
        g = got.get(role)
        if g is None:
            continue
        check(g["points"] == e["points"], f"{name}: {role} points {g['points']} != numpy {e['points']}")
        check(e["points"] == truth.get(role, 0), f"{name}: {role} numpy {e['points']} != truth")
        if "angular_coverage_deg" in e:
            for key in ("angular_coverage_deg", "probed_depth", "nominal_depth"):
                check(abs(g[key] - e[key]) <= 1e-9,
                      f"{name}: {role} {key} {g[key]!r} != numpy {e[key]!r}")
            check(abs(g["depth_coverage"] - e["probed_depth"] / e["nominal_depth"]) <= 1e-12,
                  f"{name}: {role} depth_coverage")
        else:
            check(g["angular_coverage_deg"] is None, f"{name}: {role} is a plane")


def expect_error(plan_path, folder, name, *needles):
    p, out_json, out_csv = run_check(plan_path, folder)
    lines = p.stderr.strip().splitlines()
    check(p.returncode == 2, f"{name}: exit code {p.returncode}, expected 2")
    check(len(lines) == 1 and lines[0].startswith("cylzone: error: "),
          f"{name}: expected one 'cylzone: error:' line, got {p.stderr!r}")
    for needle in needles:
        check(needle in p.stderr, f"{name}: {needle!r} not in {p.stderr!r}")
    check(not out_json.exists() and not out_csv.exists(), f"{name}: a report was written")


with tempfile.TemporaryDirectory() as tmp:
    tmp = pathlib.Path(tmp)
    plan_text = PLAN.read_text()
    plan = tomllib.loads(plan_text)
    scan_path = PLAN.parent / plan["scan"]["points"]
    pts, vec, labels = read_scan(scan_path)

    # 1. The demo scan as it is, with vectors.
    compare(PLAN, pts, vec, labels, tmp, "with vectors")

    # 2. The same cloud without vectors: the normal agreement does not apply.
    work = tmp / "novec"
    (work / "scan").mkdir(parents=True)
    with open(work / plan["scan"]["points"], "w") as f:
        f.write("x,y,z,feature\n")
        for p, label in zip(pts, labels):
            f.write(f"{p[0]!r},{p[1]!r},{p[2]!r},{label}\n")
    (work / PLAN.name).write_text(plan_text)
    compare(work / PLAN.name, pts, None, labels, work, "without vectors")

    # 3. A bore moved away from every point: exit 2, the bore and the distance named.
    moved = plan_text.replace("basic = [85.0, 25.0]", "basic = [85.0, 140.0]")
    check(moved != plan_text, "the demo plan has P3 at [85.0, 25.0]")
    shutil.copytree(scan_path.parent, tmp / "bad" / "scan")
    (tmp / "bad" / "moved.toml").write_text(moved)
    expect_error(tmp / "bad" / "moved.toml", tmp / "bad", "empty band", "key 'bore[P3]'",
                 "bore P3 takes no point of the scan", "its nearest points are")

    # 4. A placement that is not a rotation: exit 2 naming scan.placement.
    start = plan_text.index("placement = [")
    row = plan_text.index("[", start + len("placement = ["))
    skewed = plan_text[:row + 1] + "1.5, " + plan_text[plan_text.index(",", row) + 2:]
    (tmp / "bad" / "skewed.toml").write_text(skewed)
    expect_error(tmp / "bad" / "skewed.toml", tmp / "bad", "not a rotation", "scan.placement",
                 "not orthonormal")

    # 5. A spike on bore P1's wall appended to the scan: the residual rejection removes it and
    #    names it by its line in the scan file (each feature's points keep their file lines).
    spiked = tmp / "spiked"
    shutil.copytree(scan_path.parent, spiked / "scan")
    rows = (spiked / plan["scan"]["points"]).read_text().splitlines()
    k = next(i for i, label in enumerate(labels) if label == "bore P1")
    spike = pts[k] + 0.03 * vec[k]          # 30 um off the wall, into the hole
    rows.append(f"{spike[0]:.6f},{spike[1]:.6f},{spike[2]:.6f},"
                f"{vec[k][0]:.7f},{vec[k][1]:.7f},{vec[k][2]:.7f},bore P1")
    (spiked / plan["scan"]["points"]).write_text("\n".join(rows) + "\n")
    (spiked / PLAN.name).write_text(plan_text)
    out_json = spiked / "report.json"
    p = subprocess.run([CLI, "check", str(spiked / PLAN.name), "--residual-rejection", "on",
                        "--json", str(out_json), "--csv", str(spiked / "report.csv")],
                       capture_output=True, text=True, timeout=300)
    check(p.returncode in (0, 1), f"spike: exit code {p.returncode}: {p.stderr}")
    if out_json.exists():
        report = json.load(open(out_json))
        removed = [q["line"] for e in report["preparation"] if e["role"] == "bore P1"
                   for q in e["residual_rejection"]["removed"]]
        check(removed == [len(rows)], f"spike: bore P1 removed lines {removed}, expected "
                                      f"[{len(rows)}] (the appended row)")

if failures:
    print("\n".join(failures))
    sys.exit(1)
print("segmentation of the demo scan agrees with numpy and with the generator's labels")
