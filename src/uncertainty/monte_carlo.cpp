// The Monte Carlo uncertainty study (uncertainty/monte_carlo.hpp; docs/uncertainty.md): a
// generic engine over trials (fixed or adaptive, JCGM 101:2008 section 7.9) and the whole-chain
// model of a part on top of evaluate_part. No IO, no state; trials run through
// src/detail/parallel.hpp with one random stream per trial, so results do not depend on the
// thread count.
#include "cylzone/uncertainty/monte_carlo.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numeric>
#include <stdexcept>
#include <utility>

#include "cylzone/decide/bore_characteristics.hpp"
#include "cylzone/fit/fit_cylinder.hpp"
#include "cylzone/fit/fit_plane.hpp"
#include "detail/fit_support.hpp"
#include "detail/parallel.hpp"
#include "uncertainty/detail/twister.hpp"

namespace cylzone {
namespace {

constexpr double nan = std::numeric_limits<double>::quiet_NaN();

std::uint64_t splitmix64(std::uint64_t x) noexcept {
  // Steele, Lea & Flood, "Fast splittable pseudorandom number generators", OOPSLA 2014: the
  // finaliser of SplitMix64 (constants as published).
  x += 0x9e3779b97f4a7c15ULL;
  x = (x ^ (x >> 30)) * 0xbf58476d1ce4e5b9ULL;
  x = (x ^ (x >> 27)) * 0x94d049bb133111ebULL;
  return x ^ (x >> 31);
}

/// Rank-based value of sorted `v` at 1-based rank r, clamped to [1, M].
double at_rank(const std::vector<double>& v, long r) {
  const long m = static_cast<long>(v.size());
  return v[static_cast<std::size_t>(std::clamp(r, 1L, m) - 1)];
}

/// The trials' values of one output, NaN (not evaluated in a trial) left out.
std::vector<double> finite_values(const std::vector<double>& values, std::size_t begin,
                                  std::size_t end) {
  std::vector<double> out;
  out.reserve(end - begin);
  for (std::size_t t = begin; t < end; ++t)
    if (std::isfinite(values[t])) out.push_back(values[t]);
  return out;
}

/// JCGM 101:2008 7.9.2 (from memory): the numerical tolerance of a standard uncertainty u
/// stated to `digits` significant digits, u = c x 10^l with c an integer of `digits` digits:
/// delta = 10^l / 2.
double numerical_tolerance(double u, int digits) {
  if (!(u > 0.0)) return 0.0;
  const double l = std::floor(std::log10(u)) - (digits - 1);
  return 0.5 * std::pow(10.0, l);
}

void validate(const MonteCarloOptions& o) {
  if (!(o.coverage > 0.0 && o.coverage < 1.0))
    throw std::invalid_argument("monte carlo: coverage probability must lie in (0, 1)");
  if (o.trials && *o.trials < 2)
    throw std::invalid_argument("monte carlo: at least 2 trials are needed");
  if (!o.trials && (o.adaptive.significant_digits < 1 || o.adaptive.significant_digits > 4))
    throw std::invalid_argument("monte carlo: significant digits must be 1 to 4");
  if (!o.trials && o.adaptive.max_trials < 2)
    throw std::invalid_argument("monte carlo: max_trials must be at least 2");
}

}  // namespace

std::string_view probing_model_name(ProbingModel model) noexcept {
  return model == ProbingModel::sigma ? "sigma" : "estimated";
}

std::string_view interval_kind_name(IntervalKind kind) noexcept {
  return kind == IntervalKind::shortest ? "shortest" : "probabilistically symmetric";
}

std::string_view monte_carlo_status_name(MonteCarloStatus status) noexcept {
  switch (status) {
    case MonteCarloStatus::converged: return "converged";
    case MonteCarloStatus::not_converged: return "not converged";
    case MonteCarloStatus::failed: return "failed";
  }
  return "failed";
}

std::string warm_start_text(const MonteCarloSummary& s) {
  if (s.warm_fits == 0) return "every fit of the trials from its own start";
  return std::to_string(s.warm_fits) + " fits of the trials started from the unperturbed ones: " +
         std::to_string(s.warm_descents) +
         " Chebyshev fits descended from there (their contacts changed), " +
         std::to_string(s.warm_restarts) + " solved again from their own start";
}

EvaluationProfile lean_profile() {
  EvaluationProfile profile;
  profile.ambiguity = false;
  profile.stray_screen = false;
  profile.two_point_sizes = true;
  profile.unread_results = false;
  return profile;
}

namespace {

/// What the trials' fits did (summed per worker, then over workers: integers, so the same for
/// any thread count).
struct FitCounts {
  std::size_t chebyshev = 0, lp_fallbacks = 0;       // MonteCarloSummary::chebyshev_fits, ...
  std::size_t warm = 0, descents = 0, restarts = 0;  // MonteCarloSummary::warm_fits, ...
};

/// The Chebyshev fits an evaluation ran (the bores' envelopes and minimum zones and the datum
/// features' fits other than least squares) and their programmes solved by Clp after the dense
/// solver failed (FitSummary::lp_fallbacks); the fits started from the unperturbed ones and
/// how (FitSummary::start).
void count_fits(const PartEvaluation& e, FitCounts& counts) {
  const auto add = [&](const FitSummary& s) {
    if (s.point_count == 0) return;
    counts.warm += s.start != StartOutcome::none ? 1 : 0;
    counts.descents += s.start == StartOutcome::descended ? 1 : 0;
    counts.restarts += s.start == StartOutcome::restarted ? 1 : 0;
    if (s.method == FitMethod::least_squares) return;
    ++counts.chebyshev;
    counts.lp_fallbacks += static_cast<std::size_t>(std::max(0, s.lp_fallbacks));
  };
  for (const BoreResult& b : e.bores)
    for (const CylinderFit* f : {&b.least_squares, &b.mating_envelope, &b.related_envelope,
                                 &b.minimum_material, &b.minimum_zone})
      add(f->summary);
  add(e.datums.a.plane.summary);
  for (const auto* d : {&e.datums.b, &e.datums.c_feature})
    if (*d) add((*d)->related_envelope.summary);
  if (e.datums.c_plane) add(e.datums.c_plane->plane.summary);
}

}  // namespace

std::uint64_t trial_seed(std::uint64_t seed, std::uint64_t trial) noexcept {
  return splitmix64(seed ^ splitmix64(trial));
}

double standard_normal(std::mt19937_64& rng) noexcept {
  constexpr double two_pi = 6.283185307179586476925286766559;
  // Uniforms on (0, 1]: the top 53 bits, offset by one so log never sees 0.
  const double u1 = (static_cast<double>(rng() >> 11) + 1.0) * 0x1.0p-53;
  const double u2 = static_cast<double>(rng() >> 11) * 0x1.0p-53;
  return std::sqrt(-2.0 * std::log(u1)) * std::cos(two_pi * u2);
}

namespace {

/// standard_normals for any engine with the output of std::mt19937_64 (the study's trials use
/// detail::Twister64, the same sequence drawn faster).
template <class Engine>
void polar_normals(Engine& rng, double* out, std::size_t count) noexcept {
  // Marsaglia & Bray, "A convenient method for generating normal variables", SIAM Review 6
  // (1964): (x, y) uniform in the unit disc (rejection from the square, acceptance pi/4), s =
  // x^2 + y^2; then x f and y f with f = sqrt(-2 ln s / s) are two independent standard normal
  // deviates (exact, no approximation of the law). Both are used: per deviate 1.27 uniforms,
  // half a logarithm and half a square root, against Box-Muller's two uniforms, a logarithm, a
  // square root and a cosine (standard_normal).
  std::size_t k = 0;
  while (k < count) {
    double x, y, s;
    do {
      // Uniforms on [-1, 1): the top 53 bits on [0, 2), exactly, minus one.
      x = static_cast<double>(rng() >> 11) * 0x1.0p-52 - 1.0;
      y = static_cast<double>(rng() >> 11) * 0x1.0p-52 - 1.0;
      s = x * x + y * y;
    } while (!(s < 1.0) || s == 0.0);
    const double f = std::sqrt(-2.0 * std::log(s) / s);
    out[k++] = x * f;
    if (k < count) out[k++] = y * f;
  }
}

}  // namespace

void standard_normals(std::mt19937_64& rng, double* out, std::size_t count) noexcept {
  polar_normals(rng, out, count);
}

void standard_normals(detail::Twister64& rng, double* out, std::size_t count) noexcept {
  polar_normals(rng, out, count);
}

OutputStatistics output_statistics(std::vector<double> values, double p) {
  if (values.size() < 2)
    throw std::invalid_argument("output_statistics: at least 2 values are needed");
  OutputStatistics s;
  const std::size_t m = values.size();
  s.trials = m;
  // Mean and standard deviation in two passes (JCGM 101 7.6, from memory).
  double sum = 0.0;
  for (double v : values) sum += v;
  s.mean = sum / static_cast<double>(m);
  double ss = 0.0;
  for (double v : values) ss += (v - s.mean) * (v - s.mean);
  s.standard_uncertainty = std::sqrt(ss / static_cast<double>(m - 1));
  std::sort(values.begin(), values.end());
  const double md = static_cast<double>(m);
  // JCGM 101 7.7.1 (from memory): the probabilistically symmetric interval's ends are the
  // order statistics of rank (1-p)M/2 and (1+p)M/2, rounded to the nearest rank.
  s.symmetric.low = at_rank(values, std::lround((1.0 - p) * md / 2.0));
  s.symmetric.high = at_rank(values, std::lround((1.0 + p) * md / 2.0));
  // JCGM 101 7.7.2 (from memory): q = pM rounded; the shortest interval is [y_(r), y_(r+q)]
  // of least width over r = 1..M-q.
  const std::size_t q = std::min<std::size_t>(m - 1, static_cast<std::size_t>(std::lround(p * md)));
  std::size_t best = 0;
  double width = std::numeric_limits<double>::infinity();
  for (std::size_t r = 0; r + q < m; ++r)
    if (values[r + q] - values[r] < width) {
      width = values[r + q] - values[r];
      best = r;
    }
  s.shortest = {values[best], values[best + q]};
  return s;
}

std::vector<OutputStatistics> propagate(std::size_t outputs, const TrialModel& trial,
                                        const MonteCarloOptions& options,
                                        MonteCarloSummary& summary,
                                        std::vector<std::size_t>* failed,
                                        std::vector<std::vector<double>>* samples) {
  return propagate_indexed(
      outputs,
      [&](std::size_t t, std::size_t, std::vector<double>& out) {
        std::mt19937_64 rng(trial_seed(options.seed, t));
        trial(rng, out);
      },
      options, summary, failed, samples);
}

std::vector<OutputStatistics> propagate_indexed(std::size_t outputs,
                                                const IndexedTrialModel& trial,
                                                const MonteCarloOptions& options,
                                                MonteCarloSummary& summary,
                                                std::vector<std::size_t>* failed,
                                                std::vector<std::vector<double>>* samples) {
  validate(options);
  summary.seed = options.seed;
  summary.coverage = options.coverage;
  summary.adaptive = !options.trials.has_value();
  // values[o][t]: output o of trial t; trial t always draws from its own stream.
  std::vector<std::vector<double>> values(outputs);
  std::size_t run = 0;
  std::size_t all_failed = 0;
  const auto run_trials = [&](std::size_t count) {
    for (auto& v : values) v.resize(run + count, nan);
    std::vector<char> dead(count, 0);
    const std::size_t first = run;
    // One output buffer per worker, reset per trial.
    std::vector<std::vector<double>> buffers(std::max<std::size_t>(1, options.threads));
    detail::parallel_for(count, options.threads, [&](std::size_t c, std::size_t worker) {
      std::vector<double>& out = buffers[worker];
      out.assign(outputs, nan);
      trial(first + c, worker, out);
      bool any = outputs == 0;
      for (std::size_t o = 0; o < outputs; ++o) {
        values[o][first + c] = out[o];
        any |= std::isfinite(out[o]);
      }
      dead[c] = any ? 0 : 1;
    });
    for (char d : dead) all_failed += static_cast<std::size_t>(d);
    run += count;
  };

  const auto statistics = [&](std::size_t begin, std::size_t end) {
    std::vector<std::optional<OutputStatistics>> out(outputs);
    for (std::size_t o = 0; o < outputs; ++o) {
      std::vector<double> v = finite_values(values[o], begin, end);
      if (v.size() >= 2) out[o] = output_statistics(std::move(v), options.coverage);
    }
    return out;
  };

  std::vector<std::optional<OutputStatistics>> overall;
  if (options.trials) {
    run_trials(*options.trials);
    summary.batches = 1;
    overall = statistics(0, run);
    summary.status = MonteCarloStatus::converged;
  } else {
    // JCGM 101:2008 7.9.4 (from memory): batches of M trials; after h >= 2 batches, the
    // standard deviation of the h batch results of each of y, u(y), y_low, y_high,
    // s = sqrt(sum (x_r - mean)^2 / (h (h - 1))), must satisfy 2 s <= delta, delta the numerical
    // tolerance of u(y) over all h M trials; otherwise one more batch.
    const std::size_t j = static_cast<std::size_t>(std::ceil(100.0 / (1.0 - options.coverage)));
    const std::size_t batch = std::max<std::size_t>(
        2, options.adaptive.batch ? options.adaptive.batch : j);
    std::vector<std::vector<std::optional<OutputStatistics>>> per_batch;
    summary.status = MonteCarloStatus::not_converged;
    while (run + batch <= std::max(options.adaptive.max_trials, 2 * batch)) {
      const std::size_t begin = run;
      run_trials(batch);
      per_batch.push_back(statistics(begin, run));
      if (per_batch.size() < 2) continue;
      overall = statistics(0, run);
      const double h = static_cast<double>(per_batch.size());
      bool stable = true;
      for (std::size_t o = 0; o < outputs && stable; ++o) {
        if (!overall[o]) continue;
        const double delta = numerical_tolerance(overall[o]->standard_uncertainty,
                                                 options.adaptive.significant_digits);
        using Pick = double (*)(const OutputStatistics&);
        const Pick picks[] = {[](const OutputStatistics& s) { return s.mean; },
                              [](const OutputStatistics& s) { return s.standard_uncertainty; },
                              [](const OutputStatistics& s) { return s.shortest.low; },
                              [](const OutputStatistics& s) { return s.shortest.high; }};
        for (Pick pick : picks) {
          std::vector<double> x;
          for (const auto& b : per_batch)
            if (b[o]) x.push_back(pick(*b[o]));
          if (x.size() < 2) continue;
          const double mean = std::accumulate(x.begin(), x.end(), 0.0) / x.size();
          double ss = 0.0;
          for (double v : x) ss += (v - mean) * (v - mean);
          const double s = std::sqrt(ss / (h * (h - 1.0)));
          if (2.0 * s > delta) {
            stable = false;
            break;
          }
        }
      }
      if (stable) {
        summary.status = MonteCarloStatus::converged;
        break;
      }
    }
    summary.batches = per_batch.size();
    if (overall.empty()) overall = statistics(0, run);
  }
  summary.trials = run;
  summary.failed_trials = all_failed;
  if (failed) {
    failed->assign(outputs, 0);
    for (std::size_t o = 0; o < outputs; ++o)
      for (double v : values[o]) (*failed)[o] += std::isfinite(v) ? 0 : 1;
  }
  std::vector<OutputStatistics> out(outputs);
  for (std::size_t o = 0; o < outputs; ++o)
    if (overall[o]) out[o] = *overall[o];
  if (samples) *samples = std::move(values);
  summary.message =
      std::to_string(run) + " trials" +
      (summary.adaptive ? " in " + std::to_string(summary.batches) + " batches (adaptive, " +
                              std::string(monte_carlo_status_name(summary.status)) + ")"
                        : " (fixed)") +
      ", seed " + std::to_string(options.seed);
  if (all_failed > 0)
    summary.message += ", " + std::to_string(all_failed) + " trials could not be evaluated";
  return out;
}

namespace {

/// One output of the part study: a characteristic of a bore, with what widens its interval.
struct Output {
  std::size_t bore = 0;
  std::string id;
  std::string kind;  // the id after "<bore>/", as characteristic_figures gives it
  double value = 0.0;
  double ambiguity = 0.0;
  double ambiguity_range = 0.0;
  double axis_range = 0.0;
  std::string ambiguity_source;
};

double pooled_rms(const std::vector<std::pair<double, std::size_t>>& parts) {
  double ss = 0.0;
  std::size_t n = 0;
  for (const auto& [rms, count] : parts) {
    ss += rms * rms * static_cast<double>(count);
    n += count;
  }
  return n ? std::sqrt(ss / static_cast<double>(n)) : 0.0;
}

/// Sigma per feature for the `estimated` model: the RMS residual of the feature's own
/// least-squares fit on its prepared points (datums: datum_cloud_used(); bores: the
/// bore's least-squares cylinder).
std::vector<double> estimated_sigmas(const PartPlan& plan, const PartInputs& inputs,
                                     const PartEvaluation& nominal,
                                     std::vector<std::string>& warnings) {
  std::vector<double> sigma;
  FitOptions fit;
  fit.threads = 1;
  for (std::size_t k = 0; k < plan.datums.size(); ++k) {
    const PlanDatum& d = plan.datums[k];
    const Eigen::Matrix3Xd& points = datum_cloud_used(nominal, inputs, k).points;
    switch (d.kind) {
      case FeatureKind::plane:
        sigma.push_back(fit_plane_least_squares(points, fit).residuals.rms);
        break;
      case FeatureKind::bore:
      case FeatureKind::pin:
        sigma.push_back(fit_cylinder_least_squares(points, fit).residuals.rms);
        break;
      case FeatureKind::slot:
      case FeatureKind::tab: {
        const auto& w = nominal.datums.c_width;
        if (!w) throw std::logic_error("monte carlo: a width datum without its result");
        sigma.push_back(pooled_rms(
            {{fit_plane_least_squares(w->positive_face, fit).residuals.rms,
              static_cast<std::size_t>(w->positive_face.cols())},
             {fit_plane_least_squares(w->negative_face, fit).residuals.rms,
              static_cast<std::size_t>(w->negative_face.cols())}}));
        break;
      }
    }
  }
  for (const BoreResult& b : nominal.bores) {
    if (b.evaluated()) {
      sigma.push_back(b.least_squares.residuals.rms);
    } else {
      sigma.push_back(0.0);
      warnings.push_back("bore " + b.id +
                         " was not evaluated: its points are not perturbed (no sigma estimate)");
    }
  }
  return sigma;
}

/// Smallest distance of `points` (3 x n) from the line through `a` and `b`.
double smallest_distance(const Eigen::Matrix3Xd& points, const Eigen::Vector3d& a,
                         const Eigen::Vector3d& b) {
  const Eigen::Vector3d w = (b - a).normalized();
  double best = std::numeric_limits<double>::infinity();
  for (Eigen::Index j = 0; j < points.cols(); ++j)
    best = std::min(best, (points.col(j) - a).cross(w).squaredNorm());
  return std::sqrt(best);
}

/// How far the axis of a maximum-inscribed cylinder can move at either end of its extent while
/// its radius falls by at most `tolerance`: for each end and 16 directions perpendicular to the
/// axis (the other end held), the largest displacement d with r0 - r(d) <= tolerance, r(d) the
/// largest cylinder about the moved axis clear of the points (their smallest distance from it),
/// found by doubling then 50 bisection steps. The maximum over ends and directions. A
/// cylinder whose contacts hold it at both ends moves by about `tolerance`; one decided by a
/// single level (a bore probed at two levels) tilts about that level, its radius falling only
/// as r theta^2 / 2, so its far end moves by L sqrt(2 tolerance / r): micrometres for
/// tolerance 1e-8 mm (the near-optimal set of docs/chebyshev.md with a coarser tolerance).
double near_optimal_axis_range(const CylinderFit& envelope, const Eigen::Matrix3Xd& points,
                               double tolerance) {
  if (points.cols() == 0 || !(tolerance > 0.0)) return 0.0;
  const Eigen::Vector3d w = envelope.axis.direction;
  const Eigen::Vector3d ends[2] = {envelope.axis.point + envelope.extent_min * w,
                                   envelope.axis.point + envelope.extent_max * w};
  const Eigen::Matrix3d basis = detail::basis_from_direction(w);
  const double r0 = smallest_distance(points, ends[0], ends[1]);
  constexpr double two_pi = 6.283185307179586476925286766559;
  double range = 0.0;
  for (int end = 0; end < 2; ++end)
    for (int k = 0; k < 16; ++k) {
      const double angle = two_pi * k / 16.0;
      const Eigen::Vector3d step = std::cos(angle) * basis.col(0) + std::sin(angle) * basis.col(1);
      const auto drop = [&](double d) {
        Eigen::Vector3d moved[2] = {ends[0], ends[1]};
        moved[end] += d * step;
        return r0 - smallest_distance(points, moved[0], moved[1]);
      };
      double lo = 0.0, hi = 1e-9;
      while (hi < 1.0 && drop(hi) <= tolerance) {
        lo = hi;
        hi *= 2.0;
      }
      for (int i = 0; i < 50 && hi - lo > 1e-12; ++i) {
        const double mid = 0.5 * (lo + hi);
        (drop(mid) <= tolerance ? lo : hi) = mid;
      }
      range = std::max(range, lo);
    }
  return range;
}

/// The ambiguity of the axis a characteristic's value rests on, and the range it gives the
/// value. Only the actual mating envelope (a Chebyshev element) can be ambiguous among the
/// axes a bore's figures use; datum B's and C's related envelopes move the frame, hence the
/// position (not the perpendicularity to A).
void set_ambiguity(Output& out, std::string_view kind, const BoreResult& b, const PlanBore& plan,
                   const PartPlan& part, const PartEvaluation& nominal, double axis_range) {
  const bool position = kind == "position" || kind == "position/mobility";
  const bool perpendicularity = kind == "perpendicularity";
  const bool boundary = kind == "virtual-condition" && b.virtual_condition &&
                        b.virtual_condition->conservative;
  if (!position && !perpendicularity && !boundary) return;
  std::string source;
  double axis = 0.0;
  if (b.axis_method == BoreAxisMethod::mating_envelope &&
      std::max(b.mating_envelope.ambiguity, axis_range) > 0.0) {
    axis = std::max(b.mating_envelope.ambiguity, axis_range);
    source = "actual mating envelope";
  }
  double frame = 0.0;
  if (position) {
    // A datum axis that can move by a at its ends moves the origin by up to a; datum C's by a
    // turns the frame by up to a / |C| and moves a bore at radius r by a r / |C|.
    if (nominal.datums.b && nominal.datums.b->related_envelope.ambiguity > 0.0) {
      frame += nominal.datums.b->related_envelope.ambiguity;
      source += std::string(source.empty() ? "" : ", ") + "datum B's envelope";
    }
    const PlanDatum* c = part.datum('C');
    if (nominal.datums.c_feature && nominal.datums.c_feature->related_envelope.ambiguity > 0.0) {
      // Lever arm: the bore's basic distance from B over C's (1 when C has no basic location).
      double lever = 1.0;
      if (c && c->basic_location && c->basic_location->norm() > 0.0)
        lever = plan.basic_location.norm() / c->basic_location->norm();
      frame += lever * nominal.datums.c_feature->related_envelope.ambiguity;
      source += std::string(source.empty() ? "" : ", ") + "datum C's envelope";
    }
  }
  out.ambiguity = axis + frame;
  out.ambiguity_range = 2.0 * out.ambiguity;
  out.ambiguity_source = source;
}

/// The study's options: the engine's (validate) and the error model's.
void validate_study(const MonteCarloOptions& options) {
  validate(options);
  if (options.probing == ProbingModel::sigma &&
      !(options.probing_sigma > 0.0 && std::isfinite(options.probing_sigma)))
    throw std::invalid_argument("monte carlo: the probing sigma must be a positive length");
  if (options.length_error &&
      !(options.length_error->k > 0.0 && options.length_error->a >= 0.0 &&
        std::isfinite(options.length_error->k) && std::isfinite(options.length_error->a)))
    throw std::invalid_argument(
        "monte carlo: the length error needs A >= 0 and K > 0 (E = A + L/K)");
}

}  // namespace

MonteCarloSummary monte_carlo_uncertainty(const PartPlan& plan, const PartInputs& inputs,
                                          const MonteCarloOptions& options) {
  validate_study(options);  // before the evaluation: bad options cost nothing
  // The unperturbed evaluation: values, ambiguities, the frame the errors are drawn in.
  EvaluationOptions full = options.evaluation;
  full.threads = std::max<std::size_t>(1, options.threads);
  return monte_carlo_uncertainty(plan, inputs, evaluate_part(plan, inputs, full), options);
}

MonteCarloSummary monte_carlo_uncertainty(const PartPlan& plan, const PartInputs& inputs,
                                          const PartEvaluation& nominal,
                                          const MonteCarloOptions& options) {
  validate_study(options);
  if (nominal.bores.size() != plan.bores.size() ||
      nominal.preparation.size() != plan.datums.size() + plan.bores.size())
    throw std::invalid_argument(
        "monte carlo: the unperturbed evaluation is not one of this plan (bores or features "
        "differ)");

  MonteCarloSummary summary;
  summary.probing = options.probing;
  summary.length_error = options.length_error;

  // ---- From the unperturbed evaluation: values, ambiguities, the frame the errors are drawn in.
  std::vector<Output> outputs;
  for (std::size_t i = 0; i < nominal.bores.size(); ++i) {
    const BoreResult& b = nominal.bores[i];
    if (!b.evaluated()) continue;
    // The envelope's near-optimal range, on the bore's points kept by the prepare stage, in
    // the datum frame (before tip compensation, which shifts every distance by the tip radius
    // to first order and so leaves the range as it is).
    double axis_range = 0.0;
    if (b.axis_method == BoreAxisMethod::mating_envelope) {
      const std::vector<std::size_t>& kept =
          nominal.preparation[plan.datums.size() + i].record.kept;
      Eigen::Matrix3Xd points(3, static_cast<Eigen::Index>(kept.size()));
      for (std::size_t j = 0; j < kept.size(); ++j)
        points.col(static_cast<Eigen::Index>(j)) = inputs.bores[i].points.col(
            static_cast<Eigen::Index>(kept[j]));
      axis_range = near_optimal_axis_range(
          b.mating_envelope, nominal.datums.frame.points_to_frame(points),
          options.near_optimal_tolerance);
    }
    for (const Characteristic& c : bore_characteristics(b, plan.bores[i])) {
      if (!c.not_evaluated.empty()) continue;
      Output o;
      o.bore = i;
      o.id = c.id;
      o.kind = c.id.substr(b.id.size() + 1);
      o.value = c.value;
      set_ambiguity(o, o.kind, b, plan.bores[i], plan, nominal, axis_range);
      o.axis_range = axis_range;
      outputs.push_back(std::move(o));
    }
  }

  // ---- The error model.
  const std::size_t features = inputs.datums.size() + inputs.bores.size();
  summary.feature_sigma = options.probing == ProbingModel::sigma
                              ? std::vector<double>(features, options.probing_sigma)
                              : estimated_sigmas(plan, inputs, nominal, summary.warnings);
  const Eigen::Matrix3d to_measurement = nominal.datums.frame.rotation.transpose();
  Eigen::Vector3d centroid = Eigen::Vector3d::Zero();
  double length = 0.0;
  {
    Eigen::Vector3d lo = Eigen::Vector3d::Constant(std::numeric_limits<double>::infinity());
    Eigen::Vector3d hi = -lo;
    std::size_t n = 0;
    for (const auto* group : {&inputs.datums, &inputs.bores})
      for (const PointCloud& cloud : *group) {
        if (cloud.points.cols() == 0) continue;
        const Eigen::Matrix3Xd in_frame = nominal.datums.frame.points_to_frame(cloud.points);
        lo = lo.cwiseMin(in_frame.rowwise().minCoeff());
        hi = hi.cwiseMax(in_frame.rowwise().maxCoeff());
        centroid += cloud.points.rowwise().sum();
        n += cloud.size();
      }
    if (n > 0) {
      centroid /= static_cast<double>(n);
      length = (hi - lo).norm();
    }
  }
  const double scale_bound =
      options.length_error && length > 0.0 ? options.length_error->at(length) / length : 0.0;
  if (options.length_error) summary.length = length;

  EvaluationOptions lean = options.evaluation;
  lean.threads = 1;  // the trials run in parallel; one evaluation per thread
  lean.bore.fit.lp_solver = LpSolver::dense;  // Chebyshev fits: no Clp set-up per programme
  const bool two_point = lean.profile.two_point_sizes;
  lean.profile = lean_profile();
  lean.profile.two_point_sizes = two_point;
  // Every trial's fits start from the unperturbed evaluation's (read only, shared by the
  // workers): fewer iterations to the same optima (docs/uncertainty.md, "Speed").
  if (options.warm_start) lean.start = &nominal;

  // Per worker: what the trials' fits did (FitCounts).
  std::vector<FitCounts> fit_counts(std::max<std::size_t>(1, options.threads));
  // One perturbed copy of the inputs per worker, made once: a trial overwrites its points in
  // place from the unperturbed ones (no cloud is allocated per trial); and one buffer of normal
  // deviates per worker, as long as the largest cloud's 3 n.
  const std::size_t workers = std::max<std::size_t>(1, options.threads);
  std::vector<PartInputs> perturbed(workers, inputs);
  Eigen::Index largest = 0;
  for (const auto* group : {&inputs.datums, &inputs.bores})
    for (const PointCloud& cloud : *group) largest = std::max(largest, cloud.points.cols());
  std::vector<Eigen::Matrix3Xd> deviates(workers, Eigen::Matrix3Xd(3, largest));
  // Per worker: a bore's figures (characteristic_figures: the values without the ids, names
  // and references, which the trials never read), cleared per bore.
  std::vector<std::vector<CharacteristicFigure>> figure_buffers(workers);
  const IndexedTrialModel trial = [&](std::size_t t, std::size_t worker, std::vector<double>& out) {
    // The sequence of std::mt19937_64 seeded so (detail/twister.hpp), drawn a block at a time.
    detail::Twister64 rng(trial_seed(options.seed, t));
    PartInputs& mine = perturbed[worker];
    // The systematic scale error first, then each feature's points in order (x, y, z of the
    // datum frame per point): a fixed order of draws.
    double s = 0.0;
    if (scale_bound > 0.0) {
      const double u = static_cast<double>(rng() >> 11) * 0x1.0p-53;
      s = (2.0 * u - 1.0) * scale_bound;
    }
    // A feature's 3 n deviates are drawn at once (x, y, z of point 0, then of point 1, ...),
    // the last pair's second value unused when 3 n is odd.
    std::size_t feature = 0;
    Eigen::Matrix3Xd& draws = deviates[worker];
    for (const auto& [from, into] : {std::pair{&inputs.datums, &mine.datums},
                                     std::pair{&inputs.bores, &mine.bores}})
      for (std::size_t k = 0; k < from->size(); ++k) {
        const Eigen::Matrix3Xd& original = (*from)[k].points;
        Eigen::Matrix3Xd& points = (*into)[k].points;
        const double sigma = summary.feature_sigma[feature++];
        const Eigen::Index n = original.cols();
        standard_normals(rng, draws.data(), static_cast<std::size_t>(3 * n));
        for (Eigen::Index j = 0; j < n; ++j) {
          Eigen::Vector3d p = original.col(j);
          if (s != 0.0) p = centroid + (1.0 + s) * (p - centroid);
          points.col(j) = p + sigma * (to_measurement * draws.col(j));
        }
      }
    PartEvaluation e;
    try {
      e = evaluate_part(plan, mine, lean);
    } catch (const std::exception&) {
      return;  // every output stays NaN: the trial is counted as failed
    }
    count_fits(e, fit_counts[worker]);
    std::size_t current = std::numeric_limits<std::size_t>::max();
    std::vector<CharacteristicFigure>& figures = figure_buffers[worker];
    for (std::size_t o = 0; o < outputs.size(); ++o) {
      const std::size_t i = outputs[o].bore;
      if (i != current) {
        characteristic_figures(e.bores[i], figures);
        current = i;
      }
      // The first row of the output's kind, as find_characteristic takes the first of its id.
      for (const CharacteristicFigure& f : figures)
        if (f.kind == outputs[o].kind) {
          if (f.evaluated) out[o] = f.value;
          break;
        }
    }
  };

  std::vector<std::size_t> failed;
  const std::vector<OutputStatistics> stats =
      propagate_indexed(outputs.size(), trial, options, summary, &failed);
  for (const FitCounts& c : fit_counts) {
    summary.chebyshev_fits += c.chebyshev;
    summary.lp_fallbacks += c.lp_fallbacks;
    summary.warm_fits += c.warm;
    summary.warm_descents += c.descents;
    summary.warm_restarts += c.restarts;
  }

  for (std::size_t o = 0; o < outputs.size(); ++o) {
    CharacteristicUncertainty u;
    u.id = outputs[o].id;
    u.value = outputs[o].value;
    u.statistics = stats[o];
    u.failed_trials = failed[o];
    u.ambiguity = outputs[o].ambiguity;
    u.ambiguity_range = outputs[o].ambiguity_range;
    u.axis_range = outputs[o].axis_range;
    u.interval = {stats[o].shortest.low - u.ambiguity_range,
                  stats[o].shortest.high + u.ambiguity_range};
    u.kind = IntervalKind::shortest;
    u.tie_breaking = u.ambiguity_range > 0.0 &&
                     u.ambiguity_range >= options.tie_breaking_ratio *
                                              stats[o].standard_uncertainty;
    // Below a nanometre the widening is applied but not worth a line in the reports.
    if (u.ambiguity_range >= 1e-6)
      u.note = "interval widened by " + detail::format_number(u.ambiguity_range, 6) +
               " mm at both ends: the axis is not unique (" + outputs[o].ambiguity_source +
               ", ambiguity " + detail::format_number(u.ambiguity, 6) + " mm)";
    if (u.tie_breaking)
      u.note += "; the ambiguity is comparable to the standard uncertainty: the spread "
                "measures the solver's tie-breaking among equally good axes as much as the part";
    // The measured points already hold the probing error the trials add again: a figure taken
    // from extreme points (a mating envelope, a form's zone) moves with the added noise, so its
    // trials are centred off its value (ISO/TS 15530-4 notes this for simulations from
    // measured points, from memory). Said, not corrected.
    if (stats[o].trials >= 2 &&
        std::abs(stats[o].mean - u.value) > stats[o].standard_uncertainty)
      u.note += std::string(u.note.empty() ? "" : "; ") +
                "the trials' mean lies " +
                detail::format_number(stats[o].mean - u.value, 6) +
                " mm from the value, more than u: the added errors move this extreme-point "
                "figure (the measured points hold a probing error already)";
    if (stats[o].trials < 2)
      u.note = "no statistics: fewer than 2 trials evaluated this characteristic";
    summary.characteristics.push_back(std::move(u));
  }
  if (outputs.empty()) {
    summary.status = MonteCarloStatus::failed;
    summary.message = "no characteristic was evaluated: nothing to propagate";
  }
  return summary;
}

std::optional<double> expanded_uncertainty(const MonteCarloSummary& summary, std::string_view id,
                                           double k) {
  const CharacteristicUncertainty* u = find_uncertainty(summary, id);
  if (!u || u->statistics.trials < 2) return std::nullopt;
  return k * u->statistics.standard_uncertainty;
}

void decide_with_study(std::vector<Characteristic>& characteristics,
                       const MonteCarloSummary& summary, const DecisionRule& rule) {
  for (Characteristic& c : characteristics) {
    const CharacteristicUncertainty* u = find_uncertainty(summary, c.id);
    if (!u || u->statistics.trials < 2 || !c.not_evaluated.empty()) continue;
    c.uncertainty = ExpandedUncertainty{
        rule.coverage_factor * u->statistics.standard_uncertainty + u->ambiguity_range,
        rule.coverage_factor,
        "Monte Carlo, " + std::to_string(u->statistics.trials) + " trials, seed " +
            std::to_string(summary.seed)};
    apply_decision(c, rule);
  }
}

const CharacteristicUncertainty* find_uncertainty(const MonteCarloSummary& summary,
                                                  std::string_view id) noexcept {
  for (const CharacteristicUncertainty& u : summary.characteristics)
    if (u.id == id) return &u;
  return nullptr;
}

}  // namespace cylzone
