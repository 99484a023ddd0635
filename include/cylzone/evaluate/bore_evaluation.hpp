#pragma once
/// \file bore_evaluation.hpp
/// Evaluation of one bore in the datum reference frame: its fits, the toleranced axis, position
/// over the full depth (or a projected zone), perpendicularity to A, size, form, bonus and
/// virtual condition. Values only: the decide stage (decide/bore_characteristics.hpp) compares
/// them with their limits. docs/evaluation.md gives the definitions and sources.

#include <Eigen/Core>
#include <optional>
#include <string>
#include <vector>

#include "cylzone/evaluate/axis_zone.hpp"
#include "cylzone/evaluate/sampling_coverage.hpp"
#include "cylzone/evaluate/surface_map.hpp"
#include "cylzone/fit/fit_cylinder.hpp"
#include "cylzone/plan/plan.hpp"
#include "cylzone/fit/sections.hpp"
#include "cylzone/prepare/prepare.hpp"
#include "cylzone/prepare/stray_points.hpp"

namespace cylzone {


/// Where the evaluated range of heights comes from. Only `plan_depth` and `projected_zone` are
/// ranges the drawing fixes; `probed_extent` means the bore's full depth is unknown to the tool
/// and the zone was checked over the probed band only.
enum class RangeSource {
  plan_depth,              ///< both ends from the plan's `depth`
  probed_extent,           ///< no `depth` in the plan: the probed extent of the bore's points
  plan_depth_and_probed,   ///< one end from the plan's `depth`, the other the probed extent
  projected_zone,          ///< a projected tolerance zone above A
};

/// "plan depth", "probed extent", "plan depth and probed extent", "projected zone".
inline const char* range_source_name(RangeSource s) noexcept {
  switch (s) {
    case RangeSource::plan_depth: return "plan depth";
    case RangeSource::probed_extent: return "probed extent";
    case RangeSource::plan_depth_and_probed: return "plan depth and probed extent";
    case RangeSource::projected_zone: return "projected zone";
  }
  return "probed extent";
}

/// Position (cylindrical zone about the true-position axis) over the evaluated range.
struct PositionResult {
  PlanTolerance spec;
  /// Heights evaluated, along the nominal direction from A (datum frame z for a perpendicular
  /// bore): the plan's depth, else the probed extent; a projected zone: [0, projected height].
  double range_top = 0.0;
  double range_bottom = 0.0;
  bool projected = false;     ///< range is a projected tolerance zone above A
  RangeSource range_source = RangeSource::plan_depth;
  double value = 0.0;         ///< diameter: 2 x largest radial deviation over the range
  double bonus = 0.0;
  double allowed = 0.0;       ///< tolerance + bonus
  AxisDeviation top;          ///< at range_top: (dx, dy) and the single-plane 2D position
  AxisDeviation bottom;       ///< at range_bottom
  AxisDeviation worst;        ///< where the radial deviation is largest
  /// First height, scanning from the top of the range down, where the axis is outside the
  /// allowed zone; empty when it stays inside.
  std::optional<double> leaves_zone_at;
  /// Median-line evaluation only: the section centres within the range, from the top down. The
  /// median line is taken as straight between centres where it leaves the zone.
  std::vector<AxisDeviation> section_centres;
};

/// Perpendicularity to A: smallest cylinder perpendicular to A containing the axis over the range.
struct PerpendicularityResult {
  PlanTolerance spec;
  double range_top = 0.0;
  double range_bottom = 0.0;
  double value = 0.0;
  double bonus = 0.0;
  double allowed = 0.0;
};

/// Sizes (diameters, mm). The decide stage applies the limits as ASME Y14.5-2018 Rule #1 does
/// for a bore: the actual mating envelope must not be smaller than the lower limit, and every
/// actual local (two-point) size must lie within the limits. Without any opposed point pair
/// the upper limit is checked with the minimum material envelope (a warning says so).
struct SizeResult {
  std::optional<SizeLimits> limits;
  double least_squares = 0.0;
  double mating_envelope = 0.0;            ///< unrelated: maximum inscribed cylinder (free axis)
  /// Maximum inscribed cylinder with its axis along the nominal direction (perpendicular to A).
  double related_mating_envelope = 0.0;
  double minimum_material_envelope = 0.0;  ///< minimum circumscribed cylinder (free axis)
  double two_point_min = 0.0;              ///< actual local sizes from opposed points in sections
  double two_point_max = 0.0;
  std::size_t two_point_count = 0;
};

struct FormResult {
  double cylindricity = 0.0;  ///< minimum-zone radial separation
  std::optional<double> tolerance;
};

/// A rigid motion of the frame in the plane of A: rotation about the frame's z axis through the
/// origin (datum B's axis), then a shift in x, y.
struct FrameMotion {
  Eigen::Vector2d shift = Eigen::Vector2d::Zero();
  double rotation_rad = 0.0;
};

/// The toleranced feature must not violate its virtual condition boundary (the surface
/// interpretation of a tolerance at MMC/LMC, ASME Y14.5-2018; ISO 2692:2021 maximum/least
/// material virtual condition). For position the boundary is a perfect cylinder of the virtual
/// condition size on the true-position axis, over the evaluated depth inside the material (a
/// projected zone: over the zone above A, with the perfect envelope extended into it). For a
/// perpendicularity at MMC/LMC without a material-modified position, the boundary is
/// perpendicular to A and free in location.
///  * MMC (bore): `clearance` is the diameter of the largest cylinder on that axis (or
///    perpendicular to A) clear of every point; it conforms when clearance >= boundary. A
///    cylinder on an axis that does not lie inside the bore is clear of no surface: when the
///    true-position axis leaves the actual mating envelope anywhere over the depth, or the
///    points do not surround the envelope's axis in every section, the clearance is the
///    conservative envelope figure D - 2 max|e| (e: the envelope axis' offset from the
///    true-position axis), negative when the axis lies outside the bore (`basis` says which).
///  * LMC (bore): `clearance` is the diameter of the smallest such cylinder containing every
///    point; it conforms when clearance <= boundary. It needs no such guard: a cylinder that
///    contains every point contains their convex hull, wherever its axis lies.
struct VirtualConditionResult {
  double boundary = 0.0;   ///< virtual condition size (bore at MMC: MMC - t; at LMC: LMC + t)
  double clearance = 0.0;  ///< see above; signed
  /// The material condition of the boundary: MMC (clearance must reach the boundary) or LMC
  /// (the boundary must contain the points); the decide stage compares accordingly.
  MaterialCondition condition = MaterialCondition::mmc;
  bool on_true_position = true;   ///< false: perpendicularity's boundary, free in location
  /// How the clearance was found, for people, e.g. "nearest point", or why the conservative
  /// envelope figure was taken ("the true-position axis lies outside the actual mating
  /// envelope at z = -60.0000: the boundary cannot be clear").
  std::string basis;
  /// True when the conservative envelope figure replaced the nearest-point one (the axis
  /// outside the envelope, or the points not surrounding it): the reports then say why.
  bool conservative = false;
  /// On the true position at MMC: the points surround the actual mating envelope's axis in
  /// every section within the depth (largest angular gap below 180 degrees), so an axis inside
  /// the envelope lies inside the bore. Motion-invariant, found once.
  bool envelope_surrounded = true;
  /// The frame motion the figure was taken after (datum mobility), as
  /// position_after_frame_motion applies it; empty in the frame as built.
  std::optional<FrameMotion> motion;
  /// What the datum reference left free (FrameMobility::description), with the motion.
  std::string motion_reason;
};

struct TiltResult {
  double angle_rad = 0.0;     ///< angle of the toleranced axis from the nominal direction
  double azimuth_deg = 0.0;   ///< direction of the tilt in the frame, from +x toward +y
};

struct BoreResult {
  std::string id;
  BoreAxisMethod axis_method = BoreAxisMethod::mating_envelope;
  Axis axis;                  ///< toleranced axis, datum frame (median line: its LS line)
  StraightAxis axis_in_zone;  ///< the same in zone coordinates
  /// Zone frame; w is the plan's nominal direction, reversed if it was given pointing into the
  /// material, so heights inside the material are negative.
  ZoneFrame zone;
  double probed_top = 0.0;    ///< height extent of the bore's points
  double probed_bottom = 0.0;
  /// Where the bore's own depth range (perpendicularity, position unless projected) comes from.
  RangeSource depth_source = RangeSource::plan_depth;
  CylinderFit least_squares;      ///< datum frame
  CylinderFit mating_envelope;    ///< maximum inscribed, free axis
  CylinderFit related_envelope;   ///< maximum inscribed, axis perpendicular to A
  CylinderFit minimum_material;   ///< minimum circumscribed, free axis
  CylinderFit minimum_zone;       ///< cylindricity
  std::vector<SectionCircle> sections;  ///< LS circles at the probed levels (median line)
  /// Suspect points among the bore's points, screened against the least-squares cylinder's
  /// residuals (stray_points.hpp) when it was prepared (prepare.hpp): the prepare record.
  /// Reported only: every figure uses all points.
  StrayPointReport stray_points;
  TiltResult tilt;
  SizeResult size;
  FormResult form;
  std::optional<PositionResult> position;
  std::optional<PerpendicularityResult> perpendicularity;
  std::optional<VirtualConditionResult> virtual_condition;
  /// On the true position, not projected: the bore's points within the evaluated depth (datum
  /// frame), which a moved frame's boundary check measures again. Empty otherwise, and empty
  /// in evaluate_part's results when the bore's datum reference leaves the frame fixed (no
  /// moved frame will measure them: they are released once the bore is evaluated).
  Eigen::Matrix3Xd boundary_points;
  /// The virtual condition on the true position re-evaluated after the allowed frame motion
  /// that best clears the boundaries of every bore with the same datum reference (simultaneous
  /// requirement), chosen on its own (the surface interpretation is a requirement of its own,
  /// not the position's motion). Empty when the frame is fully fixed. When present, it decides
  /// the virtual condition characteristic.
  std::optional<VirtualConditionResult> virtual_condition_with_mobility;
  /// Position re-evaluated after the best frame motion the datum reference allows (datum
  /// feature shift at MMB, or degrees of freedom it leaves free), shared by all bores with the
  /// same datum reference (simultaneous requirement). Empty when the frame is fully fixed.
  /// When present, it decides the position characteristic (decide stage).
  std::optional<PositionResult> position_with_mobility;
  std::optional<FrameMotion> mobility_motion;
  std::string mobility_reason;  ///< e.g. "datum B at MMB: shift up to 0.0123"
  /// How datum C's simulator was read: "fixed_at_basic", "translating" or "none"
  /// (tertiary_simulator_name).
  std::string mobility_c_simulator;
  std::vector<std::string> warnings;

  // ---- Evaluation status (docs/evaluation.md, "A bore that cannot be evaluated").
  /// Empty when the bore was evaluated. Otherwise why its geometry could not be evaluated: one
  /// printable line naming the bore and what to fix (check stage, evaluate_part); only `id`
  /// and `axis_method` are then meaningful, and the decide stage reports every characteristic
  /// the plan asks for as not proven.
  std::string not_evaluated;
  /// The axis direction was held at the nominal direction (plan `axis_direction = "nominal"`):
  /// position is evaluated on that axis, perpendicularity is not evaluated.
  bool direction_held = false;
  /// Why the position after datum mobility cannot be evaluated: another bore of the pattern
  /// (simultaneous requirement) was not evaluated. `position_with_mobility` is then empty and
  /// `position` (frame fixed) is shown for comparison.
  std::string mobility_not_evaluated;
  /// Sampling adequacy (sampling_coverage.hpp): the probed span along the nominal direction
  /// against the evaluated range (the bore's depth joined with a projected zone), the sections
  /// cut for the median line and two-point sizes, the angular coverage about the least-squares
  /// axis. Its warnings are also among `warnings`. Motion-invariant, found once. Set by
  /// evaluate_bore; empty in a result built otherwise.
  std::optional<SamplingCoverage> sampling;
  /// The bore's points' least-squares residuals unrolled, angle against depth, averaged per
  /// cell (surface_map.hpp), in the frame as built: for the report's surface map. Not moved by
  /// moved_to_frame (the sensitivity study does not draw it).
  SurfaceMap surface_map;

  bool evaluated() const noexcept { return not_evaluated.empty(); }
};

struct BoreEvaluationOptions {
  FitOptions fit;
  /// Section levels for the median line and two-point sizes: gap (mm) that separates probed
  /// levels; scanned clouds without levels are cut into slabs of this thickness.
  double section_gap = 0.5;
  std::size_t min_section_points = 6;
  /// Two-point (actual local) sizes. Off (e.g. Monte Carlo trials of position only), none is
  /// computed and the upper size limit is checked with the minimum material envelope, with a
  /// warning saying so.
  bool two_point_sizes = true;
  /// The prepare stage evaluate_bore(plan, points) runs (bore_prepare_options).
  bool stray_screen = true;
  /// Compute results no characteristic of the bore reads (decide/bore_characteristics.hpp).
  /// Off (Monte Carlo trials), evaluate_bore skips, leaving them default: the minimum-zone
  /// cylinder when the plan gives no cylindricity tolerance; the related mating envelope
  /// unless a perpendicularity-only virtual condition at MMC rests on it; the minimum material
  /// envelope unless an LMC tolerance or the upper size limit (no two-point sizes) rests on it;
  /// the sampling record and the surface map. Every characteristic's value is the same bits.
  bool unread_results = true;
  StrayPointOptions stray_points;
  /// Sampling thresholds where the plan gives none (PlanBore::sampling).
  SamplingThresholds sampling;
  /// The grid of BoreResult::surface_map.
  SurfaceMapOptions surface_map;
  /// Per-point residuals kept in the result: the values of the five cylinders' residuals and
  /// of the section circles' (Residuals::values) stay when the bore has at most this many
  /// points; otherwise each array is released as soon as its last reader is done (the surface
  /// map, the envelope's suspect contacts, the sections), well before the bore's evaluation
  /// ends (rms and form stay). No report reads the values (the surface map is their bounded
  /// form), so two dense bores evaluated at once do not hold 40 bytes a point each. The
  /// default keeps them for every probed bore (hundreds to thousands of points) and releases
  /// them for dense scans; evaluate_part does the same for the datum features' fits.
  std::size_t residuals_kept_up_to = 50000;
};

/// One bore's specification paired with its prepared points, in the datum frame. Both are
/// referenced, not copied: they must outlive the call.
struct BoreInput {
  const PlanBore& plan;
  const PreparedFeature& prepared;
  /// The same bore's evaluation on nearly the same points (a Monte Carlo study's unperturbed
  /// one), or null: each cylinder fit then starts from its counterpart there
  /// (FitOptions::start), which changes the iterations, not the figures. Borrowed.
  const BoreResult* start = nullptr;
};

/// Evaluates one prepared bore; the prepare record's suspect points are checked against the
/// mating envelopes' contacts and reported. No IO, no state. Throws FitError when the points
/// cannot determine the bore.
BoreResult evaluate_bore(const BoreInput& bore, const BoreEvaluationOptions& options = {});

/// The prepare options of a bore (prepare.hpp): its least-squares cylinder with a free axis
/// started from and signed by the nominal direction, the screen as `options` say. Throws
/// FitError for a nominal direction of zero length or parallel to A.
PrepareOptions bore_prepare_options(const PlanBore& bore, const BoreEvaluationOptions& options);

/// Prepares `points` (datum frame) with bore_prepare_options and evaluates them.
BoreResult evaluate_bore(const PlanBore& bore, const Eigen::Matrix3Xd& points,
                         const BoreEvaluationOptions& options = {});

/// Re-evaluates position of an already-fitted bore after the frame moves by a rigid motion
/// within the plane of A: the moved frame has its origin at `shift` and its x axis turned by
/// `rotation_rad` about z (both in the old frame), so a point p of the old frame has
/// coordinates R(rotation)^T (p - shift) in the moved one. The toleranced axis (or the median
/// line's section centres) is transformed, the range, bonus and allowed zone are kept. Used for
/// datum mobility (MMB) and free degrees of freedom. The virtual condition is not re-evaluated
/// (it needs the points). Throws FitError when the bore has no position tolerance.
PositionResult position_after_frame_motion(const BoreResult& bore, const PlanBore& plan,
                                           const FrameMotion& motion);

/// The virtual condition on the true position re-evaluated after the frame moves by `motion`
/// (as position_after_frame_motion): the true-position axis moves with the frame, the bore's
/// points and envelopes stay. The boundary, condition and basis rules are those of
/// evaluate_bore, and the motion is recorded in the result. Throws FitError when the bore has
/// no virtual condition on the true position.
VirtualConditionResult virtual_condition_after_frame_motion(const BoreResult& bore,
                                                            const FrameMotion& motion);

/// The bore's frame-dependent figures (axis, tilt, position, perpendicularity) recomputed after
/// the datum frame changes by a rigid motion, q_new = rotation q_old + translation, without
/// refitting: every fit except the related envelope is invariant under rigid motions of the
/// points, so its axis and the section centres are moved instead. Used by the sensitivity study
/// (datum A associated by another method). The boundary points are moved with the frame; the
/// related envelope, the virtual condition clearance and mobility results are carried over
/// unchanged.
BoreResult moved_to_frame(const BoreResult& bore, const PlanBore& plan,
                          const Eigen::Matrix3d& rotation, const Eigen::Vector3d& translation);

}  // namespace cylzone
