// `cylzone audit PLAN --summary FILE`: re-derives another system's single-plane summary from
// the raw points (audit/summary_audit.hpp). Parses arguments, loads and evaluates the part,
// reads the summary, prints the table and writes the requested reports as a set.
// Exit 0: every summary verdict stands; 1: one is overturned; 2: input error; 3: not decided.
#include <iostream>
#include <memory>
#include <optional>
#include <stdexcept>
#include <string>
#include <utility>
#include <vector>

#include "cli/commands.hpp"
#include "cylzone/audit/summary.hpp"
#include "cylzone/audit/summary_audit.hpp"
#include "cylzone/check/evaluate_part.hpp"
#include "cylzone/check/part_inputs.hpp"
#include "cylzone/check/plausibility.hpp"
#include "cylzone/core/errors.hpp"
#include "cylzone/io/atomic_write.hpp"
#include "cylzone/plan/plan.hpp"
#include "cylzone/report/audit_report.hpp"
#include "cylzone/version.hpp"

namespace cylzone::cli {
namespace {

struct AuditArguments {
  std::string plan;
  std::string summary;
  std::vector<std::string> maps;  ///< KEY=COLUMN
  std::string units;
  double same_plane_tolerance = 0.0;  ///< in the plan's unit; 0: the plan's or the default
  std::string json;
  std::string csv;
  std::string html;
  bool quiet = false;
  std::size_t threads = hardware_threads();
  std::string time;
};

/// The plan's [audit] table with the command line applied key by key.
PlanAudit mapping(const PartPlan& plan, const AuditArguments& args) {
  PlanAudit audit = plan.audit.value_or(PlanAudit{});
  for (const std::string& map : args.maps) {
    const std::size_t eq = map.find('=');
    if (eq == std::string::npos)
      throw InputError({}, 0, "--map: expected KEY=COLUMN, got " + quoted_for_message(map));
    const std::string key = map.substr(0, eq), column = map.substr(eq + 1);
    const auto field = parse_summary_field(key);
    if (!field)
      throw InputError({}, 0,
                       "--map: unknown summary field " + quoted_for_message(key) +
                           " (allowed: id, dx, dy, x, y, z, position, diameter, verdict, dx2, "
                           "dy2, x2, y2, z2)");
    if (column.empty() || column.size() > 200)
      throw InputError({}, 0,
                       "--map " + key + ": a column's header name must hold 1 to 200 characters");
    audit.columns[static_cast<std::size_t>(*field)] = column;
  }
  if (!args.units.empty()) audit.units = parse_unit(args.units);
  if (args.same_plane_tolerance > 0.0)
    audit.same_plane_tolerance = args.same_plane_tolerance * millimetres_per(plan.unit);
  return audit;
}

int run_audit(const AuditArguments& args) {
  if (!args.time.empty() && !is_iso8601_timestamp(args.time))
    throw std::invalid_argument("--time: '" + one_line(args.time, 60) +
                                "' is not an ISO 8601 date-time with a zone "
                                "(e.g. 2026-12-02T17:40:00Z)");
  const PartPlan plan = read_plan(args.plan);
  const PlanAudit audit = mapping(plan, args);
  std::filesystem::path summary_path = args.summary;
  if (summary_path.empty()) summary_path = audit.summary;
  if (summary_path.empty())
    throw InputError(plan.file.string(), 0,
                     "no summary to audit: give --summary FILE or [audit] summary in the plan");
  // Output paths are checked before anything is evaluated: a bad one costs nothing.
  using Renderer = std::string (*)(const AuditReport&);
  std::vector<std::pair<OutputTarget, Renderer>> outputs;
  if (!args.json.empty()) outputs.push_back({{args.json, "--json"}, &format_audit_json});
  if (!args.csv.empty()) outputs.push_back({{args.csv, "--csv"}, &format_audit_csv});
  if (!args.html.empty()) {
    // A document for a browser, not a stream for a pipe: a file only.
    if (is_standard_output(args.html))
      throw std::invalid_argument("--html: '-' is not allowed: the HTML report goes to a file");
    outputs.push_back({{args.html, "--html"}, &format_audit_html});
  }
  std::vector<OutputTarget> targets;
  for (const auto& output : outputs) targets.push_back(output.first);
  std::vector<std::filesystem::path> inputs = plan_inputs(plan);
  inputs.push_back(summary_path);
  validate_outputs(targets, inputs);

  // The summary is read before the evaluation: a malformed one is refused at once.
  SummaryReadOptions read_options;
  read_options.mapping = audit;
  read_options.default_unit = plan.unit;
  const SummaryTable summary = read_summary(summary_path, read_options);

  const PartInputs part = load_part_inputs(plan, LoadOptions{args.threads});
  EvaluationOptions evaluation_options;
  evaluation_options.threads = args.threads;
  PartEvaluation evaluation = evaluate_part(plan, part, evaluation_options);
  check_plausibility(plan, part, evaluation);
  AuditOptions options;
  options.same_plane_tolerance = audit.same_plane_tolerance.value_or(default_same_plane_tolerance);
  options.rule = plan.decision.rule;  // the plan's [decision]: the same rule as `check`

  AuditReport report;
  report.tool_version = version_string;
  report.units = ReportUnits(plan.unit);
  report.plan_name = plan.name;
  PartIdentity given;
  given.timestamp = args.time;
  report.part = merged_identity(plan.part, given);
  if (report.part.timestamp.empty()) report.part.timestamp = utc_now();
  report.inputs = part.records;
  report.inputs.push_back({"summary", summary.file, summary.sha256, 0, {}});
  report.summary_file = summary.file.string();
  report.summary_unit = std::string(unit_name(summary.unit));
  report.summary_deviations = summary.deviations;
  report.warnings = evaluation.warnings;
  for (const BoreResult& b : evaluation.bores)
    for (const std::string& w : b.warnings) report.warnings.push_back("bore " + b.id + ": " + w);
  report.audit = audit_summary(plan, evaluation, summary, options);
  for (const BoreResult& b : evaluation.bores)  // the HTML page's side views
    if (std::optional<DepthProfile> depth = deciding_depth_profile(b))
      report.axes.push_back({b.id, std::move(*depth), b.probed_top, b.probed_bottom});

  std::vector<OutputFile> files;
  for (const auto& [target, render] : outputs) files.push_back({target, render(report)});
  write_outputs(files, inputs, std::cout);
  TableOptions table_options;
  table_options.unicode = utf8_locale();
  bool report_on_stdout = false;
  for (const OutputTarget& t : targets) report_on_stdout |= is_standard_output(t.path);
  if (!args.quiet)
    (report_on_stdout ? std::cerr : std::cout) << format_audit_table(report, table_options);
  if (report.audit.any_overturned()) return exit_nonconforming;
  if (report.audit.any_not_decided()) return exit_not_proven;
  return exit_success;
}

}  // namespace

void add_audit_command(CLI::App& app, CommandResult& result) {
  auto args = std::make_shared<AuditArguments>();
  CLI::App* audit = app.add_subcommand(
      "audit",
      "Re-derive another system's single-plane summary of a part from the raw points and judge "
      "it (exit 1: a summary verdict is overturned, 3: a bore could not be decided)");
  audit->add_option("PLAN", args->plan, "part plan (TOML, docs/plan.md)")->required();
  audit->add_option("--summary", args->summary,
                    "the other system's summary: delimited text with a header row (default: the "
                    "plan's [audit] summary)");
  audit
      ->add_option("--map", args->maps,
                   "KEY=COLUMN, repeatable: the header name of a summary field (id, dx, dy or "
                   "x, y, z, position, diameter, verdict; dx2, dy2 or x2, y2, z2 for a second "
                   "depth); overrides the plan's [audit] columns; default: the key itself")
      ->allow_extra_args(false);
  audit->add_option("--units", args->units, "mm|inch: the summary's unit (default: the plan's)")
      ->check(CLI::IsMember({"mm", "inch"}));
  audit
      ->add_option("--same-plane-tolerance", args->same_plane_tolerance,
                   "largest difference (as a diameter, in the plan's unit) between the "
                   "summary's centre and cylzone's at the same plane (default 0.004 mm)")
      ->check(CLI::Range(1e-9, 1000.0));
  audit->add_option("--json", args->json,
                    "write the audit as JSON to this file ('-': standard output)");
  audit->add_option("--csv", args->csv,
                    "write one CSV row per bore to this file ('-': standard output)");
  audit->add_option("--html", args->html,
                    "write the audit for people (one self-contained HTML file with a side view "
                    "per bore, printable) to this file");
  audit->add_flag("--quiet", args->quiet, "do not print the table");
  audit
      ->add_option("--threads", args->threads,
                   "run at most this many threads; results do not depend on it")
      ->check(CLI::Range(std::size_t{1}, std::size_t{1024}));
  audit->add_option("--time", args->time,
                    "ISO 8601 date-time written into the reports (default: the plan's [part] "
                    "time, else the run's UTC time)");
  audit->callback([args, &result]() {
    result.context = args->plan + ": ";
    result.run = [args]() { return run_audit(*args); };
  });
}

}  // namespace cylzone::cli
