// `cylzone fit ELEMENT POINTS`: one associated element, printed for people or as one JSON object.
#include <iostream>
#include <memory>
#include <string>
#include <vector>

#include "cli/commands.hpp"
#include "cli/vector_option.hpp"
#include "cylzone/core/errors.hpp"
#include "cylzone/fit/fit_element.hpp"
#include "cylzone/io/read_points.hpp"
#include "cylzone/report/fit_report.hpp"

namespace cylzone::cli {
namespace {

struct FitArguments {
  std::string element;
  std::string points;
  std::string method = "least-squares";
  std::string axis_hint;
  std::string fixed_axis;
  std::string units = "mm";
  bool json = false;
};

int run_fit(const FitArguments& args, CommandResult& result) {
  const auto element = parse_element(args.element);
  if (!element)
    throw std::invalid_argument("unknown element '" + args.element +
                                "' (expected line, plane, circle, sphere or cylinder)");
  const auto method = parse_method(args.method);
  if (!method)
    throw std::invalid_argument("unknown method '" + args.method +
                                "' (expected least-squares, minimum-zone, max-inscribed or "
                                "min-circumscribed)");
  const auto unit = parse_unit(args.units);
  if (!unit) throw std::invalid_argument("unknown unit '" + args.units + "' (expected mm or inch)");

  FitOptions options;
  if (!args.axis_hint.empty()) options.axis_hint = parse_direction(args.axis_hint, "--axis-hint");
  if (!args.fixed_axis.empty())
    options.fixed_direction = parse_direction(args.fixed_axis, "--fixed-axis");

  ReadOptions read;
  read.unit = *unit;
  const PointCloud cloud = read_points(args.points, read);
  result.context = args.points + ": ";
  const ElementFit fit = fit_element(*element, *method, cloud.points, cloud.vectors, options);

  std::cout << (args.json ? format_fit_json(fit, cloud.source, *unit)
                          : format_fit_text(fit, cloud.source, *unit));
  return exit_success;
}

}  // namespace

void add_fit_command(CLI::App& app, CommandResult& result) {
  auto args = std::make_shared<FitArguments>();
  CLI::App* fit = app.add_subcommand("fit", "Fit one geometric element to a point file");
  fit->add_option("ELEMENT", args->element, "line, plane, circle, sphere or cylinder")->required();
  fit->add_option("POINTS", args->points, "point file (.csv/.txt/.xyz, .ply, .obj, .off, .stl)")
      ->required();
  fit->add_option("--method", args->method,
                  "least-squares, minimum-zone, max-inscribed or min-circumscribed")
      ->capture_default_str();
  fit->add_option("--axis-hint", args->axis_hint,
                  "I,J,K: starting axis and sign of the reported direction");
  fit->add_option("--fixed-axis", args->fixed_axis,
                  "I,J,K: hold the cylinder axis / circle normal at this direction");
  fit->add_option("--units", args->units, "unit of the point file and of the output: mm or inch")
      ->capture_default_str();
  fit->add_flag("--json", args->json, "print one JSON object (docs/fit-json.md)");
  fit->callback([args, &result]() {
    result.run = [args, &result]() { return run_fit(*args, result); };
  });
}

}  // namespace cylzone::cli
