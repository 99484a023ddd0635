#pragma once
/// \file batch_report.hpp
/// Renderers of a batch (check/batch.hpp, docs/batch.md): the combined CSV (`batch.csv`: the
/// per-part CSV's columns and rows, one row per part and characteristic, with the part's folder,
/// decision and input digests appended), the batch summary as a terminal table and as JSON
/// (`batch-summary.json`, schema `cylzone-batch-1`). Pure functions: no IO. Every output carries
/// the safety caution. docs/report-schema.md documents the columns and keys.

#include <string>
#include <string_view>
#include <vector>

#include "cylzone/check/batch.hpp"
#include "cylzone/report/report.hpp"

namespace cylzone {

inline constexpr std::string_view batch_schema = "cylzone-batch-1";

/// What every part of the batch shares, for the outputs.
struct BatchIdentity {
  std::string plan_name;
  std::filesystem::path plan_file;
  std::string plan_sha256;
  LengthUnit unit = LengthUnit::millimetre;
  /// id, timestamp and notes given for the whole batch (the serial is each part's own).
  PartIdentity part;
};

/// The combined CSV. `part_csv[k]` is format_csv of part k's model (empty for a part that
/// failed): its header and rows are taken as they are, so the columns are the per-part CSV's,
/// followed by `folder, part_verdict, plan_sha256, points_sha256, inputs_sha256`. A part that
/// failed has one row: its serial, the batch's identity, status "not evaluated", the reason,
/// part_verdict "failed", the caution; its other fields empty.
std::string format_batch_csv(const BatchIdentity& identity,
                             const std::vector<BatchPartRecord>& records,
                             const std::vector<std::string>& part_csv);

/// The summary table: parts evaluated, failed (with the reason) and their decisions; per
/// characteristic the counts and the worst part; per position the mean deviation vector, its
/// spread and the finding at the top and bottom of the range. Values in the plan's unit.
std::string format_batch_table(const BatchIdentity& identity,
                               const std::vector<BatchPartRecord>& records,
                               const BatchSummary& summary, const TableOptions& options = {});

/// `batch-summary.json` (schema batch_schema). Lengths in the plan's unit.
std::string format_batch_summary_json(const BatchIdentity& identity,
                                      const std::vector<BatchPartRecord>& records,
                                      const BatchSummary& summary);

}  // namespace cylzone
