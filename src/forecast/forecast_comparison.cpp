// The machine-capability forecast against measured parts. Method and sources in
// forecast_comparison.hpp and docs/forecast.md ("Comparing with measured parts").
#include "cylzone/forecast/forecast_comparison.hpp"

#include <algorithm>
#include <cmath>
#include <sstream>

#include "cylzone/core/errors.hpp"
#include "forecast/detail/sample_statistics.hpp"

namespace cylzone {

std::vector<ObservedBore> observed_bores(const ReportModel& report, const std::string& source,
                                         const std::vector<std::string>& only,
                                         std::size_t& skipped) {
  std::vector<ObservedBore> out;
  for (const BoreSummary& b : report.bores) {
    if (!only.empty() && std::find(only.begin(), only.end(), b.id) == only.end()) continue;
    const Characteristic* c = report.find(b.id + "/position");
    if (c == nullptr) continue;  // no position tolerance on this bore
    if (!b.evaluated() || !c->not_evaluated.empty()) {
      ++skipped;
      continue;
    }
    ObservedBore o;
    o.source = source;
    o.bore = b.id;
    o.position = c->value;
    if (b.depth) {
      o.range_length = b.depth->range_top - b.depth->range_bottom;
      // The profile runs from the top of the range down; its first sample is the mouth.
      if (!b.depth->samples.empty() && b.depth->samples.front().height == b.depth->range_top)
        o.mouth = b.depth->samples.front().offset;
    }
    out.push_back(std::move(o));
  }
  return out;
}

namespace {

/// P(X <= k) for X ~ Binomial(n, p), 0 < p < 1, summed in log space (lgamma) so that large n
/// neither overflows nor underflows.
double binomial_cdf(std::size_t k, std::size_t n, double p) {
  const double lp = std::log(p), lq = std::log1p(-p);
  const double ln = std::lgamma(static_cast<double>(n) + 1.0);
  double sum = 0.0;
  for (std::size_t i = 0; i <= k && i <= n; ++i) {
    const double di = static_cast<double>(i);
    sum += std::exp(ln - std::lgamma(di + 1.0) - std::lgamma(static_cast<double>(n - i) + 1.0) +
                    di * lp + static_cast<double>(n - i) * lq);
  }
  return std::min(1.0, sum);
}

/// The p in (0, 1) where the decreasing function g(p) crosses `target`, by bisection to the
/// resolution of a double.
template <class G>
double crossing(const G& g, double target) {
  double lo = 0.0, hi = 1.0;
  for (int i = 0; i < 200 && hi - lo > 1e-15; ++i) {
    const double mid = 0.5 * (lo + hi);
    (g(mid) > target ? lo : hi) = mid;
  }
  return 0.5 * (lo + hi);
}

}  // namespace

BinomialInterval clopper_pearson(std::size_t x, std::size_t n, double confidence) {
  if (n == 0 || x > n || !(confidence > 0.0 && confidence < 1.0))
    throw InputError("", 0, "needs 0 <= events <= trials, trials > 0, confidence in (0, 1)",
                     "clopper_pearson");
  const double tail = 0.5 * (1.0 - confidence);
  BinomialInterval b;
  // Lower: P(X >= x | p) = tail, i.e. P(X <= x - 1 | p) = 1 - tail (decreasing in p).
  if (x > 0) b.lower = crossing([&](double p) { return binomial_cdf(x - 1, n, p); }, 1.0 - tail);
  // Upper: P(X <= x | p) = tail.
  if (x < n) b.upper = crossing([&](double p) { return binomial_cdf(x, n, p); }, tail);
  return b;
}

ForecastMoments full_depth_moments(const CapabilityOptions& options) {
  CapabilityOptions o = options;
  o.coverage = 0.95;
  const CapabilityForecast at95 = forecast_capability(o);
  ForecastMoments m;
  m.quantile95 = at95.full_depth.quantile;
  o.coverage = 1.0 - 1e-9;
  const double top = forecast_capability(o).full_depth.quantile;
  // Composite Simpson over [0, top] of (1 - F) and 2 d (1 - F) (header: E[D] and E[D^2]).
  constexpr int panels = 400;  // even
  const double step = top / panels;
  double s1 = 0.0, s2 = 0.0;
  for (int i = 0; i <= panels; ++i) {
    const double d = step * i;
    const double survival = 1.0 - full_depth_probability(at95, o.depth, d);
    const double w = (i == 0 || i == panels) ? 1.0 : (i % 2 ? 4.0 : 2.0);
    s1 += w * survival;
    s2 += w * 2.0 * d * survival;
  }
  m.mean = s1 * step / 3.0;
  const double second = s2 * step / 3.0;
  m.standard_deviation = std::sqrt(std::max(0.0, second - m.mean * m.mean));
  return m;
}

std::string_view machine_performance_name(MachinePerformance p) noexcept {
  switch (p) {
    case MachinePerformance::as_forecast:
      return "as-forecast";
    case MachinePerformance::better_than_forecast:
      return "better-than-forecast";
    case MachinePerformance::worse_than_forecast:
      return "worse-than-forecast";
  }
  return "as-forecast";
}

ForecastComparison compare_with_forecast(const CapabilityOptions& options,
                                         const CapabilityForecast& forecast,
                                         const std::vector<ObservedBore>& observed,
                                         double confidence) {
  if (observed.empty())
    throw InputError("", 0, "no measured bore with a position to compare", "observed");
  ForecastComparison c;
  c.confidence = confidence;
  c.bores = observed.size();
  std::vector<double> positions;
  for (const ObservedBore& b : observed) positions.push_back(b.position);
  const detail::SampleMoments m = detail::sample_moments(positions);
  c.observed_mean = m.mean;
  c.observed_sd = m.sd;
  c.observed_quantile95 = detail::sample_quantile(positions, 0.95);
  c.forecast = full_depth_moments(options);
  c.tolerance = options.position_tolerance;
  c.predicted_share = forecast.position.share_outside;
  for (const ObservedBore& b : observed) {
    if (b.position > c.tolerance) ++c.outside;
    if (b.position > c.forecast.quantile95) ++c.above_quantile;
    if (b.range_length && std::abs(*b.range_length - options.depth) > 0.01 * options.depth)
      ++c.depth_mismatches;
  }
  c.outside_interval = clopper_pearson(c.outside, c.bores, confidence);
  c.above_interval = clopper_pearson(c.above_quantile, c.bores, confidence);

  std::vector<double> dx, dy;
  for (const ObservedBore& b : observed)
    if (b.mouth) {
      dx.push_back(b.mouth->x());
      dy.push_back(b.mouth->y());
    }
  c.with_mouth = dx.size();
  if (dx.size() >= 2) {
    const detail::SampleMoments mx = detail::sample_moments(dx), my = detail::sample_moments(dy);
    c.x = MouthAxisComparison{mx.mean, mx.sd, forecast.bias_x, forecast.sigma_x};
    c.y = MouthAxisComparison{my.mean, my.sd, forecast.bias_y, forecast.sigma_y};
  }

  const bool worse = c.outside_interval.lower > c.predicted_share || c.above_interval.lower > 0.05;
  const bool better = !worse && c.above_interval.upper < 0.05;
  c.performance = worse    ? MachinePerformance::worse_than_forecast
                  : better ? MachinePerformance::better_than_forecast
                           : MachinePerformance::as_forecast;
  std::ostringstream f;
  const int pct = static_cast<int>(std::lround(100.0 * confidence));
  switch (c.performance) {
    case MachinePerformance::worse_than_forecast:
      f << "the machine performs WORSE than forecast: "
        << (c.outside_interval.lower > c.predicted_share
                ? "more bores leave the zone than the forecast allows"
                : "more bores exceed the forecast's 95 % quantile than 5 %")
        << " (" << pct << " % Clopper-Pearson interval wholly above the expected share)";
      break;
    case MachinePerformance::better_than_forecast:
      f << "the machine performs better than forecast: fewer bores exceed the forecast's 95 % "
           "quantile than 5 % ("
        << pct << " % Clopper-Pearson interval wholly below)";
      break;
    case MachinePerformance::as_forecast:
      f << "the machine performs as forecast: both counts are consistent with the forecast at "
        << pct << " %";
      {
        // With no bore above the quantile the upper limit is 1 - tail^(1/n) (Clopper-Pearson
        // for x = 0): below 5 % only from this many bores on.
        const double tail = 0.5 * (1.0 - confidence);
        const auto needed = static_cast<std::size_t>(std::ceil(std::log(tail) / std::log(0.95)));
        if (c.bores < needed)
          f << " (" << c.bores << " bores: the intervals are wide; a better machine can be shown "
            << "from " << needed << " bores on)";
      }
      break;
  }
  c.finding = f.str();
  return c;
}

}  // namespace cylzone
