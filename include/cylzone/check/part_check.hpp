#pragma once
/// \file part_check.hpp
/// The main job: from a part plan to a decision for every bore and the part. Reads the points,
/// builds the datum reference frame, evaluates each bore over its full depth, applies the
/// datum reference's mobility, runs the datum-association sensitivity study and decides.

#include <filesystem>
#include <optional>
#include <string>
#include <vector>

#include "cylzone/decide/characteristic.hpp"
#include "cylzone/evaluate/bore_evaluation.hpp"
#include "cylzone/evaluate/datum_mobility.hpp"
#include "cylzone/datum/datum_frame.hpp"
#include "cylzone/plan/plan.hpp"

namespace cylzone {

/// One input file, identified for the record.
struct InputRecord {
  std::string role;  ///< "plan", "datum A", "bore P3"
  std::filesystem::path path;
  std::string sha256;  ///< hex digest of the file's bytes
  std::size_t points = 0;
  /// 1-based file line of each point (PointCloud::lines); empty when the format has no lines.
  std::vector<std::size_t> point_lines;
};

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
};

struct CheckOptions {
  bool sensitivity = true;  ///< re-run the frame with every association of A
  BoreEvaluationOptions evaluation;
  MobilityOptions mobility;
  DecisionRule decision;  ///< how every characteristic is decided
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
};

/// Runs the whole check. Throws InputError for unreadable inputs and FitError (with the
/// feature named) for geometry that cannot be evaluated.
PartCheckResult check_part(const PartPlan& plan, const CheckOptions& options = {});

}  // namespace cylzone
