// Probing advice: Monte Carlo prediction of the uncertainty of a bore's position and
// perpendicularity for a probing pattern, and the search for the smallest pattern meeting a
// share of the tolerance. The model and its sources are in probing_advice.hpp and
// docs/probing-advice.md.
#include "cylzone/forecast/probing_advice.hpp"

#include <Eigen/Core>
#include <algorithm>
#include <cmath>
#include <limits>
#include <mutex>
#include <string>
#include <utility>

#include "cylzone/core/errors.hpp"
#include "cylzone/evaluate/axis_zone.hpp"
#include "cylzone/evaluate/sampling_coverage.hpp"
#include "cylzone/fit/fit_cylinder.hpp"
#include "forecast/detail/sample_statistics.hpp"

namespace cylzone {
namespace {

constexpr double pi = 3.14159265358979323846;

// ---- Random numbers: one generator per trial, the same bits on every platform.

/// splitmix64's output function (Steele, Lea & Flood, OOPSLA 2014): a bijective mix of 64 bits.
std::uint64_t mix64(std::uint64_t z) {
  z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ULL;
  z = (z ^ (z >> 27)) * 0x94d049bb133111ebULL;
  return z ^ (z >> 31);
}

/// The splitmix64 generator: state advanced by the golden-ratio increment, output mixed.
class SplitMix64 {
 public:
  explicit SplitMix64(std::uint64_t seed) : state_(seed) {}
  std::uint64_t next() { return mix64(state_ += 0x9e3779b97f4a7c15ULL); }
  /// Uniform on (0, 1): 53 random bits, never 0 (Box-Muller takes its logarithm).
  double uniform() { return (static_cast<double>(next() >> 11) + 0.5) * 0x1.0p-53; }
  /// Standard normal deviates by the Box-Muller transform (Box & Muller 1958), in pairs.
  double normal() {
    if (has_spare_) {
      has_spare_ = false;
      return spare_;
    }
    const double r = std::sqrt(-2.0 * std::log(uniform()));
    const double t = 2.0 * pi * uniform();
    spare_ = r * std::sin(t);
    has_spare_ = true;
    return r * std::cos(t);
  }

 private:
  std::uint64_t state_;
  double spare_ = 0.0;
  bool has_spare_ = false;
};

/// The seed of trial `t`: splitmix64 of (seed, t), so a trial's draws do not depend on which
/// thread runs it or on the other trials.
std::uint64_t advice_trial_seed(std::uint64_t seed, std::size_t t) {
  return mix64(mix64(seed) ^ (static_cast<std::uint64_t>(t) + 0x9e3779b97f4a7c15ULL));
}

// ---- The pattern's ideal points.

/// Angles (rad) of a section's points (header item 2).
std::vector<double> section_angles(const ProbingPattern& p) {
  const std::size_t n = p.points_per_section;
  const double arc = p.arc_deg * pi / 180.0;
  const bool full = p.arc_deg >= 360.0;
  const double step = full ? arc / static_cast<double>(n) : arc / static_cast<double>(n - 1);
  const double start = p.arc_centre_deg * pi / 180.0 - (full ? 0.0 : arc / 2.0);
  std::vector<double> angles(n);
  for (std::size_t i = 0; i < n; ++i) angles[i] = start + step * static_cast<double>(i);
  return angles;
}

/// The perfect bore's points in the zone frame (true position at the origin, w = z).
Eigen::Matrix3Xd ideal_points(const ProbingPattern& p, double radius) {
  const std::vector<double> angles = section_angles(p);
  Eigen::Matrix3Xd points(3, static_cast<Eigen::Index>(p.total_points()));
  Eigen::Index k = 0;
  for (double h : p.section_heights)
    for (double a : angles)
      points.col(k++) = Eigen::Vector3d(radius * std::cos(a), radius * std::sin(a), h);
  return points;
}

// ---- Statistics.

SimulatedFigure figure(const std::vector<double>& v) {
  const detail::SampleMoments m = detail::sample_moments(v);
  return {m.mean, m.sd, detail::sample_quantile(v, 0.95)};
}

FigureUncertainty uncertainty(double tolerance, double expanded, double target_share) {
  FigureUncertainty u;
  u.tolerance = tolerance;
  u.expanded = expanded;
  u.share = expanded / tolerance;
  u.meets_target = expanded <= target_share * tolerance;
  return u;
}

double usable_top(const ProbingAdviceOptions& o) { return o.usable_top.value_or(o.range_top); }
double usable_bottom(const ProbingAdviceOptions& o) {
  return o.usable_bottom.value_or(o.range_bottom);
}

/// What one trial gives: its outputs, in this order, for the Monte Carlo engine.
enum TrialOutput : std::size_t {
  top_x, top_y, bottom_x, bottom_y,  // the fitted axis's offset at the ends of the range
  slope_x, slope_y,                  // its tilt
  top_position, bottom_position,     // 2 x the offset's length at each end
  full_depth, perpendicularity,      // the figures over the range
  trial_outputs
};

void validate_pattern(const ProbingPattern& p, const ProbingAdviceOptions& o) {
  const auto fail = [](const std::string& key, const std::string& problem) {
    throw InputError("", 0, problem, key);
  };
  if (p.points_per_section < 3)
    fail("pattern.points_per_section", "must be at least 3 (a circle needs 3 points)");
  if (p.points_per_section > 100000) fail("pattern.points_per_section", "must be at most 100000");
  if (!(std::isfinite(p.arc_deg) && p.arc_deg > 0.0 && p.arc_deg <= 360.0))
    fail("pattern.arc_deg", "must lie in (0, 360] degrees");
  if (!std::isfinite(p.arc_centre_deg)) fail("pattern.arc_centre_deg", "must be a finite number");
  if (p.section_heights.size() > 1000) fail("pattern.section_heights", "at most 1000 sections");
  std::vector<double> h = p.section_heights;
  for (double z : h)
    if (!std::isfinite(z)) fail("pattern.section_heights", "every height must be a finite number");
  std::sort(h.begin(), h.end());
  h.erase(std::unique(h.begin(), h.end()), h.end());
  if (h.size() < 2)
    fail("pattern.section_heights",
         "needs at least 2 distinct heights (one level cannot fix the axis's tilt)");
  // A section far outside the bore is a typing or sign mistake (depths are negative in the
  // material): more than the range's length beyond it.
  const double length = o.range_top - o.range_bottom;
  if (h.front() < o.range_bottom - length || h.back() > o.range_top + length)
    fail("pattern.section_heights",
         "a section lies more than the range's length outside the range (heights are negative "
         "into the material)");
}

}  // namespace

std::vector<double> evenly_spread_sections(double top, double bottom, std::size_t k) {
  std::vector<double> h(k);
  for (std::size_t i = 0; i < k; ++i)
    h[i] = i + 1 == k ? bottom
                      : top + (bottom - top) * static_cast<double>(i) / static_cast<double>(k - 1);
  return h;
}

void validate_probing_options(const ProbingAdviceOptions& o) {
  const auto fail = [](const std::string& key, const std::string& problem) {
    throw InputError("", 0, problem, key);
  };
  const auto positive = [&](double v, const std::string& key) {
    if (!std::isfinite(v)) fail(key, "must be a finite number");
    if (!(v > 0.0)) fail(key, "must be greater than zero");
  };
  positive(o.diameter, "diameter");
  if (!std::isfinite(o.range_top)) fail("range_top", "must be a finite number");
  if (!std::isfinite(o.range_bottom)) fail("range_bottom", "must be a finite number");
  if (!(o.range_top > o.range_bottom))
    fail("range_bottom", "the range's bottom must lie below its top");
  if (o.usable_top || o.usable_bottom) {
    const double t = usable_top(o), b = usable_bottom(o);
    if (!std::isfinite(t)) fail("usable_top", "must be a finite number");
    if (!std::isfinite(b)) fail("usable_bottom", "must be a finite number");
    if (!(t > b)) fail("usable_bottom", "the usable depth's bottom must lie below its top");
  }
  positive(o.position_tolerance, "position_tolerance");
  if (o.perpendicularity_tolerance)
    positive(*o.perpendicularity_tolerance, "perpendicularity_tolerance");
  if (o.axis_method == BoreAxisMethod::median_line)
    fail("axis_method", "least-squares or mating-envelope (the median line is not simulated)");
  positive(o.probing_sigma, "probing_sigma");
  if (o.trials < 100) fail("trials", "must be at least 100");
  if (o.trials > 10000000) fail("trials", "must be at most 10000000");
  if (o.adaptive) {
    const AdaptiveTrials& a = *o.adaptive;
    if (a.significant_digits < 1 || a.significant_digits > 4)
      fail("adaptive.significant_digits", "must lie in [1, 4]");
    if (a.batch != 0 && a.batch < 100) fail("adaptive.batch", "must be 0 (J) or at least 100");
    if (a.max_trials < 2 * std::max<std::size_t>(a.batch, 100) || a.max_trials > 10000000)
      fail("adaptive.max_trials", "must hold two batches and be at most 10000000");
  }
  if (!(std::isfinite(o.target_share) && o.target_share > 0.0 && o.target_share <= 1.0))
    fail("target_share", "must lie in (0, 1]");
  if (o.points_ladder.empty()) fail("points_ladder", "needs at least one entry");
  for (std::size_t n : o.points_ladder)
    if (n < 3 || n > 100000) fail("points_ladder", "every entry must lie in [3, 100000]");
  if (o.max_sections < 2 || o.max_sections > 1000) fail("max_sections", "must lie in [2, 1000]");
  validate_pattern(o.pattern, o);
}

namespace {

/// The prediction for `pattern`, options validated.
ProbingPrediction simulate(const ProbingAdviceOptions& o, const ProbingPattern& pattern) {
  ProbingPrediction out;
  out.pattern = pattern;
  out.probing_sigma = o.probing_sigma;
  out.trials = o.trials;
  const double radius = o.diameter / 2.0;
  const Eigen::Matrix3Xd ideal = ideal_points(pattern, radius);
  const ZoneFrame zone = ZoneFrame::at(Eigen::Vector2d::Zero(), Eigen::Vector3d::UnitZ());

  // Tilt magnification of the pattern, as the sampling report computes it (ideal points).
  {
    Axis nominal;
    nominal.point = Eigen::Vector3d::Zero();
    nominal.direction = Eigen::Vector3d::UnitZ();
    SamplingOptions sampling;
    sampling.section_heights = pattern.section_heights;
    out.magnification =
        sampling_coverage(ideal, nominal, o.range_top, o.range_bottom, sampling).magnification;
  }

  FitOptions fit;
  fit.axis_hint = Eigen::Vector3d::UnitZ();
  fit.threads = 1;  // the trials are the parallel loop
  // Noisy points have a unique optimum almost surely; the walks that look for others would
  // only cost time (fit_cylinder.hpp, CylinderFit::ambiguity).
  fit.assess_ambiguity = false;
  // Thousands of small programmes: the dense solver avoids Clp's set-up per programme and
  // falls back to Clp where it fails (docs/chebyshev.md, "Solvers").
  fit.lp_solver = LpSolver::dense;

  // The trials run through the study's engine (uncertainty/monte_carlo.hpp): a fixed count or
  // its adaptive procedure (JCGM 101 7.9); each trial draws from its own generator, seeded from
  // (seed, t), and perturbs into its worker's buffer.
  MonteCarloOptions engine;
  engine.seed = o.seed;
  engine.threads = std::max<std::size_t>(1, o.threads);
  engine.trials = o.trials;
  if (o.adaptive) {
    engine.trials.reset();
    engine.adaptive = *o.adaptive;
  }
  std::vector<Eigen::Matrix3Xd> buffers(engine.threads, Eigen::Matrix3Xd(3, ideal.cols()));
  std::mutex failure_lock;
  std::size_t first_failure = std::numeric_limits<std::size_t>::max();
  std::string failure;
  const IndexedTrialModel trial = [&](std::size_t t, std::size_t worker, std::vector<double>& r) {
    SplitMix64 rng(advice_trial_seed(o.seed, t));
    Eigen::Matrix3Xd& points = buffers[worker];
    for (Eigen::Index j = 0; j < ideal.cols(); ++j)
      for (int k = 0; k < 3; ++k) points(k, j) = ideal(k, j) + o.probing_sigma * rng.normal();
    try {
      const CylinderFit f = o.axis_method == BoreAxisMethod::mating_envelope
                                ? fit_cylinder_maximum_inscribed(points, fit)
                                : fit_cylinder_least_squares(points, fit);
      const StraightAxis axis = StraightAxis::from_axis(f.axis, zone);
      const Eigen::Vector2d top = axis.at(o.range_top).offset;
      const Eigen::Vector2d bottom = axis.at(o.range_bottom).offset;
      r[top_x] = top.x();
      r[top_y] = top.y();
      r[bottom_x] = bottom.x();
      r[bottom_y] = bottom.y();
      r[slope_x] = axis.slope.x();
      r[slope_y] = axis.slope.y();
      r[top_position] = 2.0 * top.norm();
      r[bottom_position] = 2.0 * bottom.norm();
      r[full_depth] = position_over_range(axis, o.range_top, o.range_bottom);
      r[perpendicularity] = perpendicularity_over_range(axis, o.range_top, o.range_bottom);
    } catch (const FitError& e) {
      // The first failing trial is reported, whichever thread met it.
      const std::lock_guard<std::mutex> hold(failure_lock);
      if (t < first_failure) {
        first_failure = t;
        failure = "trial " + std::to_string(t + 1) + ": " + e.what();
      }
    }
  };
  MonteCarloSummary run;
  std::vector<std::vector<double>> samples;
  propagate_indexed(trial_outputs, trial, engine, run, nullptr, &samples);
  out.trials = run.trials;
  out.adaptive = run.adaptive;
  out.batches = run.batches;
  out.converged = run.status != MonteCarloStatus::not_converged;
  if (!failure.empty()) {
    out.status = PredictionStatus::undetermined;
    out.message = "the pattern cannot determine the bore: " + failure;
    return out;
  }

  const auto sd = [&](TrialOutput k) { return detail::sample_moments(samples[k]).sd; };
  const auto end = [&](double height, TrialOutput x, TrialOutput y, TrialOutput position) {
    EndPrediction e;
    e.height = height;
    e.u_x = sd(x);
    e.u_y = sd(y);
    e.position = figure(samples[position]);
    return e;
  };
  out.top = end(o.range_top, top_x, top_y, top_position);
  out.bottom = end(o.range_bottom, bottom_x, bottom_y, bottom_position);
  out.full_depth = figure(samples[full_depth]);
  out.perpendicularity = figure(samples[perpendicularity]);
  out.u_tilt = std::max(sd(slope_x), sd(slope_y));

  // Expanded uncertainties (header, "Figures"): the larger of the perfect bore's 95 % quantile
  // and k = 2 times the linear propagation for a bore far from true position.
  const double u_end = std::max({out.top.u_x, out.top.u_y, out.bottom.u_x, out.bottom.u_y});
  out.position = uncertainty(
      o.position_tolerance, std::max(out.full_depth.quantile95, 2.0 * 2.0 * u_end), o.target_share);
  out.meets_target = out.position.meets_target;
  if (o.perpendicularity_tolerance) {
    const double length = o.range_top - o.range_bottom;
    out.perpendicularity_uncertainty = uncertainty(
        *o.perpendicularity_tolerance,
        std::max(out.perpendicularity.quantile95, 2.0 * length * out.u_tilt), o.target_share);
    out.meets_target = out.meets_target && out.perpendicularity_uncertainty->meets_target;
  }
  return out;
}

}  // namespace

AdaptiveTrials probing_adaptive_trials() {
  AdaptiveTrials a;
  a.significant_digits = 1;
  return a;
}

ProbingPrediction predict_probing(const ProbingAdviceOptions& options) {
  validate_probing_options(options);
  return simulate(options, options.pattern);
}

std::vector<ProbingPattern> probing_search_order(const ProbingAdviceOptions& o) {
  std::vector<ProbingPattern> order;
  for (std::size_t k = 2; k <= o.max_sections; ++k)
    for (std::size_t n : o.points_ladder) {
      ProbingPattern p;
      p.section_heights = evenly_spread_sections(usable_top(o), usable_bottom(o), k);
      p.points_per_section = n;
      p.arc_deg = o.pattern.arc_deg;
      p.arc_centre_deg = o.pattern.arc_centre_deg;
      order.push_back(std::move(p));
    }
  // By total points, then fewer sections (more points where the tilt is best fixed).
  std::stable_sort(order.begin(), order.end(),
                   [](const ProbingPattern& a, const ProbingPattern& b) {
                     if (a.total_points() != b.total_points())
                       return a.total_points() < b.total_points();
                     return a.section_heights.size() < b.section_heights.size();
                   });
  return order;
}

ProbingSearch search_probing_pattern(const ProbingAdviceOptions& options) {
  validate_probing_options(options);
  ProbingSearch search;
  std::optional<ProbingPrediction> last;
  for (const ProbingPattern& p : probing_search_order(options)) {
    ProbingPrediction prediction = simulate(options, p);
    ++search.candidates_tried;
    if (prediction.status == PredictionStatus::predicted && prediction.meets_target) {
      search.smallest = std::move(prediction);
      search.previous = std::move(last);
      return search;
    }
    last = std::move(prediction);
  }
  return search;
}

std::optional<ProbingAdviceOptions> measured_bore_probing(const BoreResult& bore,
                                                          double probing_sigma,
                                                          const ProbingAdviceOptions& base) {
  if (!bore.evaluated() || !bore.position || !bore.sampling) return std::nullopt;
  const SamplingCoverage& s = *bore.sampling;
  if (s.sections.size() < 2) return std::nullopt;
  ProbingAdviceOptions o = base;
  o.diameter = bore.least_squares.diameter();
  o.range_top = bore.position->range_top;
  o.range_bottom = bore.position->range_bottom;
  o.position_tolerance = bore.position->spec.tolerance;
  o.perpendicularity_tolerance.reset();
  if (bore.perpendicularity) o.perpendicularity_tolerance = bore.perpendicularity->spec.tolerance;
  o.axis_method = bore.axis_method == BoreAxisMethod::mating_envelope
                      ? BoreAxisMethod::mating_envelope
                      : BoreAxisMethod::least_squares;
  o.probing_sigma = probing_sigma;
  // The evaluation reports its sections at the zone's heights (its height axis is the nominal
  // direction from the true position on A: bore_evaluation.cpp, sampling_coverage.hpp).
  ProbingPattern p;
  std::vector<std::size_t> counts;
  for (const SectionSampling& section : s.sections) {
    p.section_heights.push_back(section.height);
    counts.push_back(section.points);
  }
  std::sort(counts.begin(), counts.end());
  p.points_per_section = std::max<std::size_t>(3, counts[counts.size() / 2]);
  const double step = 360.0 / static_cast<double>(p.points_per_section);
  const double gap = 360.0 - s.worst_section_coverage_deg;
  p.arc_deg = gap <= 1.5 * step ? 360.0 : std::max(1.0, s.worst_section_coverage_deg);
  p.arc_centre_deg = 0.0;
  o.pattern = std::move(p);
  return o;
}

std::optional<ProbingPrediction> predict_measured_bore(const BoreResult& bore, double probing_sigma,
                                                       const ProbingAdviceOptions& base) {
  const std::optional<ProbingAdviceOptions> options =
      measured_bore_probing(bore, probing_sigma, base);
  if (!options) return std::nullopt;
  try {
    return predict_probing(*options);
  } catch (const InputError& e) {
    ProbingPrediction p;
    p.pattern = options->pattern;
    p.probing_sigma = probing_sigma;
    p.status = PredictionStatus::undetermined;
    p.message = "the probed pattern cannot be simulated: " + e.key() + ": " + e.problem();
    return p;
  }
}

ProbingAdvice advise_probing(const ProbingAdviceOptions& options, bool search) {
  ProbingAdvice advice;
  advice.candidate = predict_probing(options);
  if (search) advice.search = search_probing_pattern(options);
  return advice;
}

}  // namespace cylzone
