#!/usr/bin/python3
"""Exact cross-check of cylzone's related mating width of a slot or tab about datum B's axis
(src/datum/detail/clocking_width.hpp, fit_width_about_origin), solved here again with numpy alone.

Usage: /usr/bin/python3 crosscheck_clocking_width.py CASES.json

CASES.json is written by the hidden Catch2 case "[width-cases]" of test_clocking_width (ctest runs
it first, as a fixture): random noisy slots and tabs, their points in A's plane about B's axis,
the generator's face (+1 left of the direction from B toward the feature, -1 right) of each
point, the generator's parameters, and cylzone's answer (centre-line angle, width, faces).

The problem, as the header states it: a centre line through the origin at angle theta has the
normal n(theta) = (-sin theta, cos theta); point i of face s_i has s_i d_i(theta) =
n(theta) . a_i with a_i = s_i q_i, a sinusoid in theta;
    slot: w = max over theta of 2 min_i n(theta) . a_i,
    tab:  w = min over theta of 2 max_i n(theta) . a_i,
over the rotations that keep every point on its face's side (n . a_i >= 0 for all i), within
(-pi/2, pi/2) of the generator's direction phi (a line and its reverse are the same line).

Method: exact enumeration of the candidates. The objective is a minimum (maximum) of finitely
many smooth functions of one variable, so its optimum over an interval lies at a breakpoint
(two of them equal), at a stationary point of one of them, or at an end of the interval (common
practice for piecewise-smooth minimax problems). Each is known in closed form here:
  * crossing of points i and j: n . (a_i - a_j) = 0, the centre line along a_i - a_j;
  * peak of point i (stationary: the slot's smooth maximum): n parallel to a_i;
  * ends of the feasible interval: n . a_i = 0, the centre line through point i.
Every candidate angle (mod pi, placed within pi/2 of phi) that keeps all points on their faces
is evaluated with the generator's faces, and the best is kept. No search, no tolerance in the
solution: its error is the rounding of a few products of the data.

Checks, per case: cylzone's faces are the generator's; its width equals the reference's within
1e-9 mm and its angle (mod pi) within 1e-9 rad (both expected near 1e-12 or better); the
objective evaluated here at cylzone's angle equals cylzone's width within 1e-9 mm (this one
also pins the direction: the datum frame takes the angle as the direction from B toward C, and
the reversed line would flip the faces' signs). Prints the
worst disagreements; exits non-zero on any failure or when no case was read.
"""
import json
import math
import sys

import numpy as np

WIDTH_TOL = 1e-9  # mm
ANGLE_TOL = 1e-9  # rad


def line_difference(a):
    """Angles (array or scalar) reduced to (-pi/2, pi/2]: the difference of two line angles."""
    d = np.remainder(np.asarray(a, dtype=float) + 0.5 * math.pi, math.pi) - 0.5 * math.pi
    return np.where(d <= -0.5 * math.pi, d + math.pi, d)


def objective(a, theta, internal):
    """2 min (slot) or 2 max (tab) of n(theta) . a_i, and the least n . a_i (feasibility)."""
    theta = np.atleast_1d(theta)
    values = np.outer(-np.sin(theta), a[:, 0]) + np.outer(np.cos(theta), a[:, 1])
    least = values.min(axis=1)
    return 2.0 * (least if internal else values.max(axis=1)), least


def reference_solution(points, face, internal, phi):
    a = face[:, None] * points
    n = len(a)
    i, j = np.triu_indices(n, 1)
    diff = a[i] - a[j]
    crossings = np.arctan2(diff[:, 1], diff[:, 0])
    peaks = np.arctan2(-a[:, 0], a[:, 1])
    ends = np.arctan2(a[:, 1], a[:, 0])
    kinds = np.concatenate([np.zeros(len(crossings), dtype=int), np.ones(n, dtype=int),
                            np.full(n, 2, dtype=int)])
    candidates = phi + line_difference(np.concatenate([crossings, peaks, ends]) - phi)
    width, least = objective(a, candidates, internal)
    # Keep the points on their faces; an end of the interval puts one point on the line, where
    # rounding may make its n . a_i a hair negative.
    scale = np.abs(points).max()
    feasible = least >= -1e-13 * scale
    if not feasible.any():
        return None
    width = np.where(feasible, width, -np.inf if internal else np.inf)
    best = int(np.argmax(width) if internal else np.argmin(width))
    return dict(angle=float(candidates[best]), width=float(width[best]),
                kind=("crossing", "peak", "end")[kinds[best]])


def main():
    if len(sys.argv) != 2:
        raise SystemExit(__doc__)
    with open(sys.argv[1]) as f:
        cases = json.load(f)["cases"]
    failures = []
    worst_width = worst_angle = worst_self = 0.0
    worst_width_case = worst_angle_case = ""
    kinds = {}
    total_points = slots = 0
    for case in cases:
        name = case["name"]
        internal = bool(case["internal"])
        slots += internal
        points = np.array(case["points"], dtype=float).reshape(-1, 2)
        face = np.array(case["face"], dtype=float)
        total_points += len(points)
        got = case["result"]
        if list(got["face"]) != [int(s) for s in case["face"]]:
            failures.append(f"{name}: cylzone's faces differ from the generator's")
            continue
        ref = reference_solution(points, face, internal, float(case["generator"]["phi"]))
        if ref is None:
            failures.append(f"{name}: no rotation keeps every point on its face")
            continue
        kinds[ref["kind"]] = kinds.get(ref["kind"], 0) + 1
        dw = abs(got["width"] - ref["width"])
        da = abs(float(line_difference(got["angle"] - ref["angle"])))
        at_cylzone, _ = objective(face[:, None] * points, float(got["angle"]), internal)
        ds = abs(float(at_cylzone[0]) - got["width"])
        if dw > worst_width or not worst_width_case:
            worst_width, worst_width_case = dw, name
        if da > worst_angle or not worst_angle_case:
            worst_angle, worst_angle_case = da, name
        worst_self = max(worst_self, ds)
        if not (dw <= WIDTH_TOL and da <= ANGLE_TOL and ds <= WIDTH_TOL):
            failures.append(
                f"{name}: width {got['width']!r} (reference {ref['width']!r}, at cylzone's "
                f"angle {float(at_cylzone[0])!r}), angle {got['angle']!r} (reference "
                f"{ref['angle']!r}, optimum at a {ref['kind']})")
    print(f"{len(cases)} cases ({slots} slots, {len(cases) - slots} tabs), {total_points} points; "
          f"reference optimum at: " + ", ".join(f"{k} {v}" for k, v in sorted(kinds.items())))
    print(f"largest difference: width {worst_width:.1e} mm ({worst_width_case}), angle "
          f"{worst_angle:.1e} rad ({worst_angle_case}), width vs objective at cylzone's angle "
          f"{worst_self:.1e} mm")
    if not cases:
        failures.append("no cases were read: the comparison would be vacuous")
    if failures:
        print("\n".join(failures))
        sys.exit(1)


if __name__ == "__main__":
    main()
