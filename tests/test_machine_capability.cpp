// Tests of the machine-capability forecast (forecast/machine_capability.hpp). References:
// closed forms of the Rayleigh law, the worked example of docs/forecast.md (hand calculation),
// a seeded Monte Carlo simulation of the model, and scipy (the hidden "[forecast-cases]" case
// writes cases that tests/reference/crosscheck_forecast.py recomputes with scipy.stats and
// scipy.integrate).
#include <catch2/catch.hpp>
#include <cmath>
#include <cstdlib>
#include <fstream>
#include <limits>
#include <random>

#include "cylzone/core/errors.hpp"
#include "cylzone/forecast/machine_capability.hpp"
#include "cylzone/report/forecast_report.hpp"

using namespace cylzone;

namespace {

/// Upper tail of the standard normal law (closed form through erfc).
double normal_tail(double z) { return 0.5 * std::erfc(z / std::sqrt(2.0)); }

/// The worked example of docs/forecast.md: A = R = 8 µm on both axes, 50 µm/m squareness,
/// 60 mm deep, position 0.025, perpendicularity 0.006.
CapabilityOptions worked_example() {
  CapabilityOptions o;
  o.x = {0.008, 0.008};
  o.y = {0.008, 0.008};
  o.tilts = {{"squareness", 50e-6, 0.0}};
  o.depth = 60.0;
  o.position_tolerance = 0.025;
  o.perpendicularity_tolerance = 0.006;
  return o;
}

/// A machine with every part of the model at work: unequal sigmas, a systematic band, a
/// systematic and a random tilt.
CapabilityOptions busy_machine() {
  CapabilityOptions o;
  o.x = {0.011, 0.007};
  o.y = {0.013, 0.009};
  o.tilts = {{"squareness", 40e-6, 0.0}, {"drill walk", 10e-6, 25e-6}};
  o.depth = 55.0;
  o.position_tolerance = 0.020;
  o.perpendicularity_tolerance = 0.005;
  return o;
}

}  // namespace

TEST_CASE("disk probability: Rayleigh closed form 1 - exp(-r^2 / 2 s^2)", "[forecast]") {
  // Rayleigh CDF (standard result; Simon & Alouini 2005, ch. 2): X and Y independent N(0, s^2).
  for (double s : {0.0007, 0.002, 0.013})
    for (double k : {0.1, 0.8, 1.7, 3.0, 4.5, 6.0}) {
      const double r = k * s;
      CHECK(disk_probability(0.0, 0.0, s, s, r) ==
            Approx(1.0 - std::exp(-0.5 * k * k)).margin(1e-13));
      // The tail itself, relative: the share outside is what the verdict compares.
      CHECK(1.0 - disk_probability(0.0, 0.0, s, s, r) ==
            Approx(std::exp(-0.5 * k * k)).epsilon(1e-9).margin(1e-15));
    }
}

TEST_CASE("disk probability: a fixed axis reduces to one normal interval", "[forecast]") {
  // sigma_x = 0: x is fixed at mean_x and y must lie on the chord |y| <= sqrt(r^2 - mx^2)
  // (definition); the interval probability of N(my, sy^2) in closed form.
  const double r = 0.01, mx = 0.006, my = 0.001, sy = 0.002;
  const double half = std::sqrt(r * r - mx * mx);
  const double expected = normal_tail((-half - my) / sy) - normal_tail((half - my) / sy);
  CHECK(disk_probability(mx, my, 0.0, sy, r) == Approx(expected).margin(1e-14));
  CHECK(disk_probability(my, mx, sy, 0.0, r) == Approx(disk_probability(mx, my, 0.0, sy, r)));
  CHECK(disk_probability(0.02, 0.0, 0.0, 0.0, r) == 0.0);
}

TEST_CASE("Rayleigh quantiles of the forecast: closed form and the 95 % fact", "[forecast]") {
  // A = R: no systematic part; no tilt: the mouth and the bottom follow the same Rayleigh law.
  CapabilityOptions o;
  o.x = o.y = {0.012, 0.012};
  o.depth = 40.0;
  o.position_tolerance = 0.05;
  const double s = 0.003;
  // Quantile of the Rayleigh law: s sqrt(-2 ln(1 - p)) (closed form, inverse of the CDF).
  for (double p : {0.5, 0.9, 0.95, 0.9973}) {
    o.coverage = p;
    const CapabilityForecast f = forecast_capability(o);
    CHECK(f.top.law == RadialLaw::rayleigh);
    CHECK(f.top.quantile == Approx(2.0 * s * std::sqrt(-2.0 * std::log(1.0 - p))).epsilon(1e-9));
    CHECK(f.top.median == Approx(2.0 * s * std::sqrt(2.0 * std::log(2.0))).epsilon(1e-9));
    CHECK(f.full_depth.quantile == Approx(f.top.quantile).epsilon(1e-9));
    if (p == 0.95)  // "95 % within 4.895 s" as a diameter (REFERENCES, standard result)
      CHECK(f.top.quantile / s == Approx(4.895).margin(5e-4));
  }
  // Without tilt the depth does not limit the bore.
  CHECK(forecast_capability(o).deepest.kind == DeepestBore::Kind::any_depth);
}

TEST_CASE("worked example of docs/forecast.md", "[forecast]") {
  const CapabilityForecast f = forecast_capability(worked_example());
  // Numbers worked by hand in docs/forecast.md, "A worked example".
  CHECK(f.sigma_x == Approx(0.002));
  CHECK(f.bias_x == 0.0);
  CHECK(f.top.worst_case == Approx(0.016971).margin(5e-7));           // 2 * 6 um * sqrt 2
  CHECK(f.bottom.worst_case == Approx(0.022971).margin(5e-7));        // + 2 * 3 um
  CHECK(f.full_depth.worst_case == Approx(0.022971).margin(5e-7));
  CHECK(f.top.median == Approx(0.0047096).margin(5e-8));              // 2 s sqrt(2 ln 2)
  CHECK(f.top.quantile == Approx(0.0137573).margin(5e-8));            // 2 s sqrt(-2 ln 0.0027)
  CHECK(f.perpendicularity.worst_case == Approx(0.003).margin(1e-12));  // 60 mm * 50 um/m
  CHECK(f.perpendicularity.quantile == Approx(0.003).margin(1e-12));
  CHECK(f.perpendicularity.law == RadialLaw::fixed);
  CHECK(f.bottom.law == RadialLaw::rice);
  CHECK(f.position.systematic == Approx(0.006));
  // Share outside between the hand bounds: the half-plane beyond the bottom's mean,
  // Q(4.75) = 1.017e-6, and the mouth's Rayleigh tail exp(-19.53) plus the centred-noise bound
  // exp(-(9.5 / 2)^2 / 2) = 1.26e-5.
  CHECK(f.position.share_outside >= normal_tail(4.75));
  CHECK(f.position.share_outside <= std::exp(-19.53125) + std::exp(-0.5 * 4.75 * 4.75));
  CHECK(f.position.verdict == CapabilityVerdict::can_hold);
  REQUIRE(f.perpendicularity_forecast);
  CHECK(f.perpendicularity_forecast->share_outside == 0.0);
  CHECK(f.verdict == CapabilityVerdict::can_hold);
  // Perpendicularity governs the depth: 0.006 / 50 um/m = 120 mm.
  REQUIRE(f.deepest.kind == DeepestBore::Kind::at_depth);
  CHECK(f.deepest.depth == Approx(120.0).epsilon(1e-8));
}

TEST_CASE("share outside against a seeded Monte Carlo simulation of the model", "[forecast]") {
  // The model simulated directly (header items 1-6): mouth b + N(0, diag(s^2)), tilt along b
  // plus isotropic N(0, sigma_t^2), bottom = mouth + h theta, position over the depth the
  // larger end; the share is compared within 4.5 standard errors.
  CapabilityOptions o = busy_machine();
  const CapabilityForecast f = forecast_capability(o);
  std::mt19937_64 engine(20261203);
  std::normal_distribution<double> normal(0.0, 1.0);
  const double bx = 0.002, by = 0.002;  // (A - R) / 2
  const double sx = 0.00175, sy = 0.00225;
  const double tilt = 50e-6, tilt_sigma = 25e-6, h = o.depth, r = 0.010;
  const double ux = bx / std::hypot(bx, by), uy = by / std::hypot(bx, by);
  const int trials = 2000000;
  int outside = 0, outside_perpendicularity = 0;
  for (int i = 0; i < trials; ++i) {
    const double tx = bx + sx * normal(engine), ty = by + sy * normal(engine);
    const double ax = tilt * ux + tilt_sigma * normal(engine);
    const double ay = tilt * uy + tilt_sigma * normal(engine);
    const double bottom = std::hypot(tx + h * ax, ty + h * ay);
    if (std::max(std::hypot(tx, ty), bottom) > r) ++outside;
    if (h * std::hypot(ax, ay) > *o.perpendicularity_tolerance) ++outside_perpendicularity;
  }
  const auto within = [&](double share, int count) {
    const double p = double(count) / trials;
    const double standard_error = std::sqrt(std::max(p * (1.0 - p), 1e-7) / trials);
    INFO("model " << share << ", simulated " << p << " +- " << standard_error);
    CHECK(std::abs(share - p) <= 4.5 * standard_error);
  };
  CHECK(f.sigma_x == Approx(sx));
  CHECK(f.bias_y == Approx(by));
  CHECK(f.position.share_outside > 0.005);  // a case that tests something
  within(f.position.share_outside, outside);
  REQUIRE(f.perpendicularity_forecast);
  CHECK(f.perpendicularity_forecast->share_outside > 0.005);
  within(f.perpendicularity_forecast->share_outside, outside_perpendicularity);
}

TEST_CASE("the deepest bore reproduces the share limit", "[forecast]") {
  CapabilityOptions o = busy_machine();
  o.perpendicularity_tolerance.reset();
  o.position_tolerance = 0.040;
  const CapabilityForecast f = forecast_capability(o);
  REQUIRE(f.deepest.kind == DeepestBore::Kind::at_depth);
  o.depth = f.deepest.depth;
  // At the deepest bore the share outside is the limit (definition of the solution).
  CHECK(forecast_capability(o).position.share_outside ==
        Approx(o.share_limit_capable).epsilon(1e-6));
  o.depth = 1.01 * f.deepest.depth;  // and deeper bores exceed it (monotone in depth)
  CHECK(forecast_capability(o).position.share_outside > o.share_limit_capable);
  o.depth = 0.99 * f.deepest.depth;
  CHECK(forecast_capability(o).position.verdict == CapabilityVerdict::can_hold);
}

TEST_CASE("verdicts: systematic part alone, marginal and cannot hold", "[forecast]") {
  CapabilityOptions o = worked_example();
  o.perpendicularity_tolerance.reset();
  // 2 * (0 + 200 mm * 50 um/m) = 0.020 < 0.025 but 2 * 300 mm * 50 um/m = 0.030 > 0.025:
  // the systematic part alone leaves the zone (definition of the rule).
  o.depth = 300.0;
  CapabilityForecast f = forecast_capability(o);
  CHECK(f.position.systematic_exceeds);
  CHECK(f.verdict == CapabilityVerdict::cannot_hold);
  // The common-practice example of REFERENCES: an error of 0.010 per axis gives a worst-case
  // positional diameter of 2 sqrt(2) 0.010 = 0.028 > 0.025. Here A = 0.016, R = 0.008:
  // b = 0.004 and 3 s = 0.006 per axis, i.e. 0.010 at worst.
  o = worked_example();
  o.tilts.clear();
  o.x = o.y = {0.016, 0.008};
  f = forecast_capability(o);
  CHECK(f.top.worst_case == Approx(0.028284).margin(5e-7));
  // Share outside at the mouth: |b| = 5.66 um, s = 2 um, r = 12.5 um, the edge 3.42 s beyond
  // the mean: at least the half-plane Q(3.42) = 3.1e-4; Marcum's large-argument form
  // sqrt(r / |b|) Q(3.42) = 4.7e-4 (from memory) is well below 0.27 %: the worst case says
  // cannot hold, the statistics can hold.
  const double q = normal_tail((0.0125 - 0.004 * std::sqrt(2.0)) / 0.002);
  CHECK(f.position.share_outside >= q);
  CHECK(f.position.share_outside == Approx(std::sqrt(0.0125 / (0.004 * std::sqrt(2.0))) * q)
                                        .epsilon(0.1));
  CHECK(f.position.verdict == CapabilityVerdict::can_hold);
  // A tighter zone: marginal between the limits.
  o.position_tolerance = 0.019;
  f = forecast_capability(o);
  INFO("share " << f.position.share_outside);
  CHECK(f.position.share_outside > 0.0027);
  CHECK(f.position.share_outside <= 0.0455);
  CHECK(f.position.verdict == CapabilityVerdict::marginal);
  o.position_tolerance = 0.014;  // 7 um radius, 1.34 um from b: far more than 4.55 % outside
  CHECK(forecast_capability(o).verdict == CapabilityVerdict::cannot_hold);
  CHECK(forecast_capability(o).deepest.kind == DeepestBore::Kind::none);
}

TEST_CASE("results do not depend on which axis is called X", "[forecast]") {
  // Swapping X and Y swaps the model and leaves every diameter and share (symmetry of the
  // definitions).
  CapabilityOptions a = busy_machine(), b = busy_machine();
  std::swap(b.x, b.y);
  const CapabilityForecast fa = forecast_capability(a), fb = forecast_capability(b);
  CHECK(fb.full_depth.quantile == Approx(fa.full_depth.quantile).epsilon(1e-9));
  CHECK(fb.position.share_outside == Approx(fa.position.share_outside).epsilon(1e-9));
  CHECK(fb.bottom.median == Approx(fa.bottom.median).epsilon(1e-9));
}

TEST_CASE("invalid options name the option", "[forecast]") {
  const auto key_of = [](const CapabilityOptions& o) -> std::string {
    try {
      validate_capability_options(o);
    } catch (const InputError& e) {
      return e.key();
    }
    return "";
  };
  CapabilityOptions o = worked_example();
  CHECK(key_of(o).empty());
  o.x.repeatability = 0.0;
  CHECK(key_of(o) == "x.repeatability");
  o = worked_example();
  o.y.accuracy = 0.004;  // below R
  CHECK(key_of(o) == "y.accuracy");
  o = worked_example();
  o.tilts[0].random = -1e-6;
  CHECK(key_of(o) == "tilts[0].random");
  o = worked_example();
  o.depth = std::nan("");
  CHECK(key_of(o) == "depth");
  o = worked_example();
  o.position_tolerance = 0.0;
  CHECK(key_of(o) == "position_tolerance");
  o = worked_example();
  o.perpendicularity_tolerance = std::numeric_limits<double>::infinity();
  CHECK(key_of(o) == "perpendicularity_tolerance");
  o = worked_example();
  o.share_limit_marginal = 0.001;
  CHECK(key_of(o) == "share_limit_marginal");
  o = worked_example();
  o.coverage = 1.0;
  CHECK(key_of(o) == "coverage");
  CHECK_THROWS_AS(forecast_capability(o), InputError);
}

TEST_CASE("both reports carry the safety caution and the figures", "[forecast]") {
  const CapabilityOptions o = worked_example();
  const CapabilityForecast f = forecast_capability(o);
  const std::string table = format_forecast_table(o, f);
  const std::string json = format_forecast_json(o, f, LengthUnit::millimetre);
  for (const std::string& text : {table, json}) {
    CHECK(text.find("do not replace, the approved inspection") != std::string::npos);
    CHECK(text.find("can") != std::string::npos);
  }
  CHECK(table.find("0.0138") != std::string::npos);  // the mouth's 99.73 % quantile, 0.0137573
  CHECK(table.find("120.0000") != std::string::npos);
  CHECK(json.find("\"schema\": \"cylzone-forecast-1\"") != std::string::npos);
  // In inch the lengths are divided by 25.4 (exact by definition).
  const std::string inch = format_forecast_json(o, f, LengthUnit::inch);
  CHECK(inch.find("\"units\": \"inch\"") != std::string::npos);
}

// Hidden: cases for the scipy cross-check (tests/reference/crosscheck_forecast.py). One line per
// case: the kind, the parameters (mm) and cylzone's answer.
TEST_CASE("write forecast cases for scipy", "[.][forecast-cases]") {
  const char* path = std::getenv("CYLZONE_FORECAST_CASES");
  REQUIRE(path);
  std::ofstream out(path);
  out.precision(17);
  std::mt19937_64 engine(31337);
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  // Rayleigh, Hoyt, Rice and general disk probabilities.
  for (int i = 0; i < 16; ++i) {
    const double sx = 0.001 + 0.003 * unit(engine);
    const double sy = (i % 4 == 0 || i % 4 == 2) ? sx : 0.001 + 0.003 * unit(engine);
    const double mx = i % 4 < 2 ? 0.0 : 0.006 * (unit(engine) - 0.3);
    const double my = i % 4 < 2 ? 0.0 : 0.006 * (unit(engine) - 0.3);
    const double r = (0.3 + 3.5 * unit(engine)) * std::max(sx, sy) + std::hypot(mx, my);
    out << "disk " << mx << ' ' << my << ' ' << sx << ' ' << sy << ' ' << r << ' '
        << disk_probability(mx, my, sx, sy, r) << '\n';
  }
  // Both ends: a systematic shift with and without a random tilt.
  for (int i = 0; i < 6; ++i) {
    const double sx = 0.001 + 0.002 * unit(engine), sy = 0.001 + 0.002 * unit(engine);
    const double mx = 0.003 * (unit(engine) - 0.3), my = 0.003 * (unit(engine) - 0.3);
    const double shx = 0.004 * unit(engine), shy = 0.004 * (unit(engine) - 0.5);
    const double tau = i % 2 == 0 ? 0.0 : 0.0005 + 0.002 * unit(engine);
    const double r = 0.008 + 0.006 * unit(engine);
    out << "both " << mx << ' ' << my << ' ' << sx << ' ' << sy << ' ' << shx << ' ' << shy << ' '
        << tau << ' ' << r << ' ' << both_ends_probability(mx, my, sx, sy, shx, shy, tau, r)
        << '\n';
  }
  // Quantiles of whole forecasts: the mouth (Rayleigh, Hoyt), the bottom and perpendicularity
  // (Rice), written as the law's parameters and the figure.
  for (int i = 0; i < 3; ++i) {
    CapabilityOptions o;
    o.x = {0.006 + 0.004 * i, 0.006};
    o.y = {0.008 + 0.004 * i, 0.008 - 0.001 * i};
    o.tilts = {{"squareness", 30e-6 + 20e-6 * i, 10e-6 + 5e-6 * i}};
    o.depth = 50.0 + 10.0 * i;
    o.position_tolerance = 0.03;
    o.coverage = i == 1 ? 0.95 : 0.9973;
    const CapabilityForecast f = forecast_capability(o);
    const double tau = o.depth * f.tilt_sigma;
    out << "top " << f.bias_x << ' ' << f.bias_y << ' ' << f.sigma_x << ' ' << f.sigma_y << ' '
        << o.coverage << ' ' << f.top.median << ' ' << f.top.quantile << '\n';
    out << "perpendicularity " << o.depth * f.tilt_systematic << ' ' << tau << ' ' << o.coverage
        << ' ' << f.perpendicularity.median << ' ' << f.perpendicularity.quantile << '\n';
  }
  REQUIRE(out.good());
}
