// `cylzone forecast`: can a machine tool hold a bore's position and perpendicularity over its
// full depth? Parses the machine's ISO 230-2 figures and the bore's tolerances, runs the
// library's forecast (forecast/machine_capability.hpp) and prints the table and, on request,
// the JSON object (written atomically, io/atomic_write.hpp).
// With --compare, the bores of measured parts' JSON reports are set beside the forecast
// (forecast/forecast_comparison.hpp).
// Exit 0: can hold; 1: cannot hold; 3: marginal; 2: argument error.
#include <cmath>
#include <iostream>
#include <memory>
#include <optional>
#include <sstream>
#include <stdexcept>
#include <string>
#include <utility>
#include <vector>

#include "cli/commands.hpp"
#include "cylzone/core/errors.hpp"
#include "cylzone/forecast/forecast_comparison.hpp"
#include "cylzone/forecast/machine_capability.hpp"
#include "cylzone/io/atomic_write.hpp"
#include "cylzone/io/load.hpp"
#include "cylzone/report/forecast_report.hpp"
#include "cylzone/report/report_reader.hpp"

namespace cylzone::cli {
namespace {

struct ForecastArguments {
  double x_accuracy = 0.0, x_repeatability = 0.0;
  double y_accuracy = 0.0, y_repeatability = 0.0;
  double squareness = 0.0;                    // µm/m
  std::vector<double> tilt_systematic;        // µm/m each
  std::vector<double> tilt_random;            // µm/m each
  double depth = 0.0;
  double position_tolerance = 0.0;
  std::optional<double> perpendicularity_tolerance;
  std::string systematic = "worst";
  double coverage = 99.73;          // percent
  double capable_share = 0.27;      // percent
  double marginal_share = 4.55;     // percent
  std::string units = "mm";
  std::string json;
  bool quiet = false;
  std::vector<std::string> compare;        // JSON reports of measured parts
  std::vector<std::string> compare_bores;  // only these bores; empty: every bore
};

// Plausibility bounds, in mm and µm/m: values beyond them are typing or unit mistakes
// (micrometres typed into a millimetre field, a tolerance in the wrong unit), not machines.
constexpr double most_positioning_mm = 1.0;
constexpr double most_depth_mm = 10000.0;
constexpr double most_tolerance_mm = 5.0;
constexpr double most_tilt_um_per_m = 10000.0;  // 10 mm/m, 0.57 degrees

/// A tilt in µm/m as a slope.
double slope(double um_per_m, const std::string& option) {
  if (um_per_m > most_tilt_um_per_m)
    throw std::invalid_argument(option + ": " + number_text(um_per_m) +
                                " um/m is implausible (more than 10000 um/m = 0.57 degrees)");
  return um_per_m * 1e-6;
}

/// A percentage as a fraction.
double share(double percent, const std::string& option) {
  if (!(percent > 0.0 && percent < 100.0))
    throw std::invalid_argument(option + ": must lie between 0 and 100 percent, got " +
                                number_text(percent));
  return percent / 100.0;
}

/// The options with, for each tilt source, the command-line option it came from.
struct ParsedOptions {
  CapabilityOptions options;
  std::vector<std::string> tilt_options;
};

ParsedOptions capability_options(const ForecastArguments& a) {
  const auto unit = parse_unit(a.units);
  if (!unit) throw std::invalid_argument("--units: expected mm or inch, got '" + a.units + "'");
  const double k = millimetres_per(*unit);
  ParsedOptions parsed;
  CapabilityOptions& o = parsed.options;
  o.x.accuracy = option_length_mm(a.x_accuracy, k, "--x-accuracy", most_positioning_mm);
  o.x.repeatability =
      option_length_mm(a.x_repeatability, k, "--x-repeatability", most_positioning_mm);
  o.y.accuracy = option_length_mm(a.y_accuracy, k, "--y-accuracy", most_positioning_mm);
  o.y.repeatability =
      option_length_mm(a.y_repeatability, k, "--y-repeatability", most_positioning_mm);
  const auto add_tilt = [&](TiltSource t, const char* option) {
    o.tilts.push_back(std::move(t));
    parsed.tilt_options.emplace_back(option);
  };
  if (a.squareness != 0.0)
    add_tilt({"squareness of the feed axis to the table", slope(a.squareness, "--squareness"),
              0.0},
             "--squareness");
  for (std::size_t i = 0; i < a.tilt_systematic.size(); ++i)
    add_tilt({"systematic tilt " + std::to_string(i + 1),
              slope(a.tilt_systematic[i], "--tilt-systematic"), 0.0},
             "--tilt-systematic");
  for (std::size_t i = 0; i < a.tilt_random.size(); ++i)
    add_tilt({"random tilt " + std::to_string(i + 1), 0.0,
              slope(a.tilt_random[i], "--tilt-random")},
             "--tilt-random");
  o.depth = option_length_mm(a.depth, k, "--depth", most_depth_mm);
  o.position_tolerance =
      option_length_mm(a.position_tolerance, k, "--position-tolerance", most_tolerance_mm);
  if (a.perpendicularity_tolerance)
    o.perpendicularity_tolerance = option_length_mm(
        *a.perpendicularity_tolerance, k, "--perpendicularity-tolerance", most_tolerance_mm);
  if (a.systematic != "worst" && a.systematic != "none")
    throw std::invalid_argument("--systematic: expected worst or none, got '" + a.systematic +
                                "'");
  o.systematic = a.systematic == "worst" ? SystematicPlacement::worst_corner
                                         : SystematicPlacement::centred;
  o.coverage = share(a.coverage, "--coverage");
  o.share_limit_capable = share(a.capable_share, "--capable-share");
  o.share_limit_marginal = share(a.marginal_share, "--marginal-share");
  return parsed;
}

/// The library's checks, with its option keys turned into the command line's option names.
void validate(const ParsedOptions& parsed) {
  try {
    validate_capability_options(parsed.options);
  } catch (const InputError& e) {
    std::string option = "--" + e.key();
    if (e.key() == "share_limit_capable") option = "--capable-share";
    if (e.key() == "share_limit_marginal") option = "--marginal-share";
    if (e.key().rfind("tilts[", 0) == 0)
      option = parsed.tilt_options.at(std::stoul(e.key().substr(6)));
    for (char& c : option)
      if (c == '.' || c == '_') c = '-';
    throw std::invalid_argument(option + ": " + e.problem());
  }
}

/// The measured bores of every report given to --compare (each file read once), in the order
/// given. Throws InputError naming the file for an unreadable or malformed report, and
/// std::invalid_argument when no bore is left to compare.
std::vector<ObservedBore> measured_bores(const ForecastArguments& args) {
  std::vector<ObservedBore> bores;
  std::size_t skipped = 0;
  for (const std::string& file : args.compare) {
    const LoadedFile loaded = load(file);
    const ReportModel report = read_report_json(loaded.bytes(), file);
    std::vector<ObservedBore> more = observed_bores(report, file, args.compare_bores, skipped);
    bores.insert(bores.end(), more.begin(), more.end());
  }
  if (bores.empty())
    throw std::invalid_argument(
        "--compare: no evaluated bore with a position tolerance" +
        std::string(args.compare_bores.empty() ? "" : " among the --compare-bore names") +
        " in the " + std::to_string(args.compare.size()) + " report(s)" +
        (skipped ? " (" + std::to_string(skipped) + " not evaluated)" : std::string()));
  return bores;
}

int run_forecast(const ForecastArguments& args) {
  const ParsedOptions parsed = capability_options(args);
  validate(parsed);
  const CapabilityOptions& options = parsed.options;
  const LengthUnit unit = *parse_unit(args.units);
  if (!args.compare_bores.empty() && args.compare.empty())
    throw std::invalid_argument("--compare-bore: needs --compare REPORT.json");
  std::vector<OutputTarget> targets;
  if (!args.json.empty()) targets.push_back({args.json, "--json"});
  // Before the computation: a bad path costs nothing; never over a report being compared.
  const std::vector<std::filesystem::path> inputs(args.compare.begin(), args.compare.end());
  validate_outputs(targets, inputs);

  const CapabilityForecast forecast = forecast_capability(options);
  std::optional<ForecastComparison> comparison;
  if (!args.compare.empty())
    comparison = compare_with_forecast(options, forecast, measured_bores(args));
  const ForecastComparison* compared = comparison ? &*comparison : nullptr;

  std::vector<OutputFile> files;
  if (!args.json.empty())
    files.push_back({targets.front(), format_forecast_json(options, forecast, unit, compared)});
  write_outputs(files, inputs, std::cout);
  ForecastTableOptions table;
  table.unit = unit;
  table.unicode = utf8_locale();
  const bool json_on_stdout = !args.json.empty() && is_standard_output(args.json);
  if (!args.quiet)
    (json_on_stdout ? std::cerr : std::cout)
        << format_forecast_table(options, forecast, table, compared);
  switch (forecast.verdict) {
    case CapabilityVerdict::can_hold: return exit_success;
    case CapabilityVerdict::cannot_hold: return exit_nonconforming;
    case CapabilityVerdict::marginal: return exit_not_proven;
  }
  return exit_nonconforming;
}

}  // namespace

void add_forecast_command(CLI::App& app, CommandResult& result) {
  auto a = std::make_shared<ForecastArguments>();
  CLI::App* c = app.add_subcommand(
      "forecast",
      "Forecast whether a machine tool can hold a bore's position and perpendicularity over "
      "its full depth, from ISO 230-2 positioning figures and the feed axis' tilt "
      "(docs/forecast.md)");
  c->add_option("--x-accuracy", a->x_accuracy,
                "X positioning accuracy A (ISO 230-2, the full band), length unit")
      ->required();
  c->add_option("--x-repeatability", a->x_repeatability,
                "X bidirectional repeatability R (ISO 230-2, R = 4 s), length unit, > 0")
      ->required();
  c->add_option("--y-accuracy", a->y_accuracy, "Y positioning accuracy A, length unit")
      ->required();
  c->add_option("--y-repeatability", a->y_repeatability, "Y repeatability R, length unit, > 0")
      ->required();
  c->add_option("--squareness", a->squareness,
                "squareness of the feed axis to the table, um/m (systematic tilt)");
  c->add_option("--tilt-systematic", a->tilt_systematic,
                "another systematic tilt source (deflection, ...), um/m; repeatable")
      ->allow_extra_args(false);
  c->add_option("--tilt-random", a->tilt_random,
                "a random tilt source (drill walk, ...), standard deviation per direction, um/m; "
                "repeatable")
      ->allow_extra_args(false);
  c->add_option("--depth", a->depth, "bore depth, length unit")->required();
  c->add_option("--position-tolerance", a->position_tolerance,
                "position tolerance, diameter zone, length unit")
      ->required();
  c->add_option("--perpendicularity-tolerance", a->perpendicularity_tolerance,
                "perpendicularity tolerance to the table (datum A), diameter zone, length unit");
  c->add_option("--systematic", a->systematic,
                "worst: the bore at the worst corner of the systematic band +-(A - R)/2; none: "
                "the systematic positioning error is compensated")
      ->capture_default_str();
  c->add_option("--coverage", a->coverage, "probability of the statistical figures, percent")
      ->capture_default_str();
  c->add_option("--capable-share", a->capable_share,
                "can hold when at most this percentage of bores is expected outside a zone")
      ->capture_default_str();
  c->add_option("--marginal-share", a->marginal_share,
                "cannot hold when more than this percentage is expected outside a zone")
      ->capture_default_str();
  c->add_option("--units", a->units, "length unit of every length option and the output: mm or "
                                     "inch")
      ->capture_default_str();
  c->add_option("--json", a->json,
                "write the forecast as one JSON object to this file ('-': standard output)");
  c->add_flag("--quiet", a->quiet, "do not print the table");
  c->add_option("--compare", a->compare,
                "JSON reports of measured parts (cylzone check --json): compare their bores' "
                "full-depth positions with the forecast (docs/forecast.md)");
  c->add_option("--compare-bore", a->compare_bores,
                "compare only this bore of each report; repeatable (default: every bore)")
      ->allow_extra_args(false);
  c->footer(
      "Lengths in --units (mm by default); tilts in um/m (1 um/m = 1 um per metre of depth). "
      "Plausibility: positioning figures above 1 mm, a depth above 10 m, tolerances above 5 mm "
      "and tilts above 10000 um/m are refused as unit mistakes.\n"
      "Exit codes: 0 can hold, 1 cannot hold, 3 marginal, 2 argument error (one 'cylzone: "
      "error:' line, no file written); with --compare the exit code is still the forecast's: "
      "the comparison's finding is in the table and the JSON.");
  c->callback([a, &result]() { result.run = [a]() { return run_forecast(*a); }; });
}

}  // namespace cylzone::cli
