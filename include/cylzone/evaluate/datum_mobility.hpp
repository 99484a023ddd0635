#pragma once
/// \file datum_mobility.hpp
/// What a datum reference leaves free, and the best use of it. A datum feature of size
/// referenced at MMB may shift within its simulator (ASME Y14.5-2018, datum feature shift); a
/// reference without C leaves rotation about B free, one with A alone leaves translation free as
/// well. Datum C's simulator stays at its basic location relative to B's unless the reference
/// marks it translating (TertiarySimulator). Bores with the same datum reference are one
/// pattern and move together (the simultaneous requirement of ASME Y14.5-2018, from memory for
/// the clause number). The part conforms when some allowed motion puts every bore of the pattern
/// inside its zone, so the motion chosen minimises the largest ratio position / allowed over the
/// pattern.

#include <Eigen/Core>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "cylzone/evaluate/bore_evaluation.hpp"
#include "cylzone/datum/datum_frame.hpp"
#include "cylzone/plan/plan.hpp"

namespace cylzone {

/// How datum C's simulator stands relative to B's when the frame may move. ASME Y14.5-2018
/// (from memory for the clause) keeps datum feature simulators at their basic locations
/// relative to one another unless the translation modifier is applied, written "C(T)" in a plan.
enum class TertiarySimulator {
  none,            ///< no datum C in the reference, or C a plane
  fixed_at_basic,  ///< C's simulator at its basic location (the default)
  translating,     ///< C's simulator slides along C's basic direction
};
/// "none", "fixed_at_basic", "translating": the report's names.
std::string_view tertiary_simulator_name(TertiarySimulator simulator) noexcept;

struct FrameMobility {
  bool translation_free = false;  ///< no B in the reference
  bool rotation_free = false;     ///< no C in the reference
  double shift_allowance = 0.0;   ///< B at MMB: radius of the allowed shift, mm (LMB: 0, a note)
  /// C a feature of size at RMB (or at MMB without room) while the frame shifts, its simulator
  /// translating (C(T), or a slot or tab): the rotation follows so that C stays on the ray from
  /// the origin at its basic angle.
  bool rotation_follows_c = false;
  /// C a bore or pin, its simulator fixed at basic: without room of its own (RMB, or MMB with
  /// none) while the frame shifts, the part's C axis stays on C's simulator, which lies on the
  /// basic ray at `c_held_distance` from the moved origin, so the part turns about C's axis
  /// within B's clearance: at rotation theta the origin is s = c - R(theta) c_held, with c_held
  /// the point of the ray at that distance, allowed while |s| <= shift_allowance. With room at
  /// MMB (c_shift_allowance), the origin may be anywhere within that room of this s and within
  /// B's clearance of the frame's origin. The unmoved frame is then allowed only when C lies
  /// within its room of its basic distance.
  bool rotation_about_c = false;
  /// C's basic distance from B when it is within B's clearance of C's actual distance; else
  /// the nearest distance that is, where C's expanding simulator meets C with B's clearance
  /// used up along C's direction, and a note says so.
  double c_held_distance = 0.0;
  /// The reading of C's simulator that the mobility applies (a slot or tab keeps the
  /// translating reading, with a note when the reference asked for the default:
  /// docs/evaluation.md).
  TertiarySimulator c_simulator = TertiarySimulator::none;
  /// C's axis on A, frame coordinates; the frame was clocked so that it lies on its basic ray.
  Eigen::Vector2d c_location = Eigen::Vector2d::Zero();
  /// C at MMB: how far C's axis may move off the ray from the origin at its basic angle, mm
  /// (C clocks the frame only, as the frame's C at RMB does: docs/evaluation.md), or off its
  /// basic location when rotation_about_c. For a slot
  /// or tab, how far its centre plane may move off the MMB simulator's at the start.
  double c_shift_allowance = 0.0;
  /// C a slot or tab at MMB: its simulator, two parallel planes `mmb_width` apart about a
  /// centre plane through the moved origin at C's basic angle, must leave a slot's faces
  /// outside it and a tab's inside it. The shifts it allows at a rotation form a strip across
  /// the centre plane, found exactly from the faces' extreme points rather than from C's
  /// location alone, because a rotation moves the far end of a long face furthest.
  struct WidthSimulator {
    bool internal = true;  ///< slot (true) or tab
    double mmb_width = 0.0;  ///< mm
    /// Convex hull vertices of each face's points projected onto A, frame coordinates; the
    /// positive face lies on the side of +z x (C's basic direction).
    std::vector<Eigen::Vector2d> positive_face;
    std::vector<Eigen::Vector2d> negative_face;
  };
  std::optional<WidthSimulator> c_width;
  /// What the reference asks for that the mobility does not apply (e.g. a datum at LMB), so
  /// that the result is conservative and says why.
  std::vector<std::string> notes;
  bool any() const noexcept {
    return translation_free || rotation_free || shift_allowance > 0.0 || c_shift_allowance > 0.0;
  }
  std::string description() const;  ///< e.g. "datum B at MMB: shift up to 0.012 mm"
};

/// The mobility a datum reference leaves, given the frame that was built. `c_basic_location`
/// is datum C's basic location in the frame (the plan's); it is needed when C is a bore or pin
/// whose simulator stays fixed at basic while B shifts, and FitError says so when it is absent.
FrameMobility mobility_of(const std::vector<DatumReference>& datums, const DatumFrameResult& frame,
                          const std::optional<Eigen::Vector2d>& c_basic_location = std::nullopt);

struct MobilityOptions {
  int max_iterations = 200;  ///< per one-dimensional search
  double tolerance = 1e-10;  ///< on the worst ratio
};

struct MobilityResult {
  FrameMotion motion;
  double worst_ratio = 0.0;  ///< largest position / allowed over the pattern after the motion
  std::vector<PositionResult> positions;  ///< parallel to the input bores
  int iterations = 0;  ///< rotations examined by the outer search (1 when rotation is fixed)
};

/// Best motion for a pattern of already-evaluated bores (each with a position tolerance): the
/// motion (FrameMotion, as position_after_frame_motion applies it) that minimises the largest
/// position / allowed over the pattern, subject to the mobility. The result is never worse than
/// the unmoved frame when that frame is allowed (it is not when C's simulator, fixed at basic,
/// holds C away from its place in the frame). Where the allowed set is open about the searches'
/// answer (no datum C tying shift and rotation together), the answer is polished by Newton's
/// method on the minimax first-order conditions, so that the motion is located to rounding and
/// the figures of bores that do not bind do not depend on how the part sat on the machine.
/// Where the equally good motions form a flat set (e.g. one bore binding by its tilt, which any
/// turn about its centre leaves as it is), the motion of that set with the least sum of squared
/// ratios over every evaluated point of the pattern is taken (a lexicographic second stage, by
/// the same Newton polish on t + eps S: docs/evaluation.md), so that it too depends on the part
/// alone. With datum C tying shift and rotation, the searches' answer stands.
/// Deterministic. Throws FitError when a bore has no position result or the inputs are not
/// parallel.
MobilityResult best_frame_motion(const std::vector<const BoreResult*>& bores,
                                 const std::vector<const PlanBore*>& plans,
                                 const FrameMobility& mobility,
                                 const MobilityOptions& options = {});

/// Best motion for the virtual condition boundaries of a pattern (bores with the same datum
/// reference, each with a virtual condition on its true position): the surface interpretation
/// is one simultaneous requirement too, so some one allowed motion must clear every bore's
/// boundary. The motion chosen maximises the smallest margin over the pattern, clearance -
/// boundary at MMC and boundary - clearance at LMC, with the clearance figure of
/// virtual_condition_after_frame_motion (so a true-position axis that leaves a bore counts as
/// a negative clearance, and the search is led back into the bore). Among motions with the
/// same smallest margin, the one with the larger mean margin is taken (a weight of 1e-6), so
/// that the figures of bores that do not bind do not depend on the search's path, nor on how
/// the part sat on the machine. The same searches as best_frame_motion (docs/evaluation.md);
/// the function is not convex in the shift, only close to it near a bore's centre, so the
/// result is a local optimum reached from the unmoved frame's neighbourhood. Deterministic.
struct BoundaryMobilityResult {
  FrameMotion motion;
  /// Smallest margin over the pattern after the motion, mm (negative: some boundary is
  /// violated).
  double worst_margin = 0.0;
  std::vector<VirtualConditionResult> boundaries;  ///< parallel to the input bores
  int iterations = 0;  ///< rotations examined by the outer search (1 when rotation is fixed)
};

/// Throws FitError when a bore has no virtual condition on its true position.
BoundaryMobilityResult best_boundary_motion(const std::vector<const BoreResult*>& bores,
                                            const FrameMobility& mobility,
                                            const MobilityOptions& options = {});

}  // namespace cylzone
