#pragma once
/// \file plausibility.hpp
/// Plausibility checks between the plan and the data: mistakes that leave every figure
/// computable but the result meaningless (a pin evaluated as a hole, inch data read as
/// millimetres, a zone judged far beyond the probed points). Run by check_part between the
/// evaluation and the decision; docs/evaluation.md ("Plausibility checks") states each rule,
/// its threshold and why. No IO, no state: the figures come from the evaluation.
///
/// Surface vectors. A cloud's i,j,k vectors (io/point_cloud.hpp) are read as the surface
/// normal pointing OUT of the material (the free-space side, where the probe comes from; the
/// convention of mesh normals of a solid and of the demo data). So a bore's vectors point
/// toward its axis, a pin's away from it, a slot's toward its centre plane, a tab's away from
/// it, and a plane datum's along its outward normal (against `material_side`).
///
/// Every finding is one line naming the feature, its file or plan key and the numbers in the
/// plan's unit. An error is thrown by require_plausible as an InputError naming the plan file,
/// the line and the key to correct.

#include <cstddef>
#include <string>
#include <vector>

#include "cylzone/check/evaluate_part.hpp"
#include "cylzone/check/part_inputs.hpp"
#include "cylzone/plan/plan.hpp"

namespace cylzone {

struct PlausibilityOptions {
  /// Surface vectors: a vector within this angle (its cosine) of the tangent plane says nothing
  /// about the side (edge, chamfer or bottom points) and is not counted. cos 60 deg.
  double vector_side_cosine = 0.5;
  /// More than this share of the counted vectors on the other kind's side is an error (the
  /// feature is of the other kind or its vectors are reversed); any fewer, at least one, a
  /// warning with the count.
  double vector_error_share = 0.9;
  /// Fitted size outside its limits by more than this many size tolerances (upper - lower): a
  /// warning (a gross machining error, the wrong points or the wrong limits).
  double size_warning_factor = 3.0;
  /// ... by more than this many size tolerances AND by more than `size_error_share` of the
  /// size (the mean of the limits): an error, the points cannot be this feature in this unit.
  double size_error_factor = 10.0;
  double size_error_share = 0.05;
  /// A fitted size within this relative distance of 25.4 (or 1/25.4) times the limits' mean is
  /// named a unit mix-up.
  double unit_ratio_tolerance = 0.05;
  /// The plan's depth range beyond the probed band by more than this many probed lengths: an
  /// error (the evaluation itself warns from a tenth of the probed length, bore_evaluation).
  double depth_error_factor = 3.0;
  /// A projected zone beyond the probed band by more than this many probed lengths: a warning
  /// (the drawing asks for the extrapolation, so never an error).
  double projected_warning_factor = 1.0;
};

enum class FindingSeverity { warning, error };

struct PlausibilityFinding {
  FindingSeverity severity = FindingSeverity::warning;
  /// "datum B", "bore P3": where the warning belongs in the report.
  std::string feature;
  /// The plan key to correct (and its line) for an error.
  PlanLocation where;
  /// One line; lengths in the plan's unit.
  std::string message;
};

struct PlausibilitySummary {
  std::vector<PlausibilityFinding> findings;  ///< datums A, B, C, then the bores, plan order

  bool has_error() const noexcept;
};

/// Checks the evaluated part against its plan: surface vectors against the declared kind of
/// every datum feature and bore, fitted sizes against their limits (with the 25.4 ratio of a
/// unit mix-up named), zones against the fitted diameter when the plan has no limits of size
/// (validate_plan compares them with the limits), and the plan's depth ranges and projected
/// zones against the probed band. `inputs` and `evaluation` are the ones evaluate_part was given
/// and returned for `plan`; throws std::invalid_argument when their counts do not match it.
PlausibilitySummary assess_plausibility(const PartPlan& plan, const PartInputs& inputs,
                                        const PartEvaluation& evaluation,
                                        const PlausibilityOptions& options = {});

/// Throws InputError (the plan file, the line and key of the first error finding, its message)
/// when `summary` holds an error; otherwise returns.
void require_plausible(const PartPlan& plan, const PlausibilitySummary& summary);

/// What check_part runs after evaluate_part: assess_plausibility, require_plausible, then the
/// plan's own warnings (PartPlan::warnings) and each warning finding added to `evaluation`: a
/// bore's to that bore's warnings (without the "bore P1: " prefix), the others to the part's.
void check_plausibility(const PartPlan& plan, const PartInputs& inputs,
                        PartEvaluation& evaluation, const PlausibilityOptions& options = {});

}  // namespace cylzone
