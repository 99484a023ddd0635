#pragma once
// `cylzone check PLAN --parts DIR... --out DIR`: many parts against one plan (docs/batch.md).
#include <cstddef>
#include <optional>
#include <string>
#include <vector>

#include "cylzone/report/report_model.hpp"

namespace cylzone::cli {

/// A batch run as check_command parsed it (the identity and switches already checked there).
struct BatchRun {
  std::string plan;
  std::vector<std::string> parts;  ///< --parts folders
  std::string parts_list;          ///< --parts-list file
  std::string out;                 ///< --out folder
  bool html = false;               ///< an HTML report per part too
  bool quiet = false;
  bool sensitivity = true;
  std::size_t threads = 1;
  PartIdentity given;  ///< from the command line; the serial stays empty (each folder's name)
  std::optional<bool> neighbour_filter;
  std::optional<bool> residual_rejection;
};

/// Runs the batch: a report set per part and batch.csv, batch-summary.json in `out`, the summary
/// table on stdout. Exit code: 2 when any part could not be evaluated (its reports are missing,
/// so the batch cannot be signed off as a whole), else the worst part's (1 before 3 before 0).
int run_check_batch(const BatchRun& run);

}  // namespace cylzone::cli
