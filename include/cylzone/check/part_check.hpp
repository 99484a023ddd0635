#pragma once
/// \file part_check.hpp
/// The main job: from a part plan to a decision for every bore and the part, composed of its
/// stages: load_part_inputs (part_inputs.hpp: the only file reading), evaluate_part
/// (evaluate_part.hpp: prepare, datum frame, bores, mobility), association_sensitivity, decide.

#include <filesystem>
#include <optional>
#include <string>
#include <vector>

#include "cylzone/check/evaluate_part.hpp"
#include "cylzone/check/part_inputs.hpp"
#include "cylzone/decide/characteristic.hpp"
#include "cylzone/datum/datum_frame.hpp"
#include "cylzone/evaluate/bore_evaluation.hpp"
#include "cylzone/plan/plan.hpp"

namespace cylzone {

struct CheckOptions {
  /// Run the datum-association sensitivity study (association_sensitivity) on top of the
  /// evaluation.
  bool sensitivity = true;
  EvaluationOptions evaluation;
  /// How every characteristic is decided (decide stage); empty: the plan's [decision]
  /// (PartPlan::decision: simple acceptance without one).
  std::optional<DecisionRule> decision;
};

struct PartCheckResult {
  PartPlan plan;
  std::vector<InputRecord> inputs;
  DatumFrameResult datums;
  std::vector<BoreResult> bores;  ///< plan order
  std::vector<BoreSensitivity> sensitivity;
  /// Every bore's characteristics, decided (decide/bore_characteristics.hpp), in plan order.
  std::vector<Characteristic> characteristics;
  /// The part's decision: combine() over the characteristics.
  Verdict verdict = Verdict::conforms;
  std::vector<std::string> warnings;
  /// What the prepare stage did to each feature's points, when the plan asked (evaluate_part).
  std::vector<FeaturePreparation> preparation;
  /// How the plan's whole-part scan was segmented (PartInputs::scan); empty without a [scan].
  std::optional<ScanSegmentation> scan;
};

/// Runs the whole check: load_part_inputs, evaluate_part, check_plausibility (plausibility.hpp),
/// association_sensitivity (when options.sensitivity), then the decision. A bore that cannot be
/// evaluated is reported with every characteristic its plan asks for not proven (evaluate_part,
/// bore_characteristics), so the part's verdict is then not_proven unless something is proven
/// not to conform. Throws InputError for unreadable inputs, a wrong plan, and a plan and data
/// that cannot describe the same part (plan file, line, key); FitError (with the datum named)
/// when a datum feature cannot be evaluated.
PartCheckResult check_part(const PartPlan& plan, const CheckOptions& options = {});

/// The same on inputs already loaded or built in memory (part_inputs.hpp): evaluate_part,
/// association_sensitivity (when options.sensitivity), then the decision; no file is read.
/// Throws as evaluate_part does.
PartCheckResult check_part(const PartPlan& plan, const PartInputs& inputs,
                           const CheckOptions& options = {});

/// The same on an evaluation already made: `evaluation` must be evaluate_part(plan, inputs,
/// options.evaluation). For a caller that also hands that evaluation to a study (the Monte Carlo
/// study of uncertainty/monte_carlo.hpp) so the part is evaluated once: pass a copy, or move it
/// in when nothing else needs it. Throws as check_plausibility does.
PartCheckResult check_part(const PartPlan& plan, const PartInputs& inputs,
                           PartEvaluation evaluation, const CheckOptions& options = {});

}  // namespace cylzone
