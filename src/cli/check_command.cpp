// `cylzone check PLAN`: the main job. Parses arguments, runs the library's part check, prints
// the table and writes the requested reports (JSON, CSV, HTML: all of them or none,
// io/atomic_write.hpp).
// Exit 0: all conform; 1: something does not conform; 2: input error; 3: not proven.
#include <cctype>
#include <cmath>
#include <cstdint>
#include <cstdlib>
#include <ctime>
#include <iostream>
#include <memory>
#include <optional>
#include <stdexcept>
#include <string>
#include <utility>
#include <vector>

#include "cli/check_batch.hpp"
#include "cli/commands.hpp"
#include "cylzone/check/part_check.hpp"
#include "cylzone/forecast/probing_advice.hpp"
#include "cylzone/io/atomic_write.hpp"
#include "cylzone/plan/plan.hpp"
#include "cylzone/report/report.hpp"
#include "cylzone/report/report_model.hpp"
#include "cylzone/uncertainty/monte_carlo.hpp"

namespace cylzone::cli {
namespace {

struct CheckArguments {
  std::string plan;
  std::string json;
  std::string csv;
  std::string html;
  bool html_given = false;  ///< --html appeared (a batch takes it as a flag, without a file)
  // A batch (docs/batch.md): part folders, a list file of them, the output folder.
  std::vector<std::string> parts;
  std::string parts_list;
  std::string out;
  bool no_sensitivity = false;
  bool quiet = false;
  std::size_t threads = hardware_threads();
  std::string part_id;
  std::string serial;
  std::string time;                ///< ISO 8601; empty: the run's UTC time
  std::vector<std::string> notes;  ///< KEY=VALUE
  // Outlier stages (prepare/outlier_rejection.hpp): "on" or "off" override the plan's [probe]
  // settings and every feature's own; empty: as the plan says.
  std::string neighbour_filter;
  std::string residual_rejection;
  // The Monte Carlo study (uncertainty/monte_carlo.hpp): off unless asked; the others override
  // the plan's [uncertainty] table and need --uncertainty.
  bool uncertainty = false;
  std::string trials;         ///< a whole number or "adaptive"; empty: the plan's, else 2000
  std::optional<std::uint64_t> seed;
  std::string probing_sigma;  ///< a length in the plan's unit or "estimated"; empty: the plan's
  /// --predict-probing: the CMM's probing sigma (plan unit) to predict each bore's uncertainty
  /// for the pattern probed (forecast/probing_advice.hpp). Empty: no prediction.
  std::optional<double> predict_sigma;
  std::string predict_trials;  ///< the prediction's: a whole number or "adaptive"; empty: 2000
  /// "simple", "iso-14253-1" or "guard-band": overrides the plan's [decision].rule; empty: as
  /// the plan says.
  std::string decision_rule;
};

/// The study's options: the plan's [uncertainty] table, then the command line.
MonteCarloOptions uncertainty_options(const CheckArguments& args, const PartPlan& plan) {
  MonteCarloOptions options;
  options.threads = args.threads;
  options.probing = ProbingModel::estimated;
  options.trials = std::size_t{2000};
  if (const std::optional<PlanUncertainty>& p = plan.uncertainty) {
    if (p->probing_sigma) {
      options.probing = ProbingModel::sigma;
      options.probing_sigma = *p->probing_sigma;
    }
    if (p->mpe_a && p->mpe_k) options.length_error = LengthError{*p->mpe_a, *p->mpe_k};
    if (p->adaptive) options.trials.reset();
    if (p->trials) options.trials = *p->trials;
    if (p->seed) options.seed = *p->seed;
  }
  if (!args.trials.empty()) options.trials = trial_count_option(args.trials, "--trials", 2);
  if (args.seed) options.seed = *args.seed;
  if (args.probing_sigma == "estimated") {
    options.probing = ProbingModel::estimated;
  } else if (!args.probing_sigma.empty()) {
    std::size_t used = 0;
    double value = 0.0;
    try {
      value = std::stod(args.probing_sigma, &used);
    } catch (const std::exception&) {
      used = 0;
    }
    const double mm = value * millimetres_per(plan.unit);
    if (used != args.probing_sigma.size() || !(mm > 0.0) || mm > 1.0)
      throw std::invalid_argument(
          "--probing-sigma: expected a length above 0 and at most 1 mm in the plan's unit, or "
          "estimated, got '" + args.probing_sigma.substr(0, 40) + "'");
    options.probing = ProbingModel::sigma;
    options.probing_sigma = mm;
  }
  return options;
}

/// "on" / "off" of an outlier-stage option, or empty when the option was not given.
std::optional<bool> switch_value(const std::string& text, const std::string& option) {
  if (text.empty()) return std::nullopt;
  if (text == "on") return true;
  if (text == "off") return false;
  throw std::invalid_argument(option + ": expected on or off, got '" + text + "'");
}


/// A text option must be one printable line: it ends up in CSV cells and a table header.
void require_printable(const std::string& text, const std::string& option) {
  for (char c : text)
    if (static_cast<unsigned char>(c) < 0x20 || c == 0x7f)
      throw std::invalid_argument(option + ": control characters are not allowed");
  if (text.size() > 200) throw std::invalid_argument(option + ": longer than 200 characters");
}

PartIdentity part_identity(const CheckArguments& args) {
  PartIdentity part;
  require_printable(args.part_id, "--part-id");
  require_printable(args.serial, "--serial");
  part.id = args.part_id;
  part.serial = args.serial;
  if (!args.time.empty() && !is_iso8601_timestamp(args.time))
    throw std::invalid_argument("--time: '" + args.time +
                                "' is not an ISO 8601 date-time with a zone "
                                "(e.g. 2026-12-02T17:40:00Z)");
  part.timestamp = args.time;  // empty: the plan's [part] time, else the run's (run_check)
  for (const std::string& note : args.notes) {
    require_printable(note, "--note");
    const std::size_t eq = note.find('=');
    const std::string key = note.substr(0, eq);
    if (eq == std::string::npos || key.empty())
      throw std::invalid_argument("--note: expected KEY=VALUE, got '" + note + "'");
    for (char c : key)
      if (!std::isalnum(static_cast<unsigned char>(c)) && c != '_' && c != '-' && c != '.')
        throw std::invalid_argument("--note: the key '" + key +
                                    "' may hold letters, digits, '_', '-' and '.' only");
    for (const auto& [seen, value] : part.notes)
      if (seen == key) throw std::invalid_argument("--note: key '" + key + "' given twice");
    part.notes.emplace_back(key, note.substr(eq + 1));
  }
  return part;
}



int run_check(const CheckArguments& args) {
  ReportModelOptions model_options;
  const PartIdentity given = part_identity(args);  // argument errors before any file is read
  const std::optional<bool> neighbour = switch_value(args.neighbour_filter, "--neighbour-filter");
  const std::optional<bool> residual = switch_value(args.residual_rejection, "--residual-rejection");
  if (!args.parts.empty() || !args.parts_list.empty()) {
    if (!args.json.empty() || !args.csv.empty())
      throw std::invalid_argument("--parts: each part's reports go to --out DIR; "
                                  "--json and --csv are for one part");
    if (!args.html.empty())
      throw std::invalid_argument("--html: with --parts it takes no file (each part's HTML "
                                  "report goes to --out DIR)");
    if (args.uncertainty || !args.trials.empty() || args.seed || !args.probing_sigma.empty())
      throw std::invalid_argument("--uncertainty: not with --parts (the Monte Carlo study runs "
                                  "on one part: check that part alone)");
    if (args.predict_sigma)
      throw std::invalid_argument("--predict-probing: not with --parts (check one part alone)");
    BatchRun run;
    run.plan = args.plan;
    run.parts = args.parts;
    run.parts_list = args.parts_list;
    run.out = args.out;
    run.html = args.html_given;
    run.quiet = args.quiet;
    run.sensitivity = !args.no_sensitivity;
    run.threads = args.threads;
    run.given = given;
    run.neighbour_filter = neighbour;
    run.residual_rejection = residual;
    return run_check_batch(run);
  }
  if (!args.out.empty()) throw std::invalid_argument("--out: only with --parts or --parts-list");
  if (args.html_given && args.html.empty())
    throw std::invalid_argument("--html: give the file to write the HTML report to");
  if (args.predict_sigma && !(*args.predict_sigma > 0.0 && std::isfinite(*args.predict_sigma)))
    throw std::invalid_argument("--predict-probing: must be a finite number greater than zero");
  PartPlan plan = read_plan(args.plan);
  override_outlier_stages(plan, neighbour, residual);
  std::optional<double> predict_sigma;  // mm
  if (args.predict_sigma) {
    predict_sigma = *args.predict_sigma * millimetres_per(plan.unit);
    if (*predict_sigma > 0.5)
      throw std::invalid_argument(
          "--predict-probing: more than 0.5 mm is implausible; it is in "
          "the plan's length unit");
  }
  if (!args.decision_rule.empty())
    override_decision_rule(plan, *parse_decision_rule_word(args.decision_rule));
  // The command line overrides the plan's [part] table field by field.
  model_options.part = merged_identity(plan.part, given);
  if (model_options.part.timestamp.empty()) model_options.part.timestamp = utc_now();
  // Output paths are checked before the evaluation: a bad one costs nothing and leaves nothing.
  using Renderer = std::string (*)(const ReportModel&);
  std::vector<std::pair<OutputTarget, Renderer>> outputs;
  if (!args.json.empty()) outputs.push_back({{args.json, "--json"}, &format_json});
  if (!args.csv.empty()) outputs.push_back({{args.csv, "--csv"}, &format_csv});
  if (!args.html.empty()) {
    // A document for a browser, not a stream for a pipe: a file only.
    if (is_standard_output(args.html))
      throw std::invalid_argument("--html: '-' is not allowed: the HTML report goes to a file");
    outputs.push_back({{args.html, "--html"}, &format_html});
  }
  std::vector<OutputTarget> targets;
  for (const auto& output : outputs) targets.push_back(output.first);
  validate_outputs(targets, plan_inputs(plan));

  if (!args.uncertainty && (!args.trials.empty() || args.seed || !args.probing_sigma.empty()))
    throw std::invalid_argument(
        "--trials, --seed and --probing-sigma set up the Monte Carlo study: add --uncertainty");
  // The probing prediction's trials: --predict-trials when given, else its own default.
  if (!args.predict_trials.empty() && !predict_sigma)
    throw std::invalid_argument("--predict-trials: only with --predict-probing");
  std::optional<std::optional<std::size_t>> predict_trials;
  if (!args.predict_trials.empty())
    predict_trials = trial_count_option(args.predict_trials, "--predict-trials", 100);
  const std::optional<MonteCarloOptions> study =
      args.uncertainty ? std::optional<MonteCarloOptions>(uncertainty_options(args, plan))
                       : std::nullopt;

  CheckOptions options;
  options.sensitivity = !args.no_sensitivity;
  options.evaluation.threads = args.threads;
  // Each input is read once; the study perturbs the same points in memory.
  const PartInputs part_inputs = load_part_inputs(plan, LoadOptions{args.threads});
  // The part is evaluated once: with the study, the check takes a copy of the evaluation the
  // study starts from (a part a study is run on is small); without, check_part evaluates it.
  PartCheckResult result;
  std::optional<MonteCarloSummary> uncertainty;
  if (!study) {
    result = check_part(plan, part_inputs, options);
  } else {
    const PartEvaluation evaluation = evaluate_part(plan, part_inputs, options.evaluation);
    result = check_part(plan, part_inputs, evaluation, options);
    MonteCarloOptions mc = *study;
    mc.evaluation = options.evaluation;
    uncertainty = monte_carlo_uncertainty(plan, part_inputs, evaluation, mc);
    // The study's U is what the plan's decision rule counts (ISO 14253-1: conformance proven
    // inside the zone reduced by U); under simple acceptance it is shown, not counted.
    decide_with_study(result.characteristics, *uncertainty, plan.decision.rule);
    result.verdict = combine(result.characteristics);
  }
  ReportModel model = make_report_model(result, model_options);
  model.uncertainty = std::move(uncertainty);
  if (predict_sigma) {
    // The prediction for the pattern each bore was probed with (docs/probing-advice.md).
    ProbingAdviceOptions base;
    base.threads = args.threads;
    if (predict_trials) {
      if (*predict_trials)
        base.trials = **predict_trials;
      else
        base.adaptive = probing_adaptive_trials();
    }
    for (BoreSummary& summary : model.bores)
      for (const BoreResult& bore : result.bores)
        if (bore.id == summary.id)
          summary.probing_prediction = predict_measured_bore(bore, *predict_sigma, base);
  }

  std::vector<std::filesystem::path> inputs;
  for (const InputRecord& input : result.inputs) inputs.push_back(input.path);
  // Render everything, then commit the files as a set: all of them or none.
  std::vector<OutputFile> files;
  for (const auto& [target, render] : outputs) files.push_back({target, render(model)});
  write_outputs(files, inputs, std::cout);
  // A report on standard output keeps it machine-readable: the table then goes to stderr.
  TableOptions table_options;
  table_options.unicode = utf8_locale();
  bool report_on_stdout = false;
  for (const OutputTarget& t : targets) report_on_stdout |= is_standard_output(t.path);
  if (!args.quiet) (report_on_stdout ? std::cerr : std::cout) << format_table(model, table_options);
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
  CLI::Option* html = check->add_option(
      "--html", args->html,
      "write the report for people (one self-contained HTML file with figures per bore, "
      "printable) to this file; with --parts, a flag: one such file per part in --out");
  html->expected(0, 1);
  check->add_option("--parts", args->parts,
                    "check many parts against the plan: one folder per part, the plan's point "
                    "paths looked up in it, the folder's name the serial (docs/batch.md)")
      ->allow_extra_args(true);
  check->add_option("--parts-list", args->parts_list,
                    "a text file naming the part folders, one per line ('#' comments)");
  check->add_option("--out", args->out,
                    "with --parts: the folder for each part's reports, batch.csv and "
                    "batch-summary.json (created when missing)");
  check->add_flag("--no-sensitivity", args->no_sensitivity,
                  "skip re-evaluating with the other associations of datum A");
  check->add_flag("--quiet", args->quiet,
                  "do not print the table (it goes to stderr when a report goes to stdout)");
  check->add_option("--threads", args->threads,
                    "run at most this many threads (default: the machine's cores); results do "
                    "not depend on it")
      ->check(CLI::Range(std::size_t{1}, std::size_t{1024}));
  check->add_option("--part-id", args->part_id,
                    "part number or id, written into the table, JSON and CSV (overrides the "
                    "plan's [part] id)");
  check->add_option("--serial", args->serial, "serial number of the part");
  check->add_option("--time", args->time,
                    "ISO 8601 date-time of the measurement, e.g. 2026-12-02T17:40:00Z "
                    "(default: the plan's [part] time, else the run's UTC time; give it for "
                    "reproducible reports)");
  check->add_option("--neighbour-filter", args->neighbour_filter,
                    "on|off: remove the points the stray-point screen flags before fitting "
                    "(overrides the plan's probe.neighbour_filter)")
      ->check(CLI::IsMember({"on", "off"}));
  check->add_option("--residual-rejection", args->residual_rejection,
                    "on|off: remove points beyond 5 robust sigma of the least-squares residuals, "
                    "refitting until stable (overrides the plan's probe.residual_rejection)")
      ->check(CLI::IsMember({"on", "off"}));
  check->add_option("--predict-probing", args->predict_sigma,
                    "predict each bore's position and perpendicularity uncertainty for the "
                    "pattern probed, from the CMM's probing sigma per coordinate (plan length "
                    "unit; docs/probing-advice.md)");
  check->add_option("--predict-trials", args->predict_trials,
                    "with --predict-probing: the prediction's trials per bore (at least 100), or "
                    "adaptive (JCGM 101 7.9, as advise --trials adaptive); default 2000");
  check->add_option("--decision-rule", args->decision_rule,
                    "simple|iso-14253-1|guard-band: how a value is compared with its limit "
                    "(ISO 14253-1: conformance proven inside the zone reduced by U, "
                    "non-conformance beyond it enlarged by U, else not proven; overrides the "
                    "plan's [decision].rule)")
      ->check(CLI::IsMember({"simple", "iso-14253-1", "guard-band"}));
  check->add_option("--note", args->notes,
                    "KEY=VALUE free text, repeatable (operator, machine, order, ...); replaces "
                    "the plan's note of the same key")
      ->allow_extra_args(false);
  check->add_flag("--uncertainty", args->uncertainty,
                  "estimate every figure's measurement uncertainty by Monte Carlo (JCGM 101): "
                  "perturb every raw point, datums included, and run the whole evaluation per "
                  "trial (docs/uncertainty.md); off by default");
  check->add_option("--trials", args->trials,
                    "with --uncertainty: the number of trials, or adaptive (JCGM 101 7.9); "
                    "default: the plan's [uncertainty] trials, else 2000");
  check->add_option("--seed", args->seed,
                    "with --uncertainty: the random seed (results are identical for a seed "
                    "whatever --threads); default: the plan's, else 1");
  check->add_option("--probing-sigma", args->probing_sigma,
                    "with --uncertainty: the isotropic probing sigma per coordinate in the "
                    "plan's unit, or estimated (each feature's least-squares residual RMS); "
                    "default: the plan's [uncertainty] probing_sigma, else estimated");
  check->callback([args, html, &result]() {
    args->html_given = html->count() > 0;
    result.context = args->plan + ": ";
    result.run = [args]() { return run_check(*args); };
  });
}

}  // namespace cylzone::cli
