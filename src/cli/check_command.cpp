// `cylzone check PLAN`: the main job. Parses arguments, runs the library's part check, prints
// the table and writes the requested reports (all of them or none, io/atomic_write.hpp).
// Exit 0: all conform; 1: something does not conform (or is not proven); 2: input error.
#include <iostream>
#include <memory>
#include <string>
#include <utility>
#include <vector>

#include "cli/commands.hpp"
#include "cylzone/check/part_check.hpp"
#include "cylzone/io/atomic_write.hpp"
#include "cylzone/plan/plan.hpp"
#include "cylzone/report/report.hpp"

namespace cylzone::cli {
namespace {

struct CheckArguments {
  std::string plan;
  std::string json;
  std::string csv;
  bool no_sensitivity = false;
  bool quiet = false;
  std::size_t threads = hardware_threads();
};

/// Every file the plan reads: reports must never be written over one of them.
std::vector<std::filesystem::path> plan_inputs(const PartPlan& plan) {
  std::vector<std::filesystem::path> inputs{plan.file};
  for (const PlanDatum& d : plan.datums) inputs.push_back(d.points);
  for (const PlanBore& b : plan.bores) inputs.push_back(b.points);
  return inputs;
}

int run_check(const CheckArguments& args) {
  const PartPlan plan = read_plan(args.plan);
  // Output paths are checked before the evaluation: a bad one costs nothing and leaves nothing.
  using Renderer = std::string (*)(const ReportModel&);
  std::vector<std::pair<OutputTarget, Renderer>> outputs;
  if (!args.json.empty()) outputs.push_back({{args.json, "--json"}, &format_json});
  if (!args.csv.empty()) outputs.push_back({{args.csv, "--csv"}, &format_csv});
  std::vector<OutputTarget> targets;
  for (const auto& output : outputs) targets.push_back(output.first);
  validate_outputs(targets, plan_inputs(plan));

  CheckOptions options;
  options.sensitivity = !args.no_sensitivity;
  options.evaluation.threads = args.threads;
  const PartCheckResult result = check_part(plan, options);
  const ReportModel model = make_report_model(result);

  std::vector<std::filesystem::path> inputs;
  for (const InputRecord& input : result.inputs) inputs.push_back(input.path);
  // Render everything, then commit the files as a set: all of them or none.
  std::vector<OutputFile> files;
  for (const auto& [target, render] : outputs) files.push_back({target, render(model)});
  write_outputs(files, inputs, std::cout);
  // A report on standard output keeps it machine-readable: the table then goes to stderr.
  bool report_on_stdout = false;
  for (const OutputTarget& t : targets) report_on_stdout |= is_standard_output(t.path);
  if (!args.quiet) (report_on_stdout ? std::cerr : std::cout) << format_table(model);
  switch (model.verdict) {
    case Verdict::conforms: return exit_success;
    case Verdict::does_not_conform: return exit_nonconforming;
    case Verdict::not_proven: return exit_not_proven;
  }
  return exit_not_proven;
}

}  // namespace

void add_check_command(CLI::App& app, CommandResult& result) {
  auto args = std::make_shared<CheckArguments>();
  CLI::App* check = app.add_subcommand(
      "check", "Check every bore of a part plan against its zones over the full depth");
  check->add_option("PLAN", args->plan, "part plan (TOML, docs/plan.md)")->required();
  check->add_option("--json", args->json,
                    "write the complete report as JSON to this file ('-': standard output)");
  check->add_option("--csv", args->csv,
                    "write one CSV row per characteristic to this file ('-': standard output)");
  check->add_flag("--no-sensitivity", args->no_sensitivity,
                  "skip re-evaluating with the other associations of datum A");
  check->add_flag("--quiet", args->quiet,
                  "do not print the table (it goes to stderr when a report goes to stdout)");
  check->add_option("--threads", args->threads,
                    "run at most this many threads (default: the machine's cores); results do "
                    "not depend on it")
      ->check(CLI::Range(std::size_t{1}, std::size_t{1024}));
  check->callback([args, &result]() {
    result.context = args->plan + ": ";
    result.run = [args]() { return run_check(*args); };
  });
}

}  // namespace cylzone::cli
