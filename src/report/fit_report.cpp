// The text report of one associated element (`cylzone fit`). Its JSON twin is in
// report_json.cpp, with everything else that speaks JSON.
#include "cylzone/report/fit_report.hpp"

#include <sstream>

#include "cylzone/report/report_model.hpp"

namespace cylzone {
namespace {

std::string triple(const Eigen::Vector3d& v, double scale, int decimals) {
  return ReportUnits::fixed(v.x() / scale, decimals) + "  " +
         ReportUnits::fixed(v.y() / scale, decimals) + "  " +
         ReportUnits::fixed(v.z() / scale, decimals);
}

}  // namespace

std::string format_fit_text(const ElementFit& fit, const std::string& source, LengthUnit unit) {
  const double mm = millimetres_per(unit);
  const int d = unit == LengthUnit::inch ? 7 : 6;  // 0.1 µin / 1 nm: below any probing noise
  const auto fixed = [](double value, int decimals) { return ReportUnits::fixed(value, decimals); };
  std::ostringstream out;
  out << "cylzone fit: " << element_name(fit.element) << ", " << method_name(fit.summary.method)
      << ", " << fit.summary.point_count << " points from " << source << " (" << unit_name(unit)
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
  return out.str();
}

}  // namespace cylzone
