// `cylzone check PLAN`: the main job. Parses arguments, runs the library's part check, prints
// the table and writes the requested reports. Exit 0: all conform; 1: something does not
// conform; 2: input error.
#include <iostream>
#include <memory>
#include <string>
#include <vector>

#include "cli/commands.hpp"
#include "cylzone/check/part_check.hpp"
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

int run_check(const CheckArguments& args) {
  const PartPlan plan = read_plan(args.plan);
  CheckOptions options;
  options.sensitivity = !args.no_sensitivity;
  options.evaluation.threads = args.threads;
  const PartCheckResult result = check_part(plan, options);

  std::vector<std::filesystem::path> inputs;
  for (const InputRecord& input : result.inputs) inputs.push_back(input.path);
  // Render everything before writing anything, so an error cannot leave one report behind.
  const std::string json = args.json.empty() ? std::string() : format_json(result);
  const std::string csv = args.csv.empty() ? std::string() : format_csv(result);
  if (!args.json.empty()) write_file_atomically(args.json, json, inputs);
  if (!args.csv.empty()) write_file_atomically(args.csv, csv, inputs);
  if (!args.quiet) std::cout << format_table(result);
  return result.verdict == Verdict::conforms ? exit_success : exit_nonconforming;
}

}  // namespace

void add_check_command(CLI::App& app, CommandResult& result) {
  auto args = std::make_shared<CheckArguments>();
  CLI::App* check = app.add_subcommand(
      "check", "Check every bore of a part plan against its zones over the full depth");
  check->add_option("PLAN", args->plan, "part plan (TOML, docs/plan.md)")->required();
  check->add_option("--json", args->json, "write the complete report as JSON to this file");
  check->add_option("--csv", args->csv, "write one CSV row per characteristic to this file");
  check->add_flag("--no-sensitivity", args->no_sensitivity,
                  "skip re-evaluating with the other associations of datum A");
  check->add_flag("--quiet", args->quiet, "do not print the table");
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
