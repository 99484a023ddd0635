// Tests of the forecast's comparison with measured parts (forecast/forecast_comparison.hpp).
// References:
//  * the Clopper-Pearson interval's closed forms at no event and at every trial an event,
//    lower = (alpha/2)^(1/n) for x = n and upper = 1 - (alpha/2)^(1/n) for x = 0 (Clopper &
//    Pearson 1934; the closed forms follow from the binomial tails of P(X = 0) = (1 - p)^n), and
//    scipy.stats.beta in the ctest fixture scipy_forecast_comparison (the hidden
//    "[comparison-cases]" case writes the cases, tests/reference/crosscheck_probing.py
//    recomputes them);
//  * the Rayleigh law (mean s sqrt(pi/2), variance (4 - pi) s^2 / 2, 95 % quantile
//    s sqrt(-2 ln 0.05); Papoulis & Pillai, 4th ed., 2002, from memory for the section) for the
//    forecast's moments without tilt, and a seeded Monte Carlo simulation of the forecast's
//    model (machine_capability.hpp, items 3-5) with tilt;
//  * measured parts generated from the model itself, written with the JSON renderer and read
//    back with the report reader: as forecast; the same deviations doubled: worse; shrunk:
//    better.
#include <catch2/catch.hpp>
#include <cmath>
#include <cstdlib>
#include <fstream>
#include <random>

#include "cylzone/core/errors.hpp"
#include "cylzone/decide/bore_characteristics.hpp"
#include "cylzone/forecast/forecast_comparison.hpp"
#include "cylzone/report/forecast_report.hpp"
#include "cylzone/report/report.hpp"
#include "cylzone/report/report_reader.hpp"

using namespace cylzone;

namespace {

const double pi = 3.14159265358979323846;

/// The worked example of docs/forecast.md: A = R = 8 µm on both axes, 50 µm/m squareness,
/// 60 mm deep, position 0.025.
CapabilityOptions worked_example(double squareness = 50e-6) {
  CapabilityOptions o;
  o.x = {0.008, 0.008};
  o.y = {0.008, 0.008};
  if (squareness > 0.0) o.tilts = {{"squareness", squareness, 0.0}};
  o.depth = 60.0;
  o.position_tolerance = 0.025;
  return o;
}

/// (dx, dy) at the mouth and at the bottom of a bore drawn from the forecast's model.
struct DrawnBore {
  Eigen::Vector2d top, bottom;
};
DrawnBore draw(const CapabilityForecast& f, double depth, std::mt19937_64& engine, double scale) {
  std::normal_distribution<double> n(0.0, 1.0);
  DrawnBore b;
  b.top =
      scale * Eigen::Vector2d(f.bias_x + f.sigma_x * n(engine), f.bias_y + f.sigma_y * n(engine));
  // Systematic tilt along +X without a bias (machine_capability.hpp, item 4).
  b.bottom = b.top + scale * depth * Eigen::Vector2d(f.tilt_systematic, 0.0);
  return b;
}

/// A part's check result with bores of the given deviations, on true position (RFS), 60 deep.
PartCheckResult part_with(const std::vector<DrawnBore>& bores, double tolerance) {
  PartCheckResult r;
  r.plan.name = "generated part";
  r.plan.file = "plan.toml";
  r.plan.unit = LengthUnit::millimetre;
  for (std::size_t i = 0; i < bores.size(); ++i) {
    BoreResult b;
    b.id = "H" + std::to_string(i + 1);
    b.probed_top = -2.0;
    b.probed_bottom = -58.0;
    PositionResult p;
    p.spec.tolerance = tolerance;
    p.spec.datums = {{'A', MaterialBoundary::rmb}, {'B', MaterialBoundary::rmb}};
    p.range_top = 0.0;
    p.range_bottom = -60.0;
    p.top = {0.0, bores[i].top};
    p.bottom = {-60.0, bores[i].bottom};
    p.worst = bores[i].bottom.norm() > bores[i].top.norm() ? p.bottom : p.top;
    p.value = 2.0 * p.worst.offset.norm();
    p.allowed = tolerance;
    b.position = p;
    r.bores.push_back(b);
    const auto more = bore_characteristics(b);
    r.characteristics.insert(r.characteristics.end(), more.begin(), more.end());
  }
  r.verdict = combine(r.characteristics);
  return r;
}

/// Bores of `parts` parts, `per_part` each, drawn from the model, scaled, through JSON and back.
std::vector<ObservedBore> measured(const CapabilityOptions& o, std::size_t parts,
                                   std::size_t per_part, double scale, std::uint64_t seed) {
  const CapabilityForecast f = forecast_capability(o);
  std::mt19937_64 engine(seed);
  std::vector<ObservedBore> all;
  for (std::size_t k = 0; k < parts; ++k) {
    std::vector<DrawnBore> drawn;
    for (std::size_t i = 0; i < per_part; ++i) drawn.push_back(draw(f, o.depth, engine, scale));
    const PartCheckResult r = part_with(drawn, o.position_tolerance);
    const std::string name = "part" + std::to_string(k) + ".json";
    const ReportModel back = read_report_json(format_json(make_report_model(r)), name);
    std::size_t skipped = 0;
    const std::vector<ObservedBore> bores = observed_bores(back, name, {}, skipped);
    CHECK(skipped == 0);
    REQUIRE(bores.size() == per_part);
    for (std::size_t i = 0; i < per_part; ++i) {
      // What was written is what is read: the deciding position and the mouth's deviation.
      CHECK(bores[i].position ==
            Approx(2.0 * std::max(drawn[i].top.norm(), drawn[i].bottom.norm())).margin(1e-12));
      REQUIRE(bores[i].mouth);
      CHECK((*bores[i].mouth - drawn[i].top).norm() < 1e-12);
      CHECK(*bores[i].range_length == Approx(60.0));
    }
    all.insert(all.end(), bores.begin(), bores.end());
  }
  return all;
}

}  // namespace

TEST_CASE("Clopper-Pearson interval: closed forms at the ends, contains the observed share") {
  for (const std::size_t n : {1, 7, 40, 500}) {
    const double tail = 0.025;
    const BinomialInterval none = clopper_pearson(0, n);
    CHECK(none.lower == 0.0);
    CHECK(none.upper == Approx(1.0 - std::pow(tail, 1.0 / n)).epsilon(1e-10));
    const BinomialInterval all = clopper_pearson(n, n);
    CHECK(all.upper == 1.0);
    CHECK(all.lower == Approx(std::pow(tail, 1.0 / n)).epsilon(1e-10));
  }
  // The defining tails (Clopper & Pearson 1934): at the lower limit P(X >= x) = 2.5 %, at the
  // upper P(X <= x) = 2.5 %; for n = 10, x = 3 by direct summation of the binomial terms.
  const BinomialInterval b = clopper_pearson(3, 10);
  const auto cdf = [](int k, int n, double p) {
    double s = 0.0;
    for (int i = 0; i <= k; ++i)
      s += std::tgamma(n + 1.0) / (std::tgamma(i + 1.0) * std::tgamma(n - i + 1.0)) *
           std::pow(p, i) * std::pow(1 - p, n - i);
    return s;
  };
  CHECK(1.0 - cdf(2, 10, b.lower) == Approx(0.025).epsilon(1e-9));
  CHECK(cdf(3, 10, b.upper) == Approx(0.025).epsilon(1e-9));
  CHECK(b.lower < 0.3);
  CHECK(b.upper > 0.3);
  CHECK_THROWS_AS(clopper_pearson(3, 2), InputError);
  CHECK_THROWS_AS(clopper_pearson(0, 0), InputError);
}

TEST_CASE("forecast moments of the full-depth diameter: Rayleigh without tilt") {
  // A = R: no systematic part; s = R / 4 = 2 µm on both axes; no tilt: D = 2 |e|, Rayleigh
  // with scale 2 s.
  const ForecastMoments m = full_depth_moments(worked_example(0.0));
  const double s = 2.0 * 0.002;
  CHECK(m.mean == Approx(s * std::sqrt(pi / 2.0)).epsilon(1e-6));
  CHECK(m.standard_deviation == Approx(s * std::sqrt((4.0 - pi) / 2.0)).epsilon(1e-5));
  CHECK(m.quantile95 == Approx(s * std::sqrt(-2.0 * std::log(0.05))).epsilon(1e-8));
}

TEST_CASE("forecast moments of the full-depth diameter: against a simulation of the model") {
  const CapabilityOptions o = worked_example();
  const ForecastMoments m = full_depth_moments(o);
  const CapabilityForecast f = forecast_capability(o);
  std::mt19937_64 engine(4242);
  std::vector<double> d;
  const std::size_t n = 200000;
  for (std::size_t i = 0; i < n; ++i) {
    const DrawnBore b = draw(f, o.depth, engine, 1.0);
    d.push_back(2.0 * std::max(b.top.norm(), b.bottom.norm()));
  }
  double mean = 0.0;
  for (double x : d) mean += x;
  mean /= n;
  double ss = 0.0;
  for (double x : d) ss += (x - mean) * (x - mean);
  const double sd = std::sqrt(ss / (n - 1));
  std::sort(d.begin(), d.end());
  // Monte Carlo errors: the mean's sd / sqrt(n), 0.2 % of sd here; 5 of them allowed; the
  // sd and the quantile to 1 % (about 5 of their standard errors; common practice).
  CHECK(m.mean == Approx(mean).margin(5.0 * sd / std::sqrt(double(n))));
  CHECK(m.standard_deviation == Approx(sd).epsilon(0.01));
  CHECK(m.quantile95 == Approx(d[static_cast<std::size_t>(0.95 * n)]).epsilon(0.01));
}

TEST_CASE(
    "measured parts drawn from the model agree with the forecast and worse or better ones are "
    "found") {
  const CapabilityOptions o = worked_example();
  const CapabilityForecast f = forecast_capability(o);

  const std::vector<ObservedBore> as = measured(o, 40, 3, 1.0, 11);
  const ForecastComparison same = compare_with_forecast(o, f, as);
  CHECK(same.bores == 120);
  CHECK(same.performance == MachinePerformance::as_forecast);
  CHECK(same.observed_mean == Approx(same.forecast.mean).epsilon(0.05));
  CHECK(same.depth_mismatches == 0);
  REQUIRE(same.x);
  CHECK(same.x->forecast_sigma == 0.002);
  CHECK(same.x->observed_sd == Approx(0.002).epsilon(0.2));
  CHECK(same.finding.find("as forecast") != std::string::npos);

  // Twice the deviations: the model's tail share is exceeded.
  const ForecastComparison worse = compare_with_forecast(o, f, measured(o, 10, 3, 2.0, 12));
  CHECK(worse.performance == MachinePerformance::worse_than_forecast);
  CHECK(worse.above_interval.lower > 0.05);
  CHECK(worse.finding.find("WORSE") != std::string::npos);

  // A third of the deviations, 120 bores: none above the forecast's quantile, and the upper
  // limit 1 - 0.025^(1/120) = 3.0 % is below 5 %.
  const ForecastComparison better = compare_with_forecast(o, f, measured(o, 40, 3, 0.3, 13));
  CHECK(better.above_quantile == 0);
  CHECK(better.performance == MachinePerformance::better_than_forecast);

  // Few bores: consistent, and the finding says how many a better machine needs.
  const ForecastComparison few = compare_with_forecast(o, f, measured(o, 2, 2, 0.3, 14));
  CHECK(few.performance == MachinePerformance::as_forecast);
  CHECK(few.finding.find("from 72 bores on") != std::string::npos);

  // The table and the JSON carry the comparison and the caution.
  const std::string table = format_forecast_table(o, f, {}, &same);
  CHECK(table.find("Compared with measured parts (120 bores") != std::string::npos);
  CHECK(table.find("do not replace, the approved inspection procedure") != std::string::npos);
  const std::string json = format_forecast_json(o, f, LengthUnit::millimetre, &worse);
  CHECK(json.find("\"performance\": \"worse-than-forecast\"") != std::string::npos);

  CHECK_THROWS_AS(compare_with_forecast(o, f, {}), InputError);
}

TEST_CASE("only the bores named are compared") {
  const CapabilityOptions o = worked_example();
  const CapabilityForecast f = forecast_capability(o);
  std::mt19937_64 engine(5);
  const PartCheckResult r =
      part_with({draw(f, 60.0, engine, 1.0), draw(f, 60.0, engine, 1.0)}, o.position_tolerance);
  const ReportModel back = read_report_json(format_json(make_report_model(r)), "p.json");
  std::size_t skipped = 0;
  const auto only = observed_bores(back, "p.json", {"H2"}, skipped);
  REQUIRE(only.size() == 1);
  CHECK(only.front().bore == "H2");
  CHECK(observed_bores(back, "p.json", {"nope"}, skipped).empty());
}

// Cases for tests/reference/crosscheck_probing.py: Clopper-Pearson intervals against
// scipy.stats.beta.
TEST_CASE("write comparison cases for scipy", "[.][comparison-cases]") {
  const char* path = std::getenv("CYLZONE_COMPARISON_CASES");
  REQUIRE(path);
  std::ofstream out(path);
  out.precision(17);
  for (const std::size_t n : {1, 2, 5, 12, 40, 137, 1000})
    for (const std::size_t x : {std::size_t{0}, std::size_t{1}, n / 3, n / 2, n - 1, n})
      for (const double conf : {0.9, 0.95, 0.99}) {
        if (x > n) continue;
        const BinomialInterval b = clopper_pearson(x, n, conf);
        out << "clopper " << x << ' ' << n << ' ' << conf << ' ' << b.lower << ' ' << b.upper
            << '\n';
      }
}
