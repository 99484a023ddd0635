// `cylzone fit ELEMENT POINTS`: one associated element, printed for people or as one JSON object.
#include <cstdio>
#include <iostream>
#include <memory>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "cli/commands.hpp"
#include "cli/vector_option.hpp"
#include "cylzone/core/errors.hpp"
#include "cylzone/fit/fit_element.hpp"
#include "cylzone/io/read_points.hpp"
#include "cylzone/version.hpp"

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

nlohmann::json vector_json(const Eigen::Vector3d& v, double scale) {
  return nlohmann::json::array({v.x() / scale, v.y() / scale, v.z() / scale});
}

nlohmann::json fit_json(const ElementFit& fit, const PointCloud& cloud, LengthUnit unit) {
  const double mm = millimetres_per(unit);
  nlohmann::json j;
  j["tool"] = std::string("cylzone ") + version_string;
  j["source"] = cloud.source;
  j["element"] = std::string(element_name(fit.element));
  j["method"] = std::string(method_name(fit.summary.method));
  j["points"] = fit.summary.point_count;
  j["units"] = std::string(unit_name(unit));
  j["rms"] = fit.residuals.rms / mm;
  j["form"] = fit.residuals.form / mm;
  if (fit.residuals.values.size() > 0) {
    j["residual_min"] = fit.residuals.values.minCoeff() / mm;
    j["residual_max"] = fit.residuals.values.maxCoeff() / mm;
  }
  if (fit.axis) {
    j["axis"] = {{"point", vector_json(fit.axis->point, mm)},
                 {"direction", vector_json(fit.axis->direction, 1.0)}};
  }
  if (fit.extent_min && fit.extent_max)
    j["extent"] = nlohmann::json::array({*fit.extent_min / mm, *fit.extent_max / mm});
  if (fit.point) j["point"] = vector_json(*fit.point, mm);
  if (fit.normal) j["normal"] = vector_json(*fit.normal, 1.0);
  if (fit.centre) j["centre"] = vector_json(*fit.centre, mm);
  if (fit.radius) j["diameter"] = 2.0 * *fit.radius / mm;
  if (fit.angular_coverage_deg) j["angular_coverage_deg"] = *fit.angular_coverage_deg;
  if (fit.ambiguity) j["ambiguity"] = *fit.ambiguity / mm;
  j["status"] = fit.summary.status == FitStatus::converged ? "converged" : "iteration-limit";
  j["iterations"] = fit.summary.iterations;
  j["message"] = fit.summary.message;
  j["warnings"] = fit.summary.warnings;
  return j;
}

std::string fixed(double value, int decimals) {
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, "%.*f", decimals, value);
  return buffer;
}

std::string triple(const Eigen::Vector3d& v, double scale, int decimals) {
  return fixed(v.x() / scale, decimals) + "  " + fixed(v.y() / scale, decimals) + "  " +
         fixed(v.z() / scale, decimals);
}

void print_fit(std::ostream& out, const ElementFit& fit, const PointCloud& cloud,
               LengthUnit unit) {
  const double mm = millimetres_per(unit);
  const int d = unit == LengthUnit::inch ? 7 : 6;  // 0.1 µin / 1 nm: below any probing noise
  const std::string u(unit_name(unit));
  out << "cylzone fit: " << element_name(fit.element) << ", " << method_name(fit.summary.method)
      << ", " << fit.summary.point_count << " points from " << cloud.source << " (" << u
      << ")\n";
  if (fit.axis && fit.element != Element::circle) {
    out << "  axis point       " << triple(fit.axis->point, mm, d) << '\n';
    out << "  axis direction   " << triple(fit.axis->direction, 1.0, 9) << '\n';
  }
  if (fit.point) out << "  point            " << triple(*fit.point, mm, d) << '\n';
  if (fit.centre) out << "  centre           " << triple(*fit.centre, mm, d) << '\n';
  if (fit.normal) out << "  normal           " << triple(*fit.normal, 1.0, 9) << '\n';
  if (fit.extent_min && fit.extent_max)
    out << "  extent           " << fixed(*fit.extent_min / mm, d) << " .. "
        << fixed(*fit.extent_max / mm, d) << " along the axis\n";
  if (fit.radius) out << "  diameter         " << fixed(2.0 * *fit.radius / mm, d) << '\n';
  if (fit.angular_coverage_deg)
    out << "  coverage         " << fixed(*fit.angular_coverage_deg, 1) << " deg\n";
  if (fit.ambiguity) out << "  ambiguity        " << fixed(*fit.ambiguity / mm, d) << '\n';
  out << "  rms              " << fixed(fit.residuals.rms / mm, d) << '\n';
  out << "  form             " << fixed(fit.residuals.form / mm, d)
      << (fit.element == Element::line ? "  (cylindrical zone diameter)" : "") << '\n';
  out << "  status           "
      << (fit.summary.status == FitStatus::converged ? "converged" : "ITERATION LIMIT") << ": "
      << fit.summary.message << '\n';
  for (const auto& w : fit.summary.warnings) out << "  warning: " << w << '\n';
}

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

  if (args.json)
    std::cout << fit_json(fit, cloud, *unit).dump(2) << '\n';
  else
    print_fit(std::cout, fit, cloud, *unit);
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
                  "least-squares (default), minimum-zone, max-inscribed, min-circumscribed");
  fit->add_option("--axis-hint", args->axis_hint,
                  "I,J,K: starting axis and sign of the reported direction");
  fit->add_option("--fixed-axis", args->fixed_axis,
                  "I,J,K: hold the cylinder axis / circle normal at this direction");
  fit->add_option("--units", args->units, "unit of the point file and of the output: mm or inch");
  fit->add_flag("--json", args->json, "print one JSON object (docs/fit-json.md)");
  fit->callback([args, &result]() {
    result.run = [args, &result]() { return run_fit(*args, result); };
  });
}

}  // namespace cylzone::cli
