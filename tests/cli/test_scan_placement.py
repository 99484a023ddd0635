"""`cylzone check` on the demo's whole-part scan with no placement in the plan: the placement
is found from the cloud and the nominal datum features (prepare/segment_scan.hpp,
find_placement), said so in the table and the JSON, and every characteristic is the one the
plan's own placement gives.

Reference: the demo scan's plan with its placement (point-clouds/valve-manifold/plan-scan.toml,
written by the demo's generator, which knows where it put the part). The scan is the same
points whichever placement maps them, and each feature takes exactly its own rows, so every
value must agree to the refinement's convergence (1e-9 mm here) and every verdict must be the
same.

Usage: /usr/bin/python3 test_scan_placement.py PATH_TO_CYLZONE PLAN_SCAN
"""
import json
import os
import re
import subprocess
import sys
import tempfile

CLI, PLAN = sys.argv[1], sys.argv[2]
failures = []


def check(condition, message):
    if not condition:
        failures.append(message)


def run(plan, out_dir, name):
    json_path = os.path.join(out_dir, name + ".json")
    p = subprocess.run([CLI, "check", plan, "--json", json_path], capture_output=True, text=True,
                       timeout=300)
    check(p.returncode in (0, 1, 3), f"{name}: exit {p.returncode}: {p.stderr.strip()[:300]}")
    with open(json_path, encoding="utf-8") as f:
        return p.stdout, json.load(f)


text = open(PLAN, encoding="utf-8").read()
# The plan without its placement (the table `placement = [ ... ]` under [scan]); the relative
# point files' paths are made absolute so the copy can live elsewhere.
found_text, removed = re.subn(r"(?ms)^placement = \[.*?^\]\n", "", text)
check(removed == 1, "the demo scan plan has no placement to remove")
base = os.path.dirname(os.path.abspath(PLAN))
found_text = re.sub(r'(?m)^points = "([^"/][^"]*\.[A-Za-z]+)"',
                    lambda m: 'points = "' + os.path.join(base, m.group(1)) + '"', found_text)

with tempfile.TemporaryDirectory() as tmp:
    found_plan = os.path.join(tmp, "plan-found.toml")
    with open(found_plan, "w", encoding="utf-8") as f:
        f.write(found_text)
    given_table, given = run(PLAN, tmp, "given")
    found_table, found = run(found_plan, tmp, "found")

check("placement found from the cloud and the nominal datum features" in found_table,
      "the table does not say the placement was found")
check("placement found" not in given_table, "the table says found for a given placement")
check(found["segmentation"].get("placement_search") is not None,
      "JSON segmentation.placement_search missing when the placement was found")
check([f["points"] for f in found["segmentation"]["features"]] ==
      [f["points"] for f in given["segmentation"]["features"]],
      "points per feature differ between the found and the given placement")
check(found["verdict"] == given["verdict"], "part verdicts differ")
given_by_id = {c["id"]: c for c in given["characteristics"]}
check(len(given_by_id) == len(found["characteristics"]) > 0, "characteristics differ in number")
for c in found["characteristics"]:
    g = given_by_id.get(c["id"])
    if g is None:
        failures.append(f"{c['id']}: not in the given placement's report")
        continue
    check(c["verdict"] == g["verdict"], f"{c['id']}: verdict {c['verdict']} != {g['verdict']}")
    if isinstance(g["value"], (int, float)):
        check(abs(c["value"] - g["value"]) <= 1e-9,
              f"{c['id']}: value {c['value']!r} != {g['value']!r}")

if failures:
    print("\n".join(failures))
    sys.exit(1)
print(f"placement found: {len(found['characteristics'])} characteristics as with the plan's own")
