#!/usr/bin/python3
"""Generates the invented demo part "HM-3207 rev C" (a hydraulic valve manifold block): probe
points of datum face A, datum bores B and C and seven deep bores P1..P7, the part plan and the
ground truth. Everything here is invented for the demo; no real part or product is described.

Run with Debian's interpreter (numpy only):  /usr/bin/python3 generate.py
It rewrites points/*.csv, plan.toml, ground-truth.json and summary-single-plane.csv in this
folder, and the same part as one whole-part scan: scan/manifold-scan.csv (every probed point
above, in a shuffled order, plus points on the block's side faces that belong to no feature)
with plan-scan.toml, which takes each feature's points from that cloud ([scan]). The seeds are
fixed, so the output is the same on every run.

How the truth is made exact (README.md explains it in words):
 * The part is built directly in its TRUE datum reference frame: z out of the material, datum
   face A on z = 0 up to its form, B's axis on the z axis, C's axis through (120, 0).
 * Face A is crowned: z = -g(x, y) with g >= 0 and g = 0 at one probed point only (the
   crown). The constrained least-squares tangent plane of the noise-free points is then z = 0
   exactly when the g-weighted centroid of the points is the crown: that is the KKT condition
   of min sum(s_i^2) s.t. s_i <= 0 with one active point (first-order KKT conditions, Nocedal &
   Wright, Numerical Optimization, 2nd ed., ch. 12; tangent least-squares datum plane per
   Shakarji & Srinivasan, J. Comput. Inf. Sci. Eng., 2015; both details from memory). The shape
   terms below are solved so that it holds, and the script asserts it.
 * Each bore's form (k lobes, barrel, taper, bell-mouth) and each level's sampling are
   invariant under a rotation by 2 pi / k about the bore's true axis, so the noise-free maximum
   inscribed cylinder, least-squares cylinder and minimum-zone cylinder are coaxial with the
   true axis (symmetry of a unique optimum): their sizes are min, mean and max - min of the
   sampled radii. Same for B and C, whose axes are exactly perpendicular to A.
 * Probing noise (normal to the surface) is added afterwards; the truth stays noise-free.
"""
import json
import math
import pathlib

import numpy as np

HERE = pathlib.Path(__file__).resolve().parent
SEED = 3207
SIGMA = 0.0005          # mm: probing noise, 1 sigma, along the surface normal
UM = 0.001              # one micrometre in mm

# Placement of the part on the CMM table: the measurement coordinates are
#   p_meas = R_PLACE @ p_frame + T_PLACE
# R_PLACE: 27.5 deg about the machine z axis, then a 0.35 mrad tilt about a horizontal axis at
# 60 deg azimuth (the part rests on three supports of slightly different heights).
YAW_DEG = 27.5
TILT_RAD = 0.35e-3
TILT_AXIS_AZIMUTH_DEG = 60.0
T_PLACE = np.array([412.835, 267.140, -118.462])

# Datum face A: probed on a grid over the top face of the block, x -25..145, y -25..80.
A_GRID_X = -20.0 + 10.0 * np.arange(17)     # exact multiples: the crown is a grid point
A_GRID_Y = -20.0 + 9.5 * np.arange(11)
A_CROWN = (60.0, 37.0)      # the crown: highest point of the face, a grid point
A_CURVATURE = (6.0e-7, 1.2e-6)   # 1/mm: g ~ (kx dx^2 + ky dy^2) (1 + e.d)
A_CLEARANCE = 2.5           # mm: grid points closer than this to a hole's edge are skipped


def rotation(axis, angle):
    """Rodrigues' rotation matrix about a unit axis."""
    axis = np.asarray(axis, float) / np.linalg.norm(axis)
    k = np.array([[0, -axis[2], axis[1]], [axis[2], 0, -axis[0]], [-axis[1], axis[0], 0]])
    return np.eye(3) + math.sin(angle) * k + (1 - math.cos(angle)) * (k @ k)


_TILT_AXIS = [math.cos(math.radians(TILT_AXIS_AZIMUTH_DEG)),
              math.sin(math.radians(TILT_AXIS_AZIMUTH_DEG)), 0.0]
R_PLACE = rotation(_TILT_AXIS, TILT_RAD) @ rotation([0, 0, 1], math.radians(YAW_DEG))

# The whole-part scan (scan/, plan-scan.toml): the block's outline in the frame, its side-face
# points, the band, datum A's nominal extent and the error of the scan's rough placement.
BLOCK_OUTLINE = ((-30.0, 150.0), (-30.0, 85.0))
SCAN_SIDE_POINTS = 400
SCAN_BAND = 0.2
A_EXTENT = ((-25.0, 145.0), (-25.0, 80.0))
SCAN_PLACEMENT_ERROR_RAD = 0.35e-3
SCAN_PLACEMENT_SHIFT_ERROR = (0.03, -0.02, 0.01)

# Datum features of size. Their axes are exactly perpendicular to A (see the docstring).
DATUM_B = dict(label="B", centre=(0.0, 0.0), diameter=20.0085, size=(20.000, 20.021), depth=30.0,
               levels=4, per_level=36, lobes=3, lobe_amplitude=0.8)
DATUM_C = dict(label="C", centre=(120.0, 0.0), diameter=8.0060, size=(8.000, 8.015), depth=20.0,
               levels=3, per_level=24, lobes=2, lobe_amplitude=0.5)

# The toleranced bores. dev_top / dev_bottom: true axis offset (dx, dy) from the true position at
# the top (z = 0, on A) and at the bottom (z = -depth) of the bore, in micrometres. diameter: the
# nominal-form diameter 2R before lobing/barrel/taper/bell-mouth (radial amplitudes in um).
# per_level must be even and a multiple of lobes (symmetry; opposed pairs for two-point sizes).
BORES = [
    dict(id="P1", basic=(25.0, 25.0), size=(10.000, 10.015), depth=60.0, levels=7, per_level=30,
         diameter=10.0065, lobes=2, lobe_amplitude=0.6, barrel=0.6, taper=0.3, bell_mouth=0.0,
         dev_top=(2.5, -1.5), dev_bottom=(3.5, 0.5),
         position=(0.030, "MMC"), perpendicularity=0.015, cylindricity=None,
         story="clean bore: on position over the full depth, square to A, in size"),
    dict(id="P2", basic=(55.0, 25.0), size=(10.000, 10.015), depth=60.0, levels=7, per_level=30,
         diameter=10.0055, lobes=3, lobe_amplitude=0.7, barrel=0.0, taper=0.0, bell_mouth=0.0,
         dev_top=(3.0, -2.0), dev_bottom=(22.7, 11.8),
         position=(0.030, "MMC"), perpendicularity=0.015, cylindricity=None,
         story="drilled on a tilt (about 0.4 mrad): on position at the mouth (a check of the "
               "mouth alone passes it), leaves its zone part-way down, and is out of "
               "perpendicularity"),
    dict(id="P3", basic=(85.0, 25.0), size=(12.000, 12.018), depth=56.0, levels=7, per_level=36,
         diameter=12.0135, lobes=3, lobe_amplitude=1.0, barrel=0.0, taper=0.0, bell_mouth=0.0,
         dev_top=(-11.5, 9.5), dev_bottom=(-12.5, 9.0),
         position=(0.025, "MMC"), perpendicularity=0.015, cylindricity=None,
         story="mislocated by about 15 um but square and near its upper size limit: position "
               "exceeds the stated 0.025 and conforms only thanks to the MMC bonus. Three-lobed: "
               "its two-point size (~12.0135) exceeds its mating size (~12.0115)"),
    dict(id="P4", basic=(115.0, 25.0), size=(10.000, 10.015), depth=60.0, levels=7, per_level=30,
         diameter=10.0070, lobes=2, lobe_amplitude=0.5, barrel=0.4, taper=0.0, bell_mouth=0.0,
         dev_top=(-6.0, 5.0), dev_bottom=(6.0, -6.0),
         position=(0.040, "MMC"), perpendicularity=0.010, cylindricity=None,
         story="crosses its true position half-way down: well within position, but tilted "
               "16 um over its depth against a 0.010 perpendicularity refinement"),
    dict(id="P5", basic=(25.0, 55.0), size=(12.000, 12.018), depth=64.0, levels=8, per_level=36,
         diameter=11.9980, lobes=2, lobe_amplitude=0.8, barrel=0.3, taper=0.0, bell_mouth=0.0,
         dev_top=(4.0, 3.0), dev_bottom=(6.0, 1.0),
         position=(0.025, "MMC"), perpendicularity=0.015, cylindricity=None,
         story="reamed undersize (worn reamer): mating size about 4 um below the 12.000 limit, "
               "so size does not conform; on position (no bonus) and square"),
    dict(id="P6", basic=(55.0, 55.0), size=(12.000, 12.018), depth=56.0, levels=7, per_level=36,
         diameter=12.0055, lobes=2, lobe_amplitude=0.4, barrel=0.0, taper=0.0, bell_mouth=5.0,
         dev_top=(-5.0, -4.0), dev_bottom=(-3.0, -6.0),
         position=(0.030, "MMC"), perpendicularity=0.015, cylindricity=0.003,
         story="spool bore with a bell-mouth (5 um on radius at the mouth, fading out over the "
               "top 15 mm): on position and square, in size, but out of its 0.003 "
               "cylindricity"),
    dict(id="P7", basic=(85.0, 55.0), size=(10.000, 10.015), depth=60.0, levels=7, per_level=30,
         diameter=10.0060, lobes=3, lobe_amplitude=0.8, barrel=0.5, taper=0.0, bell_mouth=0.0,
         dev_top=(12.0, 4.0), dev_bottom=(5.0, 1.0),
         position=(0.030, "RFS"), perpendicularity=0.015, cylindricity=0.008,
         story="position RFS (no bonus): worst at the mouth, 0.025 against 0.030, conforms"),
]
BELL_MOUTH_LENGTH = 15.0    # mm over which the bell-mouth fades out


def level_heights(depth, levels):
    """Probed levels along the axis: 2 mm below the mouth to 2 mm above the bottom."""
    return np.linspace(-2.0, -(depth - 2.0), levels)


def radius_function(feature, t, theta, phase):
    """Radius of the true surface and its derivatives d/dtheta, d/dt at axial height t (< 0).
    Form terms (radial, mm): k lobes; barrel (largest mid-depth); taper (narrower toward the
    bottom); bell-mouth (larger at the mouth, fading out quadratically over BELL_MOUTH_LENGTH)."""
    depth = feature["depth"]
    k = feature["lobes"]
    a = feature["lobe_amplitude"] * UM
    r = feature["diameter"] / 2 + a * np.cos(k * (theta - phase))
    dr_dtheta = -a * k * np.sin(k * (theta - phase))
    dr_dt = np.zeros_like(theta)
    barrel = feature.get("barrel", 0.0) * UM
    if barrel:
        s = (2 * t + depth) / depth                # -1 at the bottom, +1 at the mouth
        r = r + barrel * (1 - s * s)
        dr_dt = dr_dt - barrel * 2 * s * 2 / depth
    taper = feature.get("taper", 0.0) * UM
    if taper:
        r = r + taper * (t / depth + 0.5)          # +taper/2 at the mouth, -taper/2 at the bottom
        dr_dt = dr_dt + taper / depth
    bell = feature.get("bell_mouth", 0.0) * UM
    if bell and t > -BELL_MOUTH_LENGTH:
        q = (t + BELL_MOUTH_LENGTH) / BELL_MOUTH_LENGTH
        r = r + bell * q * q
        dr_dt = dr_dt + bell * 2 * q / BELL_MOUTH_LENGTH
    return r, dr_dtheta, dr_dt


def axis_of(feature):
    """True axis: point on z = 0 and unit direction (out of the material, +z-ish), frame coords."""
    if "dev_top" in feature:
        top = np.array([*feature["basic"], 0.0]) + np.array([*feature["dev_top"], 0.0]) * UM
        bottom = (np.array([*feature["basic"], -feature["depth"]])
                  + np.array([*feature["dev_bottom"], 0.0]) * UM)
    else:
        top = np.array([*feature["centre"], 0.0])
        bottom = np.array([*feature["centre"], -feature["depth"]])
    d = top - bottom
    return top, d / np.linalg.norm(d)


def probe_bore(feature, rng):
    """Noise-free surface points, free-space normals and each point's radius (frame coords)."""
    point0, d = axis_of(feature)
    u = np.array([1.0, 0.0, 0.0]) - d[0] * d
    u /= np.linalg.norm(u)
    v = np.cross(d, u)
    n = feature["per_level"]
    assert n % math.lcm(2, feature["lobes"]) == 0, feature
    pts, normals, radii = [], [], []
    for t in level_heights(feature["depth"], feature["levels"]):
        start = rng.uniform(0, 2 * math.pi)        # each level starts at its own angle
        phase = rng.uniform(0, 2 * math.pi)        # lobe phase drifts from level to level
        theta = start + 2 * math.pi * np.arange(n) / n
        r, dr_dtheta, dr_dt = radius_function(feature, t, theta, phase)
        e_r = np.outer(np.cos(theta), u) + np.outer(np.sin(theta), v)
        e_t = np.outer(-np.sin(theta), u) + np.outer(np.cos(theta), v)
        centre = point0 + (t / d[2]) * d           # axis point at frame height ~ t
        pts.append(centre + r[:, None] * e_r)
        # gradient of rho - r(theta, t) points into the material; the probe vector is its reverse
        grad = e_r - (dr_dtheta / r)[:, None] * e_t - dr_dt[:, None] * d
        normals.append(-grad / np.linalg.norm(grad, axis=1)[:, None])
        radii.append(r)
    return np.vstack(pts), np.vstack(normals), np.concatenate(radii)


def face_samples(features):
    """Grid points of face A that are clear of every hole."""
    xy = []
    for x in A_GRID_X:
        for y in A_GRID_Y:
            clear = all(math.hypot(x - f["centre"][0], y - f["centre"][1])
                        > f["diameter"] / 2 + A_CLEARANCE for f in features)
            if clear:
                xy.append((x, y))
    return np.array(xy)


def face_shape(xy):
    """Depth g >= 0 of face A below the tangent plane z = 0, crowned at A_CROWN:
    g = (kx dx^2 + ky dy^2) (1 + ex dx + ey dy), with (ex, ey) solved so that the g-weighted
    centroid of the probed points is the crown (the KKT condition in the module docstring).
    Returns g, its gradient and (ex, ey)."""
    d = xy - np.array(A_CROWN)
    kx, ky = A_CURVATURE
    q = kx * d[:, 0] ** 2 + ky * d[:, 1] ** 2
    # sum g d = 0 is linear in e = (ex, ey): (sum q d d^T) e = -sum q d
    e = np.linalg.solve(np.einsum("i,ij,ik->jk", q, d, d), -(q[:, None] * d).sum(axis=0))
    f = 1 + d @ e
    # the linear factor stays well positive over the face, so g = 0 only at the crown
    assert np.all(f > 0.3), f.min()
    g = q * f
    gx = 2 * kx * d[:, 0] * f + q * e[0]
    gy = 2 * ky * d[:, 1] * f + q * e[1]
    return g, gx, gy, tuple(e)


def to_measurement(points, normals):
    return points @ R_PLACE.T + T_PLACE, normals @ R_PLACE.T


def csv_rows(points, normals):
    return [f"{p[0]:.6f},{p[1]:.6f},{p[2]:.6f},{n[0]:.7f},{n[1]:.7f},{n[2]:.7f}"
            for p, n in zip(points, normals)]


def write_csv(path, points, normals, scan_rows=None, label=None):
    """Writes one feature's point file; with `scan_rows`, also keeps its rows (the very same
    text) with their feature label for the whole-part scan."""
    rows = csv_rows(points, normals)
    with open(path, "w", newline="\n") as f:
        f.write("x,y,z,i,j,k\n")
        for row in rows:
            f.write(row + "\n")
    if scan_rows is not None:
        scan_rows += [(row, label) for row in rows]


def deviation(bore, z):
    """True axis offset (dx, dy) from the true position at frame height z, mm."""
    point0, d = axis_of(bore)
    p = point0 + (z / d[2]) * d
    return p[:2] - np.array(bore["basic"])


def first_height_outside(bore, zone_diameter, top, bottom):
    """Highest z in [bottom, top] where the true axis is outside the zone, scanning downward;
    None when it stays inside. Solves |a + z s| = zone/2 (the deviation is affine in z)."""
    a = deviation(bore, 0.0)
    s = deviation(bore, 1.0) - a
    rad = zone_diameter / 2
    if np.linalg.norm(a + top * s) > rad:
        return top
    qa, qb, qc = s @ s, 2 * a @ s, a @ a - rad * rad
    disc = qb * qb - 4 * qa * qc
    if qa == 0 or disc < 0:
        return None
    roots = [(-qb - math.sqrt(disc)) / (2 * qa), (-qb + math.sqrt(disc)) / (2 * qa)]
    inside = [z for z in roots if bottom <= z <= top]
    return max(inside) if inside else None


def truth_for_bore(bore, radii, points):
    """Expected results from the noise-free geometry (ASME Y14.5-2018 definitions: position =
    2 x the largest radial deviation of the axis from the true position over the depth, reached
    at an end because the deviation is affine; perpendicularity = depth x tan(tilt); bonus at
    MMC = mating size - MMC; virtual condition of a bore at MMC = MMC - t)."""
    top, bottom = 0.0, -bore["depth"]
    lower, upper = bore["size"]
    dev_t, dev_b = deviation(bore, top), deviation(bore, bottom)
    position = 2 * max(np.linalg.norm(dev_t), np.linalg.norm(dev_b))
    _, d = axis_of(bore)
    tilt = math.atan2(math.hypot(d[0], d[1]), d[2])
    perpendicularity = (top - bottom) * math.tan(tilt)
    mating = 2 * radii.min()
    n = bore["per_level"]
    per_level = radii.reshape(bore["levels"], n)
    two_point = per_level[:, : n // 2] + per_level[:, n // 2:]   # opposed pairs, same level
    tol, modifier = bore["position"]
    bonus = max(0.0, mating - lower) if modifier == "MMC" else 0.0
    allowed = tol + bonus
    size_ok = mating >= lower and two_point.max() <= upper
    position_ok = position <= allowed
    perp_ok = perpendicularity <= bore["perpendicularity"]
    cylindricity = radii.max() - radii.min()
    cyl_ok = None if bore["cylindricity"] is None else cylindricity <= bore["cylindricity"]
    result = {
        "id": bore["id"],
        "story": bore["story"],
        "basic": list(bore["basic"]),
        "depth_range": {"top": top, "bottom": bottom},
        "axis": {"point_at_top": list(bore["basic"] + dev_t) + [top],
                 "point_at_bottom": list(bore["basic"] + dev_b) + [bottom],
                 "direction": d.tolist(),
                 "tilt_rad": tilt,
                 "tilt_azimuth_deg": math.degrees(math.atan2(d[1], d[0]))},
        "form": {"nominal_form_diameter": bore["diameter"], "lobes": bore["lobes"],
                 "lobe_amplitude_um": bore["lobe_amplitude"], "barrel_um": bore["barrel"],
                 "taper_um": bore["taper"], "bell_mouth_um": bore["bell_mouth"],
                 "bell_mouth_length": BELL_MOUTH_LENGTH if bore["bell_mouth"] else 0.0,
                 "levels": level_heights(bore["depth"], bore["levels"]).tolist(),
                 "points_per_level": n},
        "size": {"lower": lower, "upper": upper,
                 "least_squares": 2 * radii.mean(), "mating_envelope": mating,
                 "minimum_material_envelope": 2 * radii.max(),
                 "two_point_min": two_point.min(), "two_point_max": two_point.max(),
                 "verdict": verdict(size_ok)},
        "cylindricity": {"value": cylindricity, "tolerance": bore["cylindricity"],
                         "verdict": None if cyl_ok is None else verdict(cyl_ok)},
        "position": {"tolerance": tol, "modifier": modifier, "datums": "A|B|C",
                     "value": position, "bonus": bonus, "allowed": allowed,
                     "top": {"z": top, "dx": dev_t[0], "dy": dev_t[1],
                             "position": 2 * np.linalg.norm(dev_t)},
                     "bottom": {"z": bottom, "dx": dev_b[0], "dy": dev_b[1],
                                "position": 2 * np.linalg.norm(dev_b)},
                     "leaves_zone_at": first_height_outside(bore, allowed, top, bottom),
                     "verdict": verdict(position_ok)},
        "perpendicularity": {"tolerance": bore["perpendicularity"], "modifier": "RFS",
                             "value": perpendicularity, "verdict": verdict(perp_ok)},
    }
    if modifier == "MMC":
        basic = np.array(bore["basic"])
        clearance = 2 * np.min(np.linalg.norm(points[:, :2] - basic, axis=1))
        result["virtual_condition"] = {"boundary": lower - tol, "clearance": clearance,
                                       "verdict": verdict(clearance >= lower - tol)}
    checks = [size_ok, position_ok, perp_ok] + ([cyl_ok] if cyl_ok is not None else [])
    if "virtual_condition" in result:
        checks.append(result["virtual_condition"]["verdict"] == "conforms")
    result["verdict"] = verdict(all(checks))
    why = []
    if position > tol:
        why.append(f"position {position:.4f} exceeds the stated {tol:.3f}"
                   + (f" but not the {allowed:.4f} allowed with the {bonus:.4f} bonus"
                      if position_ok else f" and the {allowed:.4f} allowed"))
        leaves = result["position"]["leaves_zone_at"]
        if leaves is not None:
            why[-1] += (f"; 2D position at the mouth {2 * np.linalg.norm(dev_t):.4f}, the axis "
                        f"leaves its zone at z = {leaves:.1f}")
    if not perp_ok:
        why.append(f"perpendicularity {perpendicularity:.4f} exceeds {bore['perpendicularity']:.3f}")
    if mating < lower:
        why.append(f"mating size {mating:.4f} below the lower limit {lower:.3f}")
    if two_point.max() > upper:
        why.append(f"two-point size {two_point.max():.4f} above the upper limit {upper:.3f}")
    if cyl_ok is not None and not cyl_ok:
        why.append(f"cylindricity {cylindricity:.4f} exceeds {bore['cylindricity']:.3f}")
    if "virtual_condition" in result and result["virtual_condition"]["verdict"] != "conforms":
        why.append(f"violates its virtual condition boundary {lower - tol:.3f} "
                   f"(clearance {result['virtual_condition']['clearance']:.4f})")
    result["why"] = "; ".join(why) if why else "every characteristic within its tolerance"
    return result


def rounded(value):
    """Rounds floats to 1e-10 (far below any resolution here) so the JSON stays readable."""
    if isinstance(value, float):
        return round(value, 10)
    if isinstance(value, dict):
        return {k: rounded(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [rounded(v) for v in value]
    return value


def verdict(ok):
    return "conforms" if ok else "does not conform"


def scan_placement():
    """A rough placement of the scan in the part's nominal frame, as a 3-2-1 alignment on the
    machine would give it: the exact inverse of the measurement placement, off by 0.35 mrad
    about a skew axis and by a few hundredths of a millimetre."""
    error = rotation([0.3, -0.8, 0.5], SCAN_PLACEMENT_ERROR_RAD)
    rot = error @ R_PLACE.T
    return rot, -rot @ T_PLACE + np.array(SCAN_PLACEMENT_SHIFT_ERROR)


def plan_text(scan=False):
    """The demo plan; with `scan`, the same plan taking every feature's points from the
    whole-part scan (plan-scan.toml)."""
    def points(path):
        return [] if scan else [f'points = "{path}"']
    header = [
        "# Part plan of the invented demo part HM-3207 rev C (hydraulic valve manifold block).",
        "# Written by generate.py: change the generator, not this file. See README.md.",
    ]
    if scan:
        rot, shift = scan_placement()
        rows = [f"  [{r[0]:.12f}, {r[1]:.12f}, {r[2]:.12f}, {t:.6f}]," for r, t in zip(rot, shift)]
        header += [
            "# The same part as one whole-part scan: every feature takes its points from",
            "# scan/manifold-scan.csv, segmented by the band about its nominal surface.",
        ]
    lines = header + [
        'format = "cylzone-plan-1"',
        'name = "HM-3207 rev C valve manifold block, first article (invented demo data)"',
        'units = "mm"',
        "",
        "[probe]",
        'points = "surface"',
        "tip_diameter = 2.0",
    ]
    if scan:
        lines += [
            "",
            "# One cloud of the whole part; placement: cloud -> part's nominal frame (rough).",
            "[scan]",
            'points = "scan/manifold-scan.csv"',
            f"band = {SCAN_BAND:.2f}",
            "normal_agreement = 20.0",
            "placement = [",
            *rows,
            "  [0.0, 0.0, 0.0, 1.0],",
            "]",
        ]
    lines += [
        "",
        "# Top face of the block, probed on a grid; the part sits with A facing up (+z).",
        "[datum.A]",
        'feature = "plane"',
        *points("points/datum-A.csv"),
        'association = "tangent-least-squares"',
        "material_side = [0.0, 0.0, -1.0]",
        *([f"extent = {{ x = [{A_EXTENT[0][0]:.1f}, {A_EXTENT[0][1]:.1f}], "
           f"y = [{A_EXTENT[1][0]:.1f}, {A_EXTENT[1][1]:.1f}] }}"] if scan else []),
        "",
        "# Locating bore for the mounting spigot, 20 H7, at RMB.",
        "[datum.B]",
        'feature = "bore"',
        *points("points/datum-B.csv"),
        f"size = {{ lower = {DATUM_B['size'][0]:.3f}, upper = {DATUM_B['size'][1]:.3f} }}",
        *([f"depth = {{ top = 0.0, bottom = {-DATUM_B['depth']:.1f} }}"] if scan else []),
        "",
        "# Anti-rotation dowel bore, 8 H7, at RMB: clocks the frame.",
        "[datum.C]",
        'feature = "bore"',
        *points("points/datum-C.csv"),
        f"basic = [{DATUM_C['centre'][0]:.1f}, {DATUM_C['centre'][1]:.1f}]",
        f"size = {{ lower = {DATUM_C['size'][0]:.3f}, upper = {DATUM_C['size'][1]:.3f} }}",
        *([f"depth = {{ top = 0.0, bottom = {-DATUM_C['depth']:.1f} }}"] if scan else []),
    ]
    for bore in BORES:
        tol, modifier = bore["position"]
        lines += [
            "",
            f"# {bore['id']}: {bore['size'][0]:.0f} H7 x {bore['depth']:.0f} deep, "
            f"position {tol:.3f} {modifier} to A|B|C over the full depth",
            "[[bore]]",
            f'id = "{bore["id"]}"',
            *points(f"points/{bore['id']}.csv"),
            f"basic = [{bore['basic'][0]:.1f}, {bore['basic'][1]:.1f}]",
            f"depth = {{ top = 0.0, bottom = {-bore['depth']:.1f} }}",
            f"size = {{ lower = {bore['size'][0]:.3f}, upper = {bore['size'][1]:.3f} }}",
            f'position = {{ tolerance = {tol:.3f}, modifier = "{modifier}", datums = "A|B|C" }}',
            f'perpendicularity = {{ tolerance = {bore["perpendicularity"]:.3f}, modifier = "RFS" }}',
        ]
        if bore["cylindricity"] is not None:
            lines.append(f"cylindricity = {bore['cylindricity']:.3f}")
    return "\n".join(lines) + "\n"


def side_face_points(rng):
    """Points on the block's four side faces, outside every feature's band: a scan also sees
    surfaces the plan does not tolerance (they stay unassigned)."""
    (x0, x1), (y0, y1) = BLOCK_OUTLINE
    pts, normals = [], []
    for _ in range(SCAN_SIDE_POINTS):
        face = rng.integers(4)
        z = rng.uniform(-70.0, -3.0)
        if face < 2:
            y = rng.uniform(y0, y1)
            pts.append((x0 if face == 0 else x1, y, z))
            normals.append((-1.0 if face == 0 else 1.0, 0.0, 0.0))
        else:
            x = rng.uniform(x0, x1)
            pts.append((x, y0 if face == 2 else y1, z))
            normals.append((0.0, -1.0 if face == 2 else 1.0, 0.0))
    pts, normals = np.array(pts), np.array(normals)
    return pts + rng.normal(0, SIGMA, len(pts))[:, None] * normals, normals


def write_scan(scan_rows):
    """scan/manifold-scan.csv: the rows of every feature file (the same text, so the same
    numbers) and the side-face points, shuffled; the last column names the feature a row came
    from (the reader ignores it; tests use it as the truth of the segmentation)."""
    rng = np.random.default_rng(SEED + 1)      # its own stream: the demo's points are unchanged
    side = side_face_points(rng)
    rows = scan_rows + [(row, "none") for row in csv_rows(*to_measurement(*side))]
    order = rng.permutation(len(rows))
    (HERE / "scan").mkdir(exist_ok=True)
    with open(HERE / "scan" / "manifold-scan.csv", "w", newline="\n") as f:
        f.write("x,y,z,i,j,k,feature\n")
        for k in order:
            f.write(f"{rows[k][0]},{rows[k][1]}\n")
    (HERE / "plan-scan.toml").write_text(plan_text(scan=True))


def summary_text(truth_bores):
    """The part as a single-plane evaluation would summarise it (for `cylzone audit`): per bore
    the X/Y deviation of the true axis from its true position at the mouth (z = 0 on A), the
    position 2 sqrt(dx^2 + dy^2) of that one plane, the mating size and a verdict against the
    stated tolerance plus the MMC bonus, each rounded to 4 decimals as such a summary prints
    them. It sees no tilt, so it passes P2, whose axis leaves its zone further down."""
    lines = ["# Single-plane summary of HM-3207 rev C (invented demo data, written by generate.py):",
             "# deviations from true position at the mouth, z = 0 on datum A; values in mm.",
             "id,z,dx,dy,position,diameter,verdict"]
    for bore, truth in zip(BORES, truth_bores):
        dx, dy = deviation(bore, 0.0)
        dx, dy = round(float(dx), 4), round(float(dy), 4)
        position = round(2 * math.hypot(dx, dy), 4)
        allowed = truth["position"]["allowed"]
        lines.append(f"{bore['id']},0.0000,{dx:.4f},{dy:.4f},{position:.4f},"
                     f"{truth['size']['mating_envelope']:.4f},"
                     f"{'pass' if position <= allowed else 'fail'}")
    return "\n".join(lines) + "\n"


def main():
    rng = np.random.default_rng(SEED)
    out = HERE / "points"
    out.mkdir(exist_ok=True)
    truth_bores = []
    holes = [DATUM_B, DATUM_C] + [dict(centre=b["basic"], diameter=b["size"][0]) for b in BORES]

    # ---- datum face A
    xy = face_samples(holes)
    g, gx, gy, (ex, ey) = face_shape(xy)
    crown = np.flatnonzero(g == 0.0)
    assert len(crown) == 1 and np.all(np.delete(g, crown) > 0), "crown must be the one contact"
    weights = np.array([np.sum(g * (xy[:, 0] - A_CROWN[0])), np.sum(g * (xy[:, 1] - A_CROWN[1]))])
    assert np.all(np.abs(weights) < 1e-12 * np.sum(g) * 100), weights   # KKT (docstring)
    a_points = np.column_stack([xy, -g])
    a_normals = np.column_stack([gx, gy, np.ones_like(g)])        # out of the material (+z)
    a_normals /= np.linalg.norm(a_normals, axis=1)[:, None]
    # plain least-squares plane of the noise-free points, for the record: its tilt from A
    centred = a_points - a_points.mean(axis=0)
    ls_normal = np.linalg.svd(centred)[2][2]
    ls_normal *= np.sign(ls_normal[2])
    ls_tilt = math.atan2(math.hypot(ls_normal[0], ls_normal[1]), ls_normal[2])
    noisy = a_points + rng.normal(0, SIGMA, len(g))[:, None] * a_normals
    scan_rows = []
    write_csv(out / "datum-A.csv", *to_measurement(noisy, a_normals), scan_rows, "datum A")

    # ---- datums B and C, then the bores
    size_datums = {}
    for datum in (DATUM_B, DATUM_C):
        pts, normals, radii = probe_bore(datum, rng)
        noisy = pts + rng.normal(0, SIGMA, len(pts))[:, None] * normals
        write_csv(out / f"datum-{datum['label']}.csv", *to_measurement(noisy, normals),
                  scan_rows, f"datum {datum['label']}")
        size_datums[datum["label"]] = {
            "axis_point": [*datum["centre"], 0.0], "axis_direction": [0.0, 0.0, 1.0],
            "size": {"lower": datum["size"][0], "upper": datum["size"][1]},
            # related envelope = maximum inscribed circle of the points projected along A
            "related_mating_envelope": 2 * radii.min(),
            "form": {"nominal_form_diameter": datum["diameter"], "lobes": datum["lobes"],
                     "lobe_amplitude_um": datum["lobe_amplitude"],
                     "levels": level_heights(datum["depth"], datum["levels"]).tolist(),
                     "points_per_level": datum["per_level"]},
            "points": len(pts)}
    counts = {"datum A": len(g), "datum B": size_datums["B"]["points"],
              "datum C": size_datums["C"]["points"]}
    for bore in BORES:
        pts, normals, radii = probe_bore(bore, rng)
        noisy = pts + rng.normal(0, SIGMA, len(pts))[:, None] * normals
        write_csv(out / f"{bore['id']}.csv", *to_measurement(noisy, normals), scan_rows,
                  f"bore {bore['id']}")
        truth_bores.append(truth_for_bore(bore, radii, pts))
        counts[f"bore {bore['id']}"] = len(pts)

    (HERE / "plan.toml").write_text(plan_text())
    write_scan(scan_rows)
    (HERE / "summary-single-plane.csv").write_text(summary_text(truth_bores))

    truth = {
        "about": "Ground truth of the invented demo part HM-3207 rev C (not a real part). "
                 "Values are noise-free: the measured points add normal probing noise of "
                 f"sigma {SIGMA * 1000:.1f} um. Lengths in mm; frame = the true datum reference "
                 "frame (z out of A's material, origin on B's axis at A, x toward C).",
        "generator": {"script": "generate.py", "seed": SEED, "noise_sigma": SIGMA},
        "units": "mm",
        "placement": {
            "description": f"p_meas = rotation @ p_frame + translation; {YAW_DEG} deg about "
                           f"machine z, then {TILT_RAD * 1e3:.2f} mrad about a horizontal axis "
                           f"at {TILT_AXIS_AZIMUTH_DEG:.0f} deg azimuth",
            "rotation": R_PLACE.tolist(), "translation": T_PLACE.tolist()},
        "frame": {"origin": T_PLACE.tolist(), "x_axis": R_PLACE[:, 0].tolist(),
                  "y_axis": R_PLACE[:, 1].tolist(), "z_axis": R_PLACE[:, 2].tolist()},
        "datums": {
            "A": {"feature": "plane", "association": "tangent-least-squares",
                  "plane_in_frame": "z = 0 (touches the crown only)",
                  "crown": [*A_CROWN, 0.0],
                  "shape": f"z = -g, g = (kx dx^2 + ky dy^2) (1 + ex dx + ey dy), "
                           f"dx = x - {A_CROWN[0]}, dy = y - {A_CROWN[1]}",
                  "kx": A_CURVATURE[0], "ky": A_CURVATURE[1], "ex": ex, "ey": ey,
                  "depth_range_below_tangent_plane": float(g.max()),
                  "least_squares_plane_tilt_rad": ls_tilt,
                  "points": len(g)},
            "B": size_datums["B"], "C": {**size_datums["C"], "basic": list(DATUM_C["centre"])}},
        "points": counts,
        "bores": truth_bores,
        "verdict": verdict(all(b["verdict"] == "conforms" for b in truth_bores)),
        "expected": {b["id"]: b["verdict"] for b in truth_bores},
    }
    with open(HERE / "ground-truth.json", "w") as f:
        json.dump(rounded(truth), f, indent=1)
        f.write("\n")
    for b in truth_bores:
        print(f"{b['id']}: position {b['position']['value']:.4f} / {b['position']['allowed']:.4f}, "
              f"perp {b['perpendicularity']['value']:.4f}, mating {b['size']['mating_envelope']:.4f}, "
              f"2pt max {b['size']['two_point_max']:.4f}, cyl {b['cylindricity']['value'] * 1000:.2f} um"
              f" -> {b['verdict']}: {b['why']}")
    print(f"A: {len(g)} points, depth below tangent plane up to {g.max() * 1000:.2f} um, "
          f"LS plane tilt {ls_tilt * 1e6:.1f} urad")


if __name__ == "__main__":
    main()
