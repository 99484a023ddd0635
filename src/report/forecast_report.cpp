// The tables of the machine-capability forecast (`cylzone forecast`) and of the probing advice
// (`cylzone advise`). Their JSON twins are in report_json.cpp, with everything else that speaks
// JSON.
#include "cylzone/report/forecast_report.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <sstream>

#include "cylzone/report/probing_report.hpp"
#include "cylzone/report/report_model.hpp"
#include "cylzone/version.hpp"

namespace cylzone {
namespace {

/// A share as a percentage with four significant digits ("0.27 %", "1.566e-05 %"). Shares
/// below 1e-10 are below the integration's accuracy and read "< 1e-08 %".
std::string percent(double share) {
  if (share > 0.0 && share < 1e-10) return "< 1e-08 %";
  char buffer[48];
  std::snprintf(buffer, sizeof buffer, "%.4g %%", 100.0 * share);
  return buffer;
}

std::string verdict_text(CapabilityVerdict v) {
  switch (v) {
    case CapabilityVerdict::can_hold: return "can hold";
    case CapabilityVerdict::marginal: return "MARGINAL";
    case CapabilityVerdict::cannot_hold: return "CANNOT HOLD";
  }
  return "CANNOT HOLD";
}

std::string padded(std::string text, std::size_t width) {
  if (text.size() < width) text.append(width - text.size(), ' ');
  return text;
}

std::string right(const std::string& text, std::size_t width) {
  return text.size() < width ? std::string(width - text.size(), ' ') + text : text;
}

/// `text` in lines of at most 100 columns, cut at spaces, every line after the first indented
/// by `indent` spaces.
void put_wrapped(std::ostream& out, std::string rest, std::size_t indent = 0) {
  const std::string pad(indent, ' ');
  std::size_t width = 100;
  for (std::size_t cut; rest.size() > width && (cut = rest.rfind(' ', width)) != std::string::npos;
       rest.erase(0, cut + 1), width = 100 - indent)
    out << rest.substr(0, cut) << '\n' << pad;
  out << rest << '\n';
}

/// The caution in lines of at most 100 columns (it holds no longer word).
void put_caution(std::ostream& out) { put_wrapped(out, std::string(safety_caution)); }

}  // namespace

namespace {

/// "k of n = share (CI lo .. hi)".
std::string count_text(std::size_t k, std::size_t n, const BinomialInterval& ci, int pct) {
  return std::to_string(k) + " of " + std::to_string(n) + " = " +
         percent(static_cast<double>(k) / static_cast<double>(n)) + " (" + std::to_string(pct) +
         " % interval " + percent(ci.lower) + " .. " + percent(ci.upper) + ")";
}

void put_comparison(std::ostream& out, const ForecastComparison& c, const ReportUnits& u,
                    const std::string& sigma) {
  const int pct = static_cast<int>(std::lround(100.0 * c.confidence));
  out << "Compared with measured parts (" << c.bores
      << " bores; full-depth position against the stated zone " << u.text(c.tolerance)
      << ", no bonus)\n";
  out << "  " << padded("", 26) << right("observed", 11) << right("forecast", 11) << '\n';
  const auto row = [&](const char* name, double observed, double forecast) {
    out << "  " << padded(name, 26) << right(u.text(observed), 11) << right(u.text(forecast), 11)
        << '\n';
  };
  row("mean", c.observed_mean, c.forecast.mean);
  row("standard deviation", c.observed_sd, c.forecast.standard_deviation);
  row("95 % quantile", c.observed_quantile95, c.forecast.quantile95);
  out << "  outside the zone: " << count_text(c.outside, c.bores, c.outside_interval, pct)
      << "; forecast " << percent(c.predicted_share) << '\n';
  out << "  above the forecast's 95 % quantile: "
      << count_text(c.above_quantile, c.bores, c.above_interval, pct) << "; expected 5 %\n";
  if (c.x && c.y) {
    out << "  at the mouth (" << c.with_mouth << " bores)   observed mean  observed " << sigma
        << "   forecast b   forecast s\n";
    const auto axis = [&](const char* name, const MouthAxisComparison& a) {
      out << "    " << padded(name, 24) << right(u.text(a.observed_mean), 13)
          << right(u.text(a.observed_sd), 13) << right(u.text(a.forecast_systematic), 13)
          << right(u.text(a.forecast_sigma), 13) << '\n';
    };
    axis("dx", *c.x);
    axis("dy", *c.y);
  }
  if (c.depth_mismatches > 0)
    out << "  note: " << c.depth_mismatches
        << " bores were evaluated over a range more than 1 % off the forecast's depth\n";
  put_wrapped(out, "Finding: " + c.finding, 4);
  out << '\n';
}

}  // namespace

std::string format_forecast_table(const CapabilityOptions& o, const CapabilityForecast& f,
                                  const ForecastTableOptions& table,
                                  const ForecastComparison* comparison) {
  const ReportUnits u(table.unit);
  const std::string per_m = table.unicode ? "µm/m" : "um/m";
  const std::string sigma = table.unicode ? "σ" : "sigma";
  const auto slope = [](double value) { return ReportUnits::fixed(value * 1e6, 1); };
  std::ostringstream out;
  out << "cylzone " << version_string << " forecast: machine capability for a bore "
      << u.text(o.depth) << " deep (values in " << u.name() << ", tilts in " << per_m << ")\n\n";

  out << "Machine (ISO 230-2: A accuracy band, R repeatability; s = R / 4; b systematic, "
      << (o.systematic == SystematicPlacement::worst_corner ? "worst corner" : "compensated")
      << ")\n";
  out << "  axis        A          R          s          b\n";
  const auto axis_row = [&](const char* name, const AxisPositioning& a, double s, double b) {
    out << "  " << padded(name, 6) << right(u.text(a.accuracy), 9) << "  "
        << right(u.text(a.repeatability), 9) << "  " << right(u.text(s), 9) << "  "
        << right(u.text(b), 9) << '\n';
  };
  axis_row("X", o.x, f.sigma_x, f.bias_x);
  axis_row("Y", o.y, f.sigma_y, f.bias_y);
  for (const TiltSource& t : o.tilts)
    out << "  tilt  " << (t.name.empty() ? std::string("(unnamed)") : t.name) << ": systematic "
        << slope(t.systematic) << ", random " << sigma << ' ' << slope(t.random) << " " << per_m
        << '\n';
  out << "  tilt in all: systematic " << slope(f.tilt_systematic) << " " << per_m
      << " (aligned with b), random " << sigma << ' ' << slope(f.tilt_sigma) << " " << per_m
      << " per direction\n\n";

  const std::string q = ReportUnits::fixed(100.0 * f.coverage, 2) + " %";
  out << "Forecast (worst case: systematic + 3 " << sigma << " on every component)\n";
  out << "  " << padded("", 28) << right("worst case", 11) << right("median", 11)
      << right(q, 11) << "  law\n";
  const auto figure_row = [&](const std::string& name, const DiameterFigures& d) {
    out << "  " << padded(name, 28) << right(u.text(d.worst_case), 11)
        << right(u.text(d.median), 11) << right(u.text(d.quantile), 11) << "  "
        << radial_law_name(d.law) << '\n';
  };
  figure_row("position at the mouth", f.top);
  figure_row("position at the bottom", f.bottom);
  figure_row("position over full depth", f.full_depth);
  figure_row("perpendicularity", f.perpendicularity);
  out << '\n';

  out << "  tolerance            limit   systematic   share outside   verdict\n";
  const auto tolerance_row = [&](const std::string& name, const ToleranceForecast& t) {
    out << "  " << padded(name, 16) << right(u.text(t.tolerance), 10)
        << right(u.text(t.systematic), 13) << right(percent(t.share_outside), 16) << "   "
        << verdict_text(t.verdict) << (t.systematic_exceeds ? " (systematic part alone)" : "")
        << '\n';
  };
  tolerance_row("position", f.position);
  if (f.perpendicularity_forecast) tolerance_row("perpendicularity", *f.perpendicularity_forecast);
  out << "  can hold: share outside <= " << percent(o.share_limit_capable)
      << "; cannot hold: share above " << percent(o.share_limit_marginal)
      << "\n  or the systematic part alone outside the zone\n\n";

  out << "Deepest bore that holds (share outside <= " << percent(o.share_limit_capable) << "): ";
  switch (f.deepest.kind) {
    case DeepestBore::Kind::at_depth: out << u.text(f.deepest.depth) << '\n'; break;
    case DeepestBore::Kind::any_depth:
      out << (f.tilt_systematic == 0.0 && f.tilt_sigma == 0.0
                  ? std::string("any depth (no tilt source)")
                  : "deeper than " + u.text(1e6))
          << '\n';
      break;
    case DeepestBore::Kind::none:
      out << "none (the mouth alone exceeds the share)\n";
      break;
  }
  out << "Forecast: " << verdict_text(f.verdict) << " at depth " << u.text(o.depth) << "\n\n";
  if (comparison) put_comparison(out, *comparison, u, sigma);
  put_caution(out);
  return out.str();
}

// ---------------------------------------------------------------- `cylzone advise`

namespace {

std::string pattern_text(const ProbingPattern& p, const ReportUnits& u, const std::string& deg) {
  std::string heights;
  for (std::size_t i = 0; i < p.section_heights.size(); ++i)
    heights += (i ? ", " : "") + u.text(p.section_heights[i]);
  std::string text = std::to_string(p.section_heights.size()) + " sections x " +
                     std::to_string(p.points_per_section) +
                     " points = " + std::to_string(p.total_points()) + ", arc " +
                     ReportUnits::fixed(p.arc_deg, 1) + deg;
  if (p.arc_deg < 360.0) text += " centred at " + ReportUnits::fixed(p.arc_centre_deg, 1) + deg;
  return text + "; at " + heights;
}

void put_prediction(std::ostream& out, const ProbingAdviceOptions& o, const ProbingPrediction& p,
                    const ReportUnits& u, const ProbingTableOptions& table) {
  const std::string deg = table.unicode ? "°" : " deg";
  const std::string urad = table.unicode ? "µrad" : "urad";
  out << "  pattern: " << pattern_text(p.pattern, u, deg) << '\n';
  if (p.status == PredictionStatus::undetermined) {
    out << "  UNDETERMINED: " << p.message << "\n";
    return;
  }
  out << "  tilt magnification "
      << (p.magnification ? ReportUnits::fixed(*p.magnification, 2) : std::string("-"))
      << ", u(tilt) " << ReportUnits::fixed(p.u_tilt * 1e6, 2) << ' ' << urad << " per direction, "
      << p.trials << " trials"
      << (p.adaptive ? std::string(" (adaptive, JCGM 101 7.9") +
                           (p.converged ? ")" : ": not converged within the trial limit)")
                     : std::string())
      << '\n';
  out << "  " << padded("", 26) << right("height", 10) << right("u(x)", 9) << right("u(y)", 9)
      << right("mean", 9) << right("sd", 9) << right("95 %", 9) << '\n';
  const auto end_row = [&](const char* name, const EndPrediction& e) {
    out << "  " << padded(name, 26) << right(u.text(e.height), 10) << right(u.text(e.u_x), 9)
        << right(u.text(e.u_y), 9) << right(u.text(e.position.mean), 9)
        << right(u.text(e.position.standard_deviation), 9)
        << right(u.text(e.position.quantile95), 9) << '\n';
  };
  const auto figure_row = [&](const char* name, const SimulatedFigure& f) {
    out << "  " << padded(name, 26) << right("", 28) << right(u.text(f.mean), 9)
        << right(u.text(f.standard_deviation), 9) << right(u.text(f.quantile95), 9) << '\n';
  };
  end_row("position at the top", p.top);
  end_row("position at the bottom", p.bottom);
  figure_row("position over full depth", p.full_depth);
  figure_row("perpendicularity", p.perpendicularity);
  const auto decision = [&](const char* name, const FigureUncertainty& f) {
    out << "  " << padded(name, 18) << "U = " << u.text(f.expanded) << " of " << u.text(f.tolerance)
        << " = " << percent(f.share) << " of the tolerance (target <= " << percent(o.target_share)
        << "): " << (f.meets_target ? "meets" : "DOES NOT MEET") << '\n';
  };
  decision("position", p.position);
  if (p.perpendicularity_uncertainty) decision("perpendicularity", *p.perpendicularity_uncertainty);
}

}  // namespace

std::string format_probing_table(const ProbingAdviceOptions& o, const ProbingAdvice& a,
                                 const ProbingTableOptions& table) {
  const ReportUnits u(table.unit);
  std::ostringstream out;
  out << "cylzone " << version_string << " advise: probing a bore of diameter "
      << u.text(o.diameter) << ", range " << u.text(o.range_top) << " .. " << u.text(o.range_bottom)
      << " (values in " << u.name() << ")\n";
  out << "probing sigma " << u.text(o.probing_sigma) << " per coordinate (3-D), axis "
      << axis_method_name(o.axis_method) << ", seed " << o.seed << '\n'
      << "figures of a perfect bore at true position: mean, sd and 95 % quantile of the "
         "positional diameter;\nU = the larger of the 95 % quantile and k = 2 linear "
         "propagation\n\n";
  out << "Candidate\n";
  put_prediction(out, o, a.candidate, u, table);
  out << "Candidate: "
      << (a.candidate.meets_target ? "meets the target" : "DOES NOT MEET the target") << "\n\n";
  if (a.search) {
    const ProbingSearch& s = *a.search;
    out << "Smallest pattern meeting the target (sections over the usable depth "
        << u.text(o.usable_top.value_or(o.range_top)) << " .. "
        << u.text(o.usable_bottom.value_or(o.range_bottom)) << ", ends first; "
        << s.candidates_tried << " candidates tried)\n";
    if (s.smallest) {
      put_prediction(out, o, *s.smallest, u, table);
      if (s.previous) {
        out << "The one before it in the search order does not meet the target:\n";
        put_prediction(out, o, *s.previous, u, table);
      }
    } else {
      out << "  none: no pattern of up to " << o.max_sections << " sections and "
          << o.points_ladder.back() << " points per section meets the target\n";
    }
    out << '\n';
  }
  put_caution(out);
  return out.str();
}

std::string format_probing_predictions(const ReportModel& m, bool unicode) {
  if (std::none_of(m.bores.begin(), m.bores.end(),
                   [](const BoreSummary& b) { return b.probing_prediction.has_value(); }))
    return {};
  const ReportUnits& u = m.units;
  const std::string deg = unicode ? "°" : " deg";
  double sigma = 0.0;
  for (const BoreSummary& b : m.bores)
    if (b.probing_prediction) sigma = b.probing_prediction->probing_sigma;
  std::ostringstream out;
  out << "\nProbing prediction for the pattern probed (probing sigma " << u.text(sigma)
      << " per coordinate; U: expanded uncertainty\nof a perfect bore's figure, "
         "docs/probing-advice.md; % of the stated tolerance)\n";
  out << padded("bore", 6) << right("pattern", 10) << right("arc", 10) << right("u top", 9)
      << right("u bottom", 9) << right("position", 10) << right("U", 9) << right("%", 8)
      << right("perp.", 10) << right("U", 9) << right("%", 8) << '\n';
  for (const BoreSummary& b : m.bores) {
    if (!b.probing_prediction) continue;
    const ProbingPrediction& p = *b.probing_prediction;
    out << padded(b.id, 6)
        << right(std::to_string(p.pattern.section_heights.size()) + " x " +
                     std::to_string(p.pattern.points_per_section),
                 10)
        << right(ReportUnits::fixed(p.pattern.arc_deg, 0) + deg, 10);
    if (p.status == PredictionStatus::undetermined) {
      out << "  " << p.message << '\n';
      continue;
    }
    const auto measured = [&](const std::string& id) {
      const Characteristic* c = m.find(b.id + id);
      return c && c->not_evaluated.empty() ? u.text(c->value) : std::string("-");
    };
    out << right(u.text(std::max(p.top.u_x, p.top.u_y)), 9)
        << right(u.text(std::max(p.bottom.u_x, p.bottom.u_y)), 9)
        << right(measured("/position"), 10) << right(u.text(p.position.expanded), 9)
        << right(ReportUnits::fixed(100.0 * p.position.share, 1), 8);
    if (p.perpendicularity_uncertainty)
      out << right(measured("/perpendicularity"), 10)
          << right(u.text(p.perpendicularity_uncertainty->expanded), 9)
          << right(ReportUnits::fixed(100.0 * p.perpendicularity_uncertainty->share, 1), 8);
    out << '\n';
  }
  return out.str();
}

}  // namespace cylzone
