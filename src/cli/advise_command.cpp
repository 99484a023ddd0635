// `cylzone advise`: how uncertain will a bore's position and perpendicularity be for a probing
// pattern, and which is the smallest pattern that keeps that uncertainty under a share of the
// tolerance? Parses the bore, the CMM's probing sigma and the candidate pattern, runs the
// library's prediction and search (forecast/probing_advice.hpp) and prints the table and, on
// request, the JSON object (written atomically, io/atomic_write.hpp).
// Exit 0: the candidate meets the target; 1: it does not (or cannot determine the bore);
// 2: argument error.
#include <iostream>
#include <memory>
#include <optional>
#include <sstream>
#include <stdexcept>
#include <string>
#include <vector>

#include "cli/commands.hpp"
#include "cylzone/core/errors.hpp"
#include "cylzone/forecast/probing_advice.hpp"
#include "cylzone/io/atomic_write.hpp"
#include "cylzone/report/probing_report.hpp"

namespace cylzone::cli {
namespace {

struct AdviseArguments {
  double diameter = 0.0;
  double depth = 0.0;
  std::vector<double> usable;  // two depths below the top
  double position_tolerance = 0.0;
  std::optional<double> perpendicularity_tolerance;
  std::string axis = "least-squares";
  double sigma = 0.0;
  std::vector<double> sections;  // depths below the top
  std::size_t section_count = 0;
  std::size_t points = 8;
  double arc = 360.0;
  double arc_centre = 0.0;
  std::string trials = "2000";  // a whole number or "adaptive"
  std::uint64_t seed = 1;
  std::size_t threads = hardware_threads();
  double target = 10.0;  // percent
  bool no_search = false;
  std::string units = "mm";
  std::string json;
  bool quiet = false;
};

// Plausibility bounds in mm: values beyond them are typing or unit mistakes, not bores.
constexpr double most_diameter_mm = 2000.0;
constexpr double most_depth_mm = 10000.0;
constexpr double most_tolerance_mm = 5.0;
constexpr double most_sigma_mm = 0.5;

double depth_mm(double value, double k, const std::string& option, double depth) {
  if (!(value >= 0.0))
    throw std::invalid_argument(option +
                                ": depths are measured down from the mouth and may "
                                "not be negative, got " +
                                number_text(value));
  const double mm = option_length_mm(value, k, option, most_depth_mm);
  if (mm > depth)
    throw std::invalid_argument(option + ": " + number_text(value) +
                                " lies below the bore's depth " + number_text(depth / k));
  return mm;
}

ProbingAdviceOptions advice_options(const AdviseArguments& a) {
  const auto unit = parse_unit(a.units);
  if (!unit) throw std::invalid_argument("--units: expected mm or inch, got '" + a.units + "'");
  const double k = millimetres_per(*unit);
  ProbingAdviceOptions o;
  o.diameter = option_length_mm(a.diameter, k, "--diameter", most_diameter_mm);
  const double depth = option_length_mm(a.depth, k, "--depth", most_depth_mm);
  if (!(depth > 0.0)) throw std::invalid_argument("--depth: must be greater than zero");
  o.range_top = 0.0;
  o.range_bottom = -depth;
  if (!a.usable.empty()) {
    if (a.usable.size() != 2)
      throw std::invalid_argument("--usable: expected two depths TOP,BOTTOM, got " +
                                  std::to_string(a.usable.size()) + " values");
    o.usable_top = -depth_mm(a.usable[0], k, "--usable", depth);
    o.usable_bottom = -depth_mm(a.usable[1], k, "--usable", depth);
    if (!(*o.usable_top > *o.usable_bottom))
      throw std::invalid_argument(
          "--usable: the first depth (top) must be smaller than the "
          "second (bottom)");
  }
  o.position_tolerance =
      option_length_mm(a.position_tolerance, k, "--position-tolerance", most_tolerance_mm);
  if (a.perpendicularity_tolerance)
    o.perpendicularity_tolerance = option_length_mm(
        *a.perpendicularity_tolerance, k, "--perpendicularity-tolerance", most_tolerance_mm);
  const auto method = parse_axis_method(a.axis);
  if (!method || *method == BoreAxisMethod::median_line)
    throw std::invalid_argument("--axis: expected least-squares or mating-envelope, got '" +
                                a.axis + "'");
  o.axis_method = *method;
  o.probing_sigma = option_length_mm(a.sigma, k, "--sigma", most_sigma_mm);
  if (!a.sections.empty() && a.section_count != 0)
    throw std::invalid_argument("--sections and --section-count: give one of them");
  if (!a.sections.empty()) {
    for (double s : a.sections)
      o.pattern.section_heights.push_back(-depth_mm(s, k, "--sections", depth));
  } else {
    const std::size_t count = a.section_count == 0 ? 2 : a.section_count;
    if (count < 2 || count > 1000)
      throw std::invalid_argument("--section-count: must lie between 2 and 1000, got " +
                                  std::to_string(count));
    o.pattern.section_heights = evenly_spread_sections(
        o.usable_top.value_or(o.range_top), o.usable_bottom.value_or(o.range_bottom), count);
  }
  o.pattern.points_per_section = a.points;
  o.pattern.arc_deg = a.arc;
  o.pattern.arc_centre_deg = a.arc_centre;
  if (const std::optional<std::size_t> n = trial_count_option(a.trials, "--trials", 100))
    o.trials = *n;
  else
    o.adaptive = probing_adaptive_trials();
  o.seed = a.seed;
  o.threads = a.threads;
  if (!(a.target > 0.0 && a.target <= 100.0))
    throw std::invalid_argument("--target: must lie in (0, 100] percent, got " +
                                number_text(a.target));
  o.target_share = a.target / 100.0;
  return o;
}

/// The library's checks, with its option keys turned into the command line's option names.
void validate(const ProbingAdviceOptions& o) {
  try {
    validate_probing_options(o);
  } catch (const InputError& e) {
    static const std::vector<std::pair<std::string, std::string>> names = {
        {"diameter", "--diameter"},
        {"position_tolerance", "--position-tolerance"},
        {"perpendicularity_tolerance", "--perpendicularity-tolerance"},
        {"probing_sigma", "--sigma"},
        {"pattern.points_per_section", "--points"},
        {"pattern.arc_deg", "--arc"},
        {"pattern.arc_centre_deg", "--arc-centre"},
        {"pattern.section_heights", "--sections"},
        {"trials", "--trials"},
        {"target_share", "--target"},
        {"axis_method", "--axis"}};
    std::string option = e.key();
    for (const auto& [key, name] : names)
      if (key == e.key()) option = name;
    throw std::invalid_argument(option + ": " + e.problem());
  }
}

int run_advise(const AdviseArguments& args) {
  const ProbingAdviceOptions options = advice_options(args);
  validate(options);
  const LengthUnit unit = *parse_unit(args.units);
  std::vector<OutputTarget> targets;
  if (!args.json.empty()) targets.push_back({args.json, "--json"});
  validate_outputs(targets, {});  // before the simulation: a bad path costs nothing

  const ProbingAdvice advice = advise_probing(options, !args.no_search);

  std::vector<OutputFile> files;
  if (!args.json.empty())
    files.push_back({targets.front(), format_probing_json(options, advice, unit)});
  write_outputs(files, {}, std::cout);
  ProbingTableOptions table;
  table.unit = unit;
  table.unicode = utf8_locale();
  const bool json_on_stdout = !args.json.empty() && is_standard_output(args.json);
  if (!args.quiet)
    (json_on_stdout ? std::cerr : std::cout) << format_probing_table(options, advice, table);
  return advice.candidate.meets_target ? exit_success : exit_nonconforming;
}

}  // namespace

void add_advise_command(CLI::App& app, CommandResult& result) {
  auto a = std::make_shared<AdviseArguments>();
  CLI::App* c = app.add_subcommand(
      "advise",
      "Predict by simulation the uncertainty of a bore's position and perpendicularity for a "
      "probing pattern, and find the smallest pattern keeping it under a share of the "
      "tolerance (docs/probing-advice.md)");
  c->add_option("--diameter", a->diameter, "nominal bore diameter, length unit")->required();
  c->add_option("--depth", a->depth,
                "the depth the zone applies over (full depth from the mouth on datum A), "
                "length unit")
      ->required();
  c->add_option("--usable", a->usable,
                "TOP,BOTTOM: the depths below the mouth the probe can reach (default: the "
                "whole depth), length unit; the search places sections there")
      ->delimiter(',')
      ->allow_extra_args(false);
  c->add_option("--position-tolerance", a->position_tolerance,
                "position tolerance, diameter zone, length unit")
      ->required();
  c->add_option("--perpendicularity-tolerance", a->perpendicularity_tolerance,
                "perpendicularity tolerance to datum A, diameter zone, length unit");
  c->add_option("--axis", a->axis,
                "the toleranced axis: least-squares or mating-envelope (maximum inscribed "
                "cylinder)")
      ->capture_default_str();
  c->add_option("--sigma", a->sigma,
                "the CMM's probing scatter: standard deviation of each coordinate of a probed "
                "point, length unit")
      ->required();
  c->add_option("--sections", a->sections,
                "D1,D2,...: depths below the mouth of the candidate's sections, length unit")
      ->delimiter(',')
      ->allow_extra_args(false);
  c->add_option("--section-count", a->section_count,
                "candidate sections spread evenly over the usable depth, ends first (default 2)");
  c->add_option("--points", a->points, "points per section of the candidate (>= 3)")
      ->capture_default_str();
  c->add_option("--arc", a->arc, "arc the points of a section span, degrees, (0, 360]")
      ->capture_default_str();
  c->add_option("--arc-centre", a->arc_centre,
                "direction of the arc's middle from the x axis, degrees")
      ->capture_default_str();
  c->add_option("--trials", a->trials,
                "Monte Carlo trials per pattern (>= 100), or adaptive (JCGM 101 7.9: batches "
                "of 2000 until every figure is stable to 1 significant digit of its u)")
      ->capture_default_str();
  c->add_option("--seed", a->seed, "seed of the simulation (the same seed, the same figures)")
      ->capture_default_str();
  c->add_option("--threads", a->threads,
                "run at most this many threads (default: the machine's cores); results do not "
                "depend on it");
  c->add_option("--target", a->target,
                "largest expanded uncertainty, percent of each tolerance (10: the 10:1 rule)")
      ->capture_default_str();
  c->add_flag("--no-search", a->no_search,
              "predict the candidate only, without searching for the smallest pattern");
  c->add_option("--units", a->units,
                "length unit of every length option and the output: mm or inch")
      ->capture_default_str();
  c->add_option("--json", a->json,
                "write the advice as one JSON object to this file ('-': standard output)");
  c->add_flag("--quiet", a->quiet, "do not print the table");
  c->footer(
      "Lengths in --units (mm by default); depths are measured down from the mouth (datum A), "
      "positive into the material. Plausibility: a diameter above 2 m, a depth above 10 m, "
      "tolerances above 5 mm and a sigma above 0.5 mm are refused as unit mistakes.\n"
      "Exit codes: 0 the candidate pattern meets the target, 1 it does not (or cannot "
      "determine the bore), 2 argument error (one 'cylzone: error:' line, no file written).");
  c->callback([a, &result]() { result.run = [a]() { return run_advise(*a); }; });
}

}  // namespace cylzone::cli
