#pragma once
/// \file evaluate_part.hpp
/// The evaluation core: from a plan and its loaded inputs (part_inputs.hpp) to every datum and
/// bore result, with no file IO, no printing and no state. It prepares every feature
/// (prepare.hpp), builds the datum reference frame, evaluates every bore over its full depth
/// and applies the datum reference's mobility. Deterministic and re-entrant: the same inputs
/// and options give the same bits, for any `threads`, from any number of callers at once. A
/// Monte Carlo study calls it once per trial on perturbed inputs held in memory.

#include <Eigen/Core>
#include <cstddef>
#include <optional>
#include <string>
#include <vector>

#include "cylzone/check/part_inputs.hpp"
#include "cylzone/core/threads.hpp"
#include "cylzone/datum/datum_frame.hpp"
#include "cylzone/evaluate/bore_evaluation.hpp"
#include "cylzone/decide/characteristic.hpp"
#include "cylzone/evaluate/datum_mobility.hpp"
#include "cylzone/plan/plan.hpp"
#include "cylzone/prepare/prepare.hpp"

namespace cylzone {

/// What to compute beyond the figures themselves. Default: everything. A trial that needs only
/// positions and sizes turns off what it does not read.
struct EvaluationProfile {
  /// Measure how far each Chebyshev fit (mating envelopes, minimum zone, minimum-zone flatness)
  /// can move when its optimum is not proven unique (FitOptions::assess_ambiguity).
  bool ambiguity = true;
  /// Run the stray-point screen of every datum and bore (prepare.hpp).
  bool stray_screen = true;
  /// Two-point (actual local) sizes of every bore (BoreEvaluationOptions::two_point_sizes).
  bool two_point_sizes = true;
  /// Results no characteristic reads: fits no figure rests on, the sampling record, the
  /// surface map (BoreEvaluationOptions::unread_results), datum A's minimum-zone flatness
  /// (DatumFrameOptions::flatness), the fits' reported coverage and covariance
  /// (FitOptions::result_coverage) and their summaries' messages (FitOptions::result_messages).
  bool unread_results = true;
};

struct PartEvaluation;

struct EvaluationOptions {
  /// Fits, sections and the stray-point screen's parameters, for datums and bores alike. Its
  /// `fit.threads`, `fit.assess_ambiguity`, `fit.result_coverage`, `fit.result_messages`,
  /// `two_point_sizes`, `stray_screen` and `stray_points.threads` are set from `threads` and
  /// `profile` by evaluate_part.
  BoreEvaluationOptions bore;
  MobilityOptions mobility;
  EvaluationProfile profile;
  /// The one thread option: every parallel loop of the evaluation (across bores, inside the
  /// fits, in the screen) runs on at most this many threads. Results do not depend on it.
  std::size_t threads = hardware_threads();
  /// An evaluation of the same plan on nearly the same points (a Monte Carlo study's
  /// unperturbed one), or null: every bore's cylinder fits start from that evaluation's
  /// (BoreInput::start, FitOptions::start). The same figures to the fits' tolerance, fewer
  /// iterations. Borrowed: it must outlive the call; read only, so callers on several threads
  /// may share it.
  const PartEvaluation* start = nullptr;
};

/// What the prepare stage did to one feature's points (prepare.hpp): compensation, removed
/// outliers; for the report.
struct FeaturePreparation {
  std::string role;  ///< the feature's input role: "datum A", "bore P3" (InputRecord::role)
  PrepareRecord record;
};

struct PartEvaluation {
  DatumFrameResult datums;
  std::vector<BoreResult> bores;  ///< plan order
  /// Direction into the material at A (measurement coordinates): the plan's or inferred.
  Eigen::Vector3d material_side = Eigen::Vector3d::Zero();
  std::vector<std::string> warnings;
  /// Every datum, then every bore, in plan order.
  std::vector<FeaturePreparation> preparation;
  /// The datum clouds preparation changed (plan order), after compensation and outlier
  /// rejection; a datum passed unchanged has an empty cloud here, so that a dense scan's datum
  /// faces are not held twice. Read them through datum_cloud_used().
  std::vector<PointCloud> datum_clouds;
};

/// The points datum `k`'s frame was built from: the prepared cloud when preparation changed
/// it, else `inputs.datums[k]` (the inputs `evaluation` was computed from). The association
/// study and the uncertainty study build their frames from the same points.
inline const PointCloud& datum_cloud_used(const PartEvaluation& evaluation,
                                          const PartInputs& inputs, std::size_t k) {
  return k < evaluation.datum_clouds.size() && evaluation.datum_clouds[k].points.cols() > 0
             ? evaluation.datum_clouds[k]
             : inputs.datums.at(k);
}

/// Evaluates the part. `inputs` must hold one cloud per plan datum and per plan bore, in plan
/// order (as load_part_inputs gives them; they may also be built in memory).
///
/// A bore whose geometry cannot be evaluated (a FitError from its preparation, fits or
/// evaluation: one probing level, too few points, no point within the depth range, ...) does
/// not stop the others: its BoreResult has `not_evaluated` set to the reason (one line naming
/// the bore and what to fix) and nothing else, every other bore is evaluated exactly as without
/// it, and a pattern it belongs to has no shared datum mobility
/// (BoreResult::mobility_not_evaluated). Throws InputError when the plan has no datum A plane
/// or a rule of the plan fails during evaluation, FitError (with the datum named) when a datum
/// feature cannot be evaluated (every bore's zone is located in the frame all datums build, so
/// nothing could be evaluated), and std::invalid_argument when the clouds do not match the plan.
PartEvaluation evaluate_part(const PartPlan& plan, const PartInputs& inputs,
                             const EvaluationOptions& options = {});

/// Position and perpendicularity of a bore when datum A is associated by another method: shows
/// when the datum method, not the part, explains a difference between software.
struct AssociationSensitivity {
  PlaneAssociation association = PlaneAssociation::tangent_least_squares;
  double position = 0.0;          ///< decision-basis position value under that association
  double perpendicularity = 0.0;
  std::optional<Verdict> position_verdict;          ///< under that association
  std::optional<Verdict> perpendicularity_verdict;
};

struct BoreSensitivity {
  std::string bore_id;
  std::vector<AssociationSensitivity> rows;  ///< one per association, the plan's first
  double position_spread = 0.0;        ///< max - min over the rows
  double perpendicularity_spread = 0.0;
  /// Why the study skipped the bore (no rows): it was not evaluated. Empty otherwise.
  std::string skipped;
};

/// The datum-association sensitivity study, on top of an evaluation: the frame is built again
/// with every other association of A and each bore of `nominal` is moved into it (its fits are
/// invariant under rigid motions, so none is refitted), then the datum mobility is applied
/// again. One entry per bore, plan order; the plan's own association is the first row; each
/// row's verdicts are decided under `rule` (decide stage). A bore that was not evaluated has no
/// rows and BoreSensitivity::skipped says why. No IO.
std::vector<BoreSensitivity> association_sensitivity(const PartPlan& plan,
                                                     const PartInputs& inputs,
                                                     const PartEvaluation& nominal,
                                                     const EvaluationOptions& options = {},
                                                     const DecisionRule& rule = {});

}  // namespace cylzone
