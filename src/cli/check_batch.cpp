// `cylzone check PLAN --parts DIR... --out DIR` (docs/batch.md): finds the parts, checks them on
// the one `threads` option through the library's check_batch, writes each part's report set and
// the batch's combined CSV and summary as one atomic set, prints the summary table.
#include "cli/check_batch.hpp"

#include <unistd.h>

#include <chrono>
#include <cmath>
#include <filesystem>
#include <iostream>
#include <stdexcept>

#include "cli/commands.hpp"
#include "cylzone/check/batch.hpp"
#include "cylzone/core/errors.hpp"
#include "cylzone/io/atomic_write.hpp"
#include "cylzone/plan/plan.hpp"
#include "cylzone/report/batch_report.hpp"
#include "cylzone/report/report.hpp"

namespace cylzone::cli {
namespace {

namespace fs = std::filesystem;

/// Each part's rendered reports, filled on the worker that checked it.
struct PartReports {
  std::string json;
  std::string csv;
  std::string html;
};

/// "3/6 parts checked, about 12 s left" on one terminal line, rewritten in place.
class Progress {
 public:
  explicit Progress(bool enabled) : enabled_(enabled), start_(std::chrono::steady_clock::now()) {}
  void operator()(std::size_t done, std::size_t total) const {
    if (!enabled_) return;
    const double elapsed =
        std::chrono::duration<double>(std::chrono::steady_clock::now() - start_).count();
    const double left = elapsed / static_cast<double>(done) * static_cast<double>(total - done);
    std::cerr << "\rcylzone: " << done << '/' << total << " parts checked";
    if (done < total) std::cerr << ", about " << static_cast<long>(std::ceil(left)) << " s left";
    std::cerr << "   " << (done == total ? "\n" : "") << std::flush;
  }

 private:
  bool enabled_;
  std::chrono::steady_clock::time_point start_;
};

}  // namespace

int run_check_batch(const BatchRun& run) {
  if (run.out.empty()) throw std::invalid_argument("--parts: --out DIR is required for a batch");
  if (!run.given.serial.empty())
    throw std::invalid_argument("--serial: not with --parts (each part's serial is its folder's name)");
  std::vector<fs::path> folders(run.parts.begin(), run.parts.end());
  if (!run.parts_list.empty()) {
    const std::vector<fs::path> listed = read_parts_list(run.parts_list);
    folders.insert(folders.end(), listed.begin(), listed.end());
  }
  const std::vector<BatchPart> parts = batch_parts(folders);

  // The point files are looked up in each part's folder, not beside the plan.
  PartPlan plan = read_plan(run.plan, /*check_files=*/false);
  override_outlier_stages(plan, run.neighbour_filter, run.residual_rejection);
  BatchIdentity identity;
  identity.plan_name = plan.name;
  identity.plan_file = plan.file;
  identity.plan_sha256 = plan.sha256;
  identity.unit = plan.unit;
  identity.part = merged_identity(plan.part, run.given);
  identity.part.serial.clear();
  if (identity.part.timestamp.empty()) identity.part.timestamp = utc_now();  // one for the batch

  // --out: created when missing (its parent must exist); every target checked before any part
  // is evaluated, against every input of every part.
  const fs::path out(run.out);
  std::error_code ec;
  if (!fs::exists(out, ec)) {
    if (!fs::create_directory(out, ec))
      throw InputError(run.out, 0, "cannot create the output folder: " + ec.message());
  } else if (!fs::is_directory(out, ec)) {
    throw InputError(run.out, 0, "--out must name a folder");
  }
  std::vector<fs::path> inputs = plan_inputs(plan);
  for (const BatchPart& part : parts) {
    const std::vector<fs::path> own = plan_inputs(plan_for_part(plan, part.folder));
    inputs.insert(inputs.end(), own.begin() + 1, own.end());  // the plan is already in
  }
  if (!run.parts_list.empty()) inputs.push_back(run.parts_list);
  std::vector<OutputTarget> targets;
  for (const BatchPart& part : parts) {
    targets.push_back({out / (part.serial + ".json"), "part " + part.serial + " JSON"});
    targets.push_back({out / (part.serial + ".csv"), "part " + part.serial + " CSV"});
    if (run.html) targets.push_back({out / (part.serial + ".html"), "part " + part.serial + " HTML"});
  }
  targets.push_back({out / "batch.csv", "batch CSV"});
  targets.push_back({out / "batch-summary.json", "batch summary"});
  validate_outputs(targets, inputs);

  BatchOptions options;
  options.check.sensitivity = run.sensitivity;
  options.threads = run.threads;
  std::vector<PartReports> reports(parts.size());
  // Reports are rendered on the worker that checked the part (pure functions), so a part's
  // full result need not outlive its turn.
  const auto render = [&](std::size_t k, const PartCheckResult& result) {
    ReportModelOptions model_options;
    model_options.part = identity.part;
    model_options.part.serial = parts[k].serial;
    const ReportModel model = make_report_model(result, model_options);
    reports[k].json = format_json(model);
    reports[k].csv = format_csv(model);
    if (run.html) reports[k].html = format_html(model);
  };
  const Progress progress(!run.quiet && isatty(STDERR_FILENO));
  const std::vector<BatchPartRecord> records =
      check_batch(plan, parts, options, render, std::cref(progress));
  const BatchSummary summary = summarize_batch(records);

  std::vector<OutputFile> files;
  std::vector<std::string> part_csv(parts.size());
  for (std::size_t k = 0; k < parts.size(); ++k) {
    if (!records[k].evaluated()) continue;
    part_csv[k] = reports[k].csv;
    files.push_back({{out / (parts[k].serial + ".json"), "part JSON"}, std::move(reports[k].json)});
    files.push_back({{out / (parts[k].serial + ".csv"), "part CSV"}, reports[k].csv});
    if (run.html)
      files.push_back({{out / (parts[k].serial + ".html"), "part HTML"}, std::move(reports[k].html)});
  }
  files.push_back({{out / "batch.csv", "batch CSV"}, format_batch_csv(identity, records, part_csv)});
  files.push_back({{out / "batch-summary.json", "batch summary"},
                   format_batch_summary_json(identity, records, summary)});
  write_outputs(files, inputs, std::cout);

  TableOptions table_options;
  table_options.unicode = utf8_locale();
  if (!run.quiet) std::cout << format_batch_table(identity, records, summary, table_options);
  for (std::size_t k : summary.failed)  // errors are never silenced
    std::cerr << "cylzone: error: part " << one_line(parts[k].serial, 200) << ": "
              << one_line(records[k].error) << '\n';
  if (!summary.failed.empty()) return exit_input_error;
  if (summary.not_conforming > 0) return exit_nonconforming;
  if (summary.not_proven > 0) return exit_not_proven;
  return exit_success;
}

}  // namespace cylzone::cli
