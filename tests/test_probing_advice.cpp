// Tests of the probing advice (forecast/probing_advice.hpp). References:
//  * linear propagation (docs/probing-advice.md, "Linear reference", derived there; the
//    least-squares circle's centre covariance (2 sigma^2 / n) I for n points evenly spread over
//    the full circle is from memory, derived in the docs from the normal equations): the
//    simulated u of the axis at each end within its Monte Carlo error;
//  * the Rayleigh law of the radius of an isotropic bivariate normal (mean u sqrt(pi/2), 95 %
//    quantile u sqrt(-2 ln 0.05); Papoulis & Pillai, Probability, Random Variables and
//    Stochastic Processes, 4th ed., 2002, the Rayleigh density, from memory for the section),
//    and the same against scipy.stats.rayleigh in the ctest fixture scipy_probing_advice (the
//    hidden "[probing-cases]" case writes the cases, tests/reference/crosscheck_probing.py
//    recomputes them);
//  * the search's own contract (the order, the first that meets the target, the one before);
//  * determinism: the same bits for 1 and 2 threads (the threads option's contract).
#include <Eigen/Geometry>
#include <catch2/catch.hpp>
#include <cmath>
#include <cstdlib>
#include <fstream>
#include <tuple>

#include "cylzone/core/errors.hpp"
#include "cylzone/evaluate/bore_evaluation.hpp"
#include "cylzone/forecast/probing_advice.hpp"
#include "cylzone/report/probing_report.hpp"

using namespace cylzone;

namespace {

/// Two full-circle sections of n points each at z1 and z2 over a range [bottom, top].
ProbingAdviceOptions two_sections(std::size_t n, double z1, double z2) {
  ProbingAdviceOptions o;
  o.diameter = 12.0;
  o.range_top = 0.0;
  o.range_bottom = -50.0;
  o.position_tolerance = 0.025;
  o.perpendicularity_tolerance = 0.015;
  o.probing_sigma = 0.002;
  o.pattern.section_heights = {z1, z2};
  o.pattern.points_per_section = n;
  o.pattern.arc_centre_deg = 17.0;  // not aligned with the zone's axes
  o.trials = 4000;
  o.seed = 20261203;
  o.threads = 2;
  return o;
}

/// u of the axis at height z through two sections h apart (docs/probing-advice.md):
/// u(z) = u_c sqrt((1 - s)^2 + s^2), s = (z - z1) / h, u_c = sigma sqrt(2 / n).
double linear_u(double sigma, std::size_t n, double z1, double z2, double z) {
  const double uc = sigma * std::sqrt(2.0 / static_cast<double>(n));
  const double s = (z - z1) / (z2 - z1);
  return uc * std::sqrt((1.0 - s) * (1.0 - s) + s * s);
}

// Monte Carlo error of a standard deviation estimated from N normal samples: relative
// 1 / sqrt(2 (N - 1)) (common practice), 1.1 % at N = 4000; 5 % is above 4 of them.
constexpr double sd_tolerance = 0.05;

}  // namespace

TEST_CASE("u of the axis at each end follows linear propagation through two sections") {
  for (const std::size_t n : {6, 12, 24}) {
    // Sections off the range's ends and off the origin: the extrapolation is in the check.
    const double z1 = -4.0, z2 = -41.0;
    const ProbingAdviceOptions o = two_sections(n, z1, z2);
    const ProbingPrediction p = predict_probing(o);
    REQUIRE(p.status == PredictionStatus::predicted);
    const double u_top = linear_u(o.probing_sigma, n, z1, z2, o.range_top);
    const double u_bottom = linear_u(o.probing_sigma, n, z1, z2, o.range_bottom);
    INFO("n = " << n << ", u_top " << u_top << ", u_bottom " << u_bottom);
    CHECK(p.top.u_x == Approx(u_top).epsilon(sd_tolerance));
    CHECK(p.top.u_y == Approx(u_top).epsilon(sd_tolerance));
    CHECK(p.bottom.u_x == Approx(u_bottom).epsilon(sd_tolerance));
    CHECK(p.bottom.u_y == Approx(u_bottom).epsilon(sd_tolerance));
    // The tilt: the difference of two independent centres over h, u_c sqrt(2) / h.
    const double u_slope =
        o.probing_sigma * std::sqrt(2.0 / static_cast<double>(n)) * std::sqrt(2.0) / (z1 - z2);
    CHECK(p.u_tilt == Approx(u_slope).epsilon(sd_tolerance));
  }
}

TEST_CASE("the positional diameter of a perfect bore follows the Rayleigh law") {
  const double z1 = -3.0, z2 = -47.0;
  const ProbingAdviceOptions o = two_sections(8, z1, z2);
  const ProbingPrediction p = predict_probing(o);
  REQUIRE(p.status == PredictionStatus::predicted);
  // Rayleigh with scale u (per-axis standard uncertainty): mean u sqrt(pi/2), 95 % quantile
  // u sqrt(-2 ln 0.05); the positional diameter is twice the radius (from memory, see above).
  const double pi = 3.14159265358979323846;
  for (const auto& [end, z] :
       {std::pair{&p.top, o.range_top}, std::pair{&p.bottom, o.range_bottom}}) {
    const double u = linear_u(o.probing_sigma, 8, z1, z2, z);
    INFO("height " << z << ", u " << u);
    // Mean of N Rayleigh samples: relative error sqrt((4 - pi) / pi) / sqrt(N) = 0.8 % at
    // N = 4000; the 95 % quantile's about 1.2 % (common practice); 4 % and 5 % allowed.
    CHECK(end->position.mean == Approx(2.0 * u * std::sqrt(pi / 2.0)).epsilon(0.04));
    CHECK(end->position.quantile95 ==
          Approx(2.0 * u * std::sqrt(-2.0 * std::log(0.05))).epsilon(0.05));
    CHECK(2.0 * std::sqrt(-2.0 * std::log(0.05)) == Approx(4.895).margin(5e-4));
  }
  // Perpendicularity of a perfect bore: L |tilt|, Rayleigh with scale L u(tilt).
  const double length = o.range_top - o.range_bottom;
  const double u_slope = o.probing_sigma * std::sqrt(2.0 / 8.0) * std::sqrt(2.0) / (z1 - z2);
  CHECK(p.perpendicularity.mean == Approx(length * u_slope * std::sqrt(pi / 2.0)).epsilon(0.04));
  CHECK(p.perpendicularity.quantile95 ==
        Approx(length * u_slope * std::sqrt(-2.0 * std::log(0.05))).epsilon(0.05));
  // Over the full depth the worse end decides: never below either end's figure, trial by trial,
  // so neither is its quantile.
  CHECK(p.full_depth.quantile95 >=
        std::max(p.top.position.quantile95, p.bottom.position.quantile95));
  // The expanded uncertainty is the larger of the quantile and 4 u at the worse end.
  CHECK(p.position.expanded ==
        Approx(std::max(p.full_depth.quantile95,
                        4.0 * std::max({p.top.u_x, p.top.u_y, p.bottom.u_x, p.bottom.u_y}))));
  CHECK(p.position.share == Approx(p.position.expanded / o.position_tolerance));
}

TEST_CASE("the prediction is the same bits for any thread count and reproducible per seed") {
  ProbingAdviceOptions o = two_sections(8, -2.0, -48.0);
  o.trials = 300;
  o.threads = 1;
  const ProbingPrediction one = predict_probing(o);
  o.threads = 2;
  const ProbingPrediction two = predict_probing(o);
  CHECK(one.top.u_x == two.top.u_x);
  CHECK(one.top.u_y == two.top.u_y);
  CHECK(one.bottom.u_x == two.bottom.u_x);
  CHECK(one.full_depth.mean == two.full_depth.mean);
  CHECK(one.full_depth.quantile95 == two.full_depth.quantile95);
  CHECK(one.perpendicularity.quantile95 == two.perpendicularity.quantile95);
  CHECK(one.u_tilt == two.u_tilt);
  o.threads = 7;
  CHECK(predict_probing(o).full_depth.standard_deviation == one.full_depth.standard_deviation);
  o.seed += 1;
  CHECK(predict_probing(o).full_depth.mean != one.full_depth.mean);
}

TEST_CASE("adaptive trials stop by JCGM 101 7.9 and agree with a long fixed run") {
  // The adaptive procedure of JCGM 101:2008 7.9 (from memory for the section; the study's
  // engine, tested against the criterion recomputed independently in test_monte_carlo.cpp):
  // after it stops, each figure is its limit to within the numerical tolerance delta of the
  // figure's standard deviation stated to the prediction's one significant digit (7.9.2: u =
  // c x 10^l, delta = 10^l / 2). Reference: a fixed run of 100,000 trials, whose own Monte
  // Carlo error (2 sd / sqrt(N), common practice) is added to the bound.
  ProbingAdviceOptions o = two_sections(8, -2.0, -48.0);
  o.adaptive = probing_adaptive_trials();
  const ProbingPrediction a = predict_probing(o);
  REQUIRE(a.status == PredictionStatus::predicted);
  CHECK(a.adaptive);
  CHECK(a.converged);
  CHECK(a.batches >= 2);
  CHECK(a.trials == a.batches * 2000);  // batches of J = 100 / (1 - 0.95)
  CHECK(a.trials < 200000);
  o.threads = 1;  // the same stop and bits on one thread
  const ProbingPrediction one = predict_probing(o);
  CHECK(one.trials == a.trials);
  CHECK(one.full_depth.quantile95 == a.full_depth.quantile95);
  CHECK(one.top.u_x == a.top.u_x);

  ProbingAdviceOptions fixed = two_sections(8, -2.0, -48.0);
  fixed.trials = 100000;
  const ProbingPrediction l = predict_probing(fixed);
  REQUIRE(!l.adaptive);
  REQUIRE(l.trials == 100000);
  const auto delta = [](double u) {  // JCGM 101 7.9.2 with one significant digit
    return 0.5 * std::pow(10.0, std::floor(std::log10(u)));
  };
  const double n = static_cast<double>(l.trials);
  const auto agrees = [&](const char* name, double adaptive, double reference, double u) {
    INFO(name << ": adaptive " << adaptive << ", fixed " << reference << ", u " << u);
    CHECK(std::abs(adaptive - reference) <= delta(u) + 2.0 * u / std::sqrt(n));
  };
  for (const auto& [name, x, y] :
       {std::tuple{"u_x at the top", a.top.u_x, l.top.u_x},
        std::tuple{"u_y at the top", a.top.u_y, l.top.u_y},
        std::tuple{"u_x at the bottom", a.bottom.u_x, l.bottom.u_x},
        std::tuple{"u_y at the bottom", a.bottom.u_y, l.bottom.u_y}})
    agrees(name, x, y, y);
  for (const auto& [name, x, y] :
       {std::tuple{"full depth", a.full_depth, l.full_depth},
        std::tuple{"perpendicularity", a.perpendicularity, l.perpendicularity},
        std::tuple{"position at the top", a.top.position, l.top.position},
        std::tuple{"position at the bottom", a.bottom.position, l.bottom.position}}) {
    agrees(name, x.mean, y.mean, y.standard_deviation);
    agrees(name, x.standard_deviation, y.standard_deviation, y.standard_deviation);
    agrees(name, x.quantile95, y.quantile95, y.standard_deviation);
  }
  // A fixed count stays available and is what it was asked for.
  CHECK(l.converged);
  CHECK(l.batches == 1);
}

TEST_CASE("adaptive options are checked with the option named") {
  ProbingAdviceOptions o = two_sections(8, -2.0, -48.0);
  o.adaptive = probing_adaptive_trials();
  o.adaptive->significant_digits = 0;
  CHECK_THROWS_AS(validate_probing_options(o), InputError);
  o.adaptive = probing_adaptive_trials();
  o.adaptive->batch = 10;
  try {
    validate_probing_options(o);
    FAIL("a batch of 10 trials was accepted");
  } catch (const InputError& e) {
    CHECK(e.key() == "adaptive.batch");
  }
}

TEST_CASE("the maximum inscribed axis is simulated with the project's mating-envelope fit") {
  ProbingAdviceOptions o = two_sections(8, -2.0, -48.0);
  o.trials = 200;
  o.axis_method = BoreAxisMethod::mating_envelope;
  const ProbingPrediction envelope = predict_probing(o);
  REQUIRE(envelope.status == PredictionStatus::predicted);
  o.axis_method = BoreAxisMethod::least_squares;
  const ProbingPrediction least = predict_probing(o);
  // The inscribed cylinder rests on the extreme points, so its axis scatters more than the
  // least-squares axis, which averages every point (common practice; Gauss-Markov).
  CHECK(envelope.top.u_x > least.top.u_x);
  CHECK(envelope.full_depth.quantile95 > least.full_depth.quantile95);
}

TEST_CASE("the search returns the first pattern of its order that meets the target") {
  ProbingAdviceOptions o = two_sections(4, -2.0, -48.0);
  o.usable_top = -2.0;
  o.usable_bottom = -48.0;
  o.probing_sigma = 0.0012;
  o.trials = 400;
  const std::vector<ProbingPattern> order = probing_search_order(o);
  REQUIRE(order.size() == (o.max_sections - 1) * o.points_ladder.size());
  for (std::size_t i = 1; i < order.size(); ++i) {
    CHECK(order[i - 1].total_points() <= order[i].total_points());
    // Ends first: every candidate has a section at each end of the usable depth.
    CHECK(order[i].section_heights.front() == -2.0);
    CHECK(order[i].section_heights.back() == -48.0);
  }
  const ProbingSearch s = search_probing_pattern(o);
  REQUIRE(s.smallest);
  REQUIRE(s.previous);
  CHECK(s.smallest->meets_target);
  CHECK(s.smallest->position.expanded <= 0.1 * o.position_tolerance);
  CHECK(s.smallest->perpendicularity_uncertainty->expanded <= 0.1 * *o.perpendicularity_tolerance);
  CHECK_FALSE(s.previous->meets_target);
  // The previous one is the candidate just before in the order.
  REQUIRE(s.candidates_tried >= 2);
  CHECK(order[s.candidates_tried - 2].total_points() == s.previous->pattern.total_points());
  CHECK(order[s.candidates_tried - 1].section_heights == s.smallest->pattern.section_heights);
  CHECK(order[s.candidates_tried - 1].points_per_section == s.smallest->pattern.points_per_section);
  // A target nothing can meet: no pattern.
  o.target_share = 0.001;
  o.max_sections = 2;
  o.points_ladder = {4, 6};
  const ProbingSearch none = search_probing_pattern(o);
  CHECK_FALSE(none.smallest);
  CHECK(none.candidates_tried == 2);
}

TEST_CASE("sections spread evenly over the usable depth, ends first") {
  CHECK(evenly_spread_sections(-2.0, -58.0, 2) == std::vector<double>{-2.0, -58.0});
  CHECK(evenly_spread_sections(-2.0, -58.0, 3) == std::vector<double>{-2.0, -30.0, -58.0});
}

TEST_CASE("invalid probing options are refused with the option named") {
  const auto refused = [](ProbingAdviceOptions o, const std::string& key) {
    try {
      validate_probing_options(o);
      FAIL("accepted, expected a refusal of " << key);
    } catch (const InputError& e) {
      CHECK(e.key() == key);
    }
  };
  const ProbingAdviceOptions good = two_sections(8, -2.0, -48.0);
  CHECK_NOTHROW(validate_probing_options(good));
  ProbingAdviceOptions o = good;
  o.probing_sigma = 0.0;
  refused(o, "probing_sigma");
  o = good;
  o.pattern.points_per_section = 2;
  refused(o, "pattern.points_per_section");
  o = good;
  o.pattern.section_heights = {-5.0, -5.0};
  refused(o, "pattern.section_heights");
  o = good;
  o.pattern.section_heights = {5.0, 500.0};  // depths typed positive, far outside the range
  refused(o, "pattern.section_heights");
  o = good;
  o.pattern.arc_deg = 400.0;
  refused(o, "pattern.arc_deg");
  o = good;
  o.range_bottom = 1.0;
  refused(o, "range_bottom");
  o = good;
  o.trials = 10;
  refused(o, "trials");
  o = good;
  o.axis_method = BoreAxisMethod::median_line;
  refused(o, "axis_method");
  o = good;
  o.diameter = std::nan("");
  refused(o, "diameter");
}

TEST_CASE("every output of the advice carries the caution") {
  ProbingAdviceOptions o = two_sections(8, -2.0, -48.0);
  o.trials = 100;
  const ProbingAdvice a = advise_probing(o, false);
  const std::string caution = "do not replace, the approved inspection procedure";
  CHECK(format_probing_table(o, a).find(caution) != std::string::npos);
  CHECK(format_probing_json(o, a, LengthUnit::millimetre).find(caution) != std::string::npos);
}

namespace {

/// Points of a perfect bore (diameter 12, true position (40, 25), tilted 0.2 mrad) probed at
/// `levels` (heights from A), `n` points per level spread over `arc_deg` (both ends probed when
/// partial), evaluated as `check` does.
BoreResult probed_bore(const std::vector<double>& levels, std::size_t n, double arc_deg) {
  PlanBore plan;
  plan.id = "H1";
  plan.basic_location = {40.0, 25.0};
  plan.size = SizeLimits{12.000, 12.018};
  plan.depth_top = 0.0;
  plan.depth_bottom = -40.0;
  plan.axis = BoreAxisMethod::least_squares;
  PlanTolerance t;
  t.tolerance = 0.02;
  t.datums = {{'A', MaterialBoundary::rmb}, {'B', MaterialBoundary::rmb}};
  plan.position = t;
  t.tolerance = 0.01;
  plan.perpendicularity = t;
  const double pi = 3.14159265358979323846;
  const Eigen::Vector3d w = Eigen::Vector3d(2e-4, 0.0, 1.0).normalized();
  const Eigen::Vector3d u = (Eigen::Vector3d::UnitX() - w.x() * w).normalized(), v = w.cross(u);
  Eigen::Matrix3Xd points(3, static_cast<Eigen::Index>(levels.size() * n));
  Eigen::Index k = 0;
  for (double z : levels)
    for (std::size_t i = 0; i < n; ++i) {
      const double a = arc_deg >= 360.0 ? 2.0 * pi * i / n + 0.3
                                        : (arc_deg * i / (n - 1) - arc_deg / 2.0) * pi / 180.0;
      points.col(k++) =
          Eigen::Vector3d(40.0, 25.0, 0.0) + z * w + 6.0 * (std::cos(a) * u + std::sin(a) * v);
    }
  return evaluate_bore(plan, points);
}

}  // namespace

TEST_CASE("the pattern a measured bore was probed with comes from its sampling record") {
  const BoreResult full = probed_bore({-3.0, -20.0, -37.0}, 10, 360.0);
  ProbingAdviceOptions base;
  base.trials = 100;
  const auto o = measured_bore_probing(full, 0.001, base);
  REQUIRE(o);
  REQUIRE(o->pattern.section_heights.size() == 3);
  // The levels as probed (heights from A along the nominal direction; the 0.2 mrad tilt moves
  // them by less than 1e-5 mm), the points per level, the full circle.
  CHECK(o->pattern.section_heights[0] == Approx(-37.0).margin(1e-3));
  CHECK(o->pattern.section_heights[2] == Approx(-3.0).margin(1e-3));
  CHECK(o->pattern.points_per_section == 10);
  CHECK(o->pattern.arc_deg == 360.0);
  CHECK(o->range_top == 0.0);
  CHECK(o->range_bottom == -40.0);
  CHECK(o->position_tolerance == 0.02);
  CHECK(*o->perpendicularity_tolerance == 0.01);
  CHECK(o->diameter == Approx(12.0).margin(1e-9));
  // A 200 degree arc is recognised as one (the evaluation's inscribed cylinder needs more than
  // 180 degrees).
  const auto partial = measured_bore_probing(probed_bore({-3.0, -37.0}, 12, 200.0), 0.001, base);
  REQUIRE(partial);
  CHECK(partial->pattern.arc_deg == Approx(200.0).margin(0.5));
  // The prediction runs on that pattern.
  const auto p = predict_measured_bore(full, 0.001, base);
  REQUIRE(p);
  CHECK(p->status == PredictionStatus::predicted);
  CHECK(p->probing_sigma == 0.001);
  CHECK(p->position.tolerance == 0.02);
  // One level only: no pattern to predict.
  const BoreResult one_level = probed_bore({-3.0, -3.0001}, 10, 360.0);
  const bool predicted = measured_bore_probing(one_level, 0.001, base).has_value();
  CHECK_FALSE(predicted);
}

// Cases for tests/reference/crosscheck_probing.py: the simulated positional diameter of a
// perfect bore at each end with the linear u there; scipy.stats.rayleigh gives the reference.
TEST_CASE("write probing cases for scipy", "[.][probing-cases]") {
  const char* path = std::getenv("CYLZONE_PROBING_CASES");
  REQUIRE(path);
  std::ofstream out(path);
  out.precision(17);
  int k = 0;
  for (const std::size_t n : {5, 8, 16}) {
    for (const double sigma : {0.0005, 0.003}) {
      const double z1 = -1.5 - k, z2 = -33.0 - 2 * k;
      ProbingAdviceOptions o = two_sections(n, z1, z2);
      o.probing_sigma = sigma;
      o.seed = 1000 + k++;
      const ProbingPrediction p = predict_probing(o);
      for (const EndPrediction* e : {&p.top, &p.bottom})
        out << "rayleigh " << o.trials << ' ' << linear_u(sigma, n, z1, z2, e->height) << ' '
            << e->position.mean << ' ' << e->position.quantile95 << '\n';
    }
  }
}
