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
  DecisionRule decision;  ///< how every characteristic is decided (decide stage)
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
};

/// Runs the whole check: load_part_inputs, evaluate_part, association_sensitivity (when
/// options.sensitivity), then the decision. Throws InputError for unreadable inputs and
/// FitError (with the feature named) for geometry that cannot be evaluated.
PartCheckResult check_part(const PartPlan& plan, const CheckOptions& options = {});

}  // namespace cylzone
