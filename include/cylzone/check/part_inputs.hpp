#pragma once
/// \file part_inputs.hpp
/// The load stage of a part check: every input file read once, its digest taken from exactly
/// the bytes parsed, its points held in memory. Everything after it (evaluate_part.hpp) works
/// on these inputs without touching a file, so a study can re-run the evaluation many times on
/// perturbed copies.

#include <filesystem>
#include <string>
#include <vector>

#include "cylzone/io/point_cloud.hpp"
#include "cylzone/plan/plan.hpp"

namespace cylzone {

/// One input file, identified for the record.
struct InputRecord {
  std::string role;  ///< "plan", "datum A", "bore P3"
  std::filesystem::path path;
  std::string sha256;  ///< hex digest (FIPS 180-4) of the bytes parsed
  std::size_t points = 0;
  /// 1-based file line of each point (PointCloud::lines); empty when the format has no lines.
  std::vector<std::size_t> point_lines;
};

/// A part's measured inputs, in the plan's order.
struct PartInputs {
  /// The plan first (its own digest, PartPlan::sha256), then each datum, then each bore.
  std::vector<InputRecord> records;
  std::vector<PointCloud> datums;  ///< one per plan.datums entry, measurement coordinates
  std::vector<PointCloud> bores;   ///< one per plan.bores entry, measurement coordinates
};

/// Loads every datum's and bore's points (with vectors where the file has them) in the plan's
/// unit: each file is read once and hashed from the same buffer it is parsed from. Throws
/// InputError naming the file for a missing or unreadable file or bad data.
PartInputs load_part_inputs(const PartPlan& plan);

}  // namespace cylzone
