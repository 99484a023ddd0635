// Uniqueness of a converged Chebyshev element and the walks that measure its ambiguity
// (fit/detail/chebyshev_uniqueness.hpp).
#include "fit/detail/chebyshev_uniqueness.hpp"

#include <Eigen/SVD>
#include <algorithm>
#include <cmath>
#include <limits>
#include <memory>
#include <vector>

#include "cylzone/core/errors.hpp"
#include "fit/detail/chebyshev_programme.hpp"

namespace cylzone::detail {

using namespace zone_lp;

namespace {

/// Reference displacements below this fraction of the data's size are not a freedom of the
/// optimum: a sharp optimum's own tolerance set (objective within the tolerance) is of that
/// order or smaller (see first_order_unique), and they are reported as 0.
constexpr double ambiguity_resolution = 1e-9;

/// A step w = (x, R, r) of any model moves its reference points by at most this times |w|_2:
/// a centre by |x|; an axis end by |shift + (t / L) tilt| <= sqrt(2) |x| (|t| <= L, the data's
/// size); a plane corner by |mean of the bounds' change| + |(X, Y)| / L |x| <= (1 + sqrt 2) |w|
/// (a corner of the points' box is within sqrt(2) L of the centroid).
constexpr double gauge_bound = 2.5;

/// A walk along the near-optimal set takes at most this many linear programmes.
constexpr int longest_walk = 16;
/// An exploring walk (allowance > 0) at most this many.
constexpr int longest_exploration = 6;

/// Largest displacement of a reference point: the norm of each group of `dimension` rows.
double largest_displacement(const Eigen::VectorXd& components, int dimension) {
  double worst = 0.0;
  for (Eigen::Index k = 0; k + dimension <= components.size(); k += dimension)
    worst = std::max(worst, components.segment(k, dimension).norm());
  return worst;
}

/// A linear programme's solution is unique when the constraints active at it, weighted by
/// strictly positive multipliers, have full column rank (Mangasarian, Linear Algebra Appl. 25,
/// 1979, from memory): for a step w that keeps them, c.w = sum lambda_i s_i with slacks
/// s = -A_B w >= 0, so |w| <= |s|_2 / sigma_min(A_B) <= c.w / (lambda_min sigma_min). At a
/// first-order optimum of the orthogonal distances (the last programme at the element) the
/// element is then an isolated, sharp optimum: an objective at most `tolerance` worse moves a
/// reference point by at most gauge_bound x tolerance / (lambda_min sigma_min), to first order.
/// The optimum counts as proven unique when that bound is below `resolution`. `reach` is the
/// same bound for an objective `allowance` worse (infinite without a proof). Rows of A_B:
/// (g_i, -1 in the column of the contact's bound), over the programme's variables (x, R, r).
bool first_order_unique(const ZoneModel& model, ZoneObjective objective,
                        const std::vector<Constraint>& binding,
                        const std::vector<double>& multipliers, double tolerance,
                        double resolution, double allowance, double& reach) {
  constexpr double positive = 1e-9;  // multipliers sum to 1 per side
  const int p = model.parameter_count();
  const int aux = (uses_upper(objective) ? 1 : 0) + (uses_lower(objective) ? 1 : 0);
  std::vector<std::size_t> rows;
  std::vector<Eigen::Index> points;
  double lambda_min = std::numeric_limits<double>::infinity();
  for (std::size_t k = 0; k < binding.size(); ++k)
    if (multipliers[k] > positive) {
      rows.push_back(k);
      points.push_back(binding[k].point);
      lambda_min = std::min(lambda_min, multipliers[k]);
    }
  reach = std::numeric_limits<double>::infinity();
  if (rows.size() < static_cast<std::size_t>(p + aux)) return false;
  // The contacts' gradients at the element, from a model of their points alone: O(contacts).
  Eigen::VectorXd d;
  Eigen::MatrixXd g;
  model.subset(points)->evaluate(Eigen::VectorXd::Zero(p), d, &g);
  Eigen::MatrixXd a = Eigen::MatrixXd::Zero(static_cast<Eigen::Index>(rows.size()), p + aux);
  for (std::size_t r = 0; r < rows.size(); ++r) {
    const auto i = static_cast<Eigen::Index>(r);
    a.row(i).head(p) = g.row(i);
    const bool lower = binding[rows[r]].side == Side::lower;
    a(i, p + (lower && uses_upper(objective) ? 1 : 0)) = -1.0;
  }
  const double sigma_min = Eigen::JacobiSVD<Eigen::MatrixXd>(a).singularValues()(p + aux - 1);
  reach = gauge_bound * allowance / (lambda_min * sigma_min);
  return gauge_bound * tolerance <= resolution * lambda_min * sigma_min;
}

/// Largest t in [0, 1] with the true objective at base + t step within `limit`, to a step
/// resolution of `length`; `distances` are those at base + t step (`distances_base` those at
/// base, where the objective is within the limit). Regula falsi with the Illinois
/// modification (Dowell & Jarratt, BIT 11, 1971) on excess(t) = objective - limit, which keeps
/// a valid t = lo and an invalid t = hi: the excess is piecewise smooth along the step, so it
/// takes a few evaluations where bisection takes some forty.
double verified_fraction(const ZoneModel& model, ZoneObjective objective,
                         const Eigen::VectorXd& base, const Eigen::VectorXd& step, double limit,
                         double length, const Eigen::VectorXd& distances_base,
                         Eigen::VectorXd& distances) {
  model.evaluate(base + step, distances, nullptr);
  double excess_hi = true_objective(objective, distances) - limit;
  if (excess_hi <= 0.0) return 1.0;
  distances = distances_base;
  double excess_lo = true_objective(objective, distances_base) - limit;
  Eigen::VectorXd trial;
  double lo = 0.0, hi = 1.0;
  int kept = 0;  // > 0: lo was kept (hi moved) in a row; < 0: hi was kept
  const double size = step.lpNorm<Eigen::Infinity>();
  for (int k = 0; k < 64 && (hi - lo) * size > length; ++k) {
    double t = lo - excess_lo * (hi - lo) / (excess_hi - excess_lo);
    // Stay well inside the bracket, or bisect when the secant is no use.
    const double margin = 0.01 * (hi - lo);
    if (!(t > lo + margin && t < hi - margin)) t = 0.5 * (lo + hi);
    model.evaluate(base + t * step, trial, nullptr);
    const double excess = true_objective(objective, trial) - limit;
    if (excess <= 0.0) {
      lo = t;
      excess_lo = excess;
      distances = trial;
      if (kept < 0) excess_hi *= 0.5;  // hi kept twice: Illinois step
      kept = kept < 0 ? kept - 1 : -1;
    } else {
      hi = t;
      excess_hi = excess;
      if (kept > 0) excess_lo *= 0.5;
      kept = kept > 0 ? kept + 1 : 1;
    }
  }
  return lo;
}

/// A step x moves every distance by at most this times |x|_inf: the distance from a point
/// to an element changes by at most the element's displacement near it (triangle
/// inequality), and that is at most |shift| + |t / L| |tilt| <= 2 sqrt(2) |x|_inf for an axis
/// (|t| <= L), sqrt(2) |x|_inf for a centre and for a plane (|(X, Y)| / L <= 1 away from the
/// corners). Twice the largest, with margin: a point farther than this times the box from the
/// active bounds can neither bind nor become extreme within a step in the box.
constexpr double reach_factor = 6.0;

/// The points whose distances are within `band` of the bound(s) the objective uses.
std::vector<Eigen::Index> near_bounds(ZoneObjective objective, const Eigen::VectorXd& d,
                                      double band) {
  const double top = d.maxCoeff(), bottom = d.minCoeff();
  std::vector<Eigen::Index> near;
  for (Eigen::Index i = 0; i < d.size(); ++i)
    if ((uses_upper(objective) && top - d(i) <= band) ||
        (uses_lower(objective) && d(i) - bottom <= band))
      near.push_back(i);
  return near;
}

/// How far one displacement component (`functional` x step, + offset_weight x the bounds'
/// mean) can be pushed along the near-optimal set, as a walk: at the walk's current element
/// the linearised programme gives the step that moves the component farthest
/// (ZoneProgramme::farthest_step, in a trust box); the step is verified on the true objective
/// and, where that fails, shortened until it holds (true objective within `limit`); the walk
/// re-linearises there and goes on until it gains nothing. Re-linearising lets it pass
/// contacts whose distance is convex along the way (the linear model sees them block, the true
/// objective does not) and follow a curved set. The box starts small, so that the
/// programmes' feasibility tolerance (1e-10 of the box) stays below the objective's, and grows
/// tenfold whenever a verified step reaches it. Each leg works on the points within
/// reach_factor x box of the bounds only (the others cannot matter within the box), and its
/// end is checked once on every point. Returns the walk's end (a step from the current
/// element), with every point's distances there in `distances` (`d`: at the start).
Eigen::VectorXd walk(const ZoneModel& model, ZoneObjective objective, const ZoneOptions& options,
                     const Eigen::VectorXd& d, const Eigen::RowVectorXd& functional,
                     double offset_weight, double limit, double resolution, double allowance,
                     Eigen::VectorXd& distances, int& programmes) {
  const double scale = options.scale > 0.0 ? options.scale : 1.0;
  const double largest_box = options.ambiguity_box_limit * scale;
  const double length = 1e-3 * resolution;  // step resolution of the verification
  const int p = model.parameter_count();
  Eigen::VectorXd x = Eigen::VectorXd::Zero(p), d_near, at_trial, at_end;
  Eigen::MatrixXd g_near;
  distances = d;
  double box = std::min(options.ambiguity_box * scale, largest_box);
  double walked = 0.0;
  // An exploring walk only has to cross a low ridge near the optimum; its end starts a descent.
  const int legs = allowance > 0.0 ? longest_exploration : longest_walk;
  for (int leg = 0; leg < legs; ++leg) {
    const std::unique_ptr<ZoneModel> near =
        model.subset(near_bounds(objective, distances, reach_factor * box));
    near->evaluate(x, d_near, &g_near);
    ZoneProgramme programme(objective, options, near->point_count(), p);
    // An exploring walk may lose at most what is left of its allowance on this leg.
    const double left = allowance > 0.0 ? limit - true_objective(objective, d_near) : 0.0;
    const Eigen::VectorXd step = programme.farthest_step(d_near, g_near, box, functional,
                                                         offset_weight, left);
    ++programmes;
    double t = verified_fraction(*near, objective, x, step, limit, length, d_near, at_trial);
    // A step that holds and stops inside the box may have been stopped by a contact whose
    // distance is convex along it: linearised, such a contact blocks at half the way to where
    // it is tangent to the current bound, again and again. Doubling the step while the true
    // objective allows (up to the box) passes it at once.
    const double to_box = box / std::max(step.lpNorm<Eigen::Infinity>(), 1e-300);
    for (Eigen::VectorXd longer; t == 1.0 && to_box > 1.0 + 1e-9;) {
      const double next = std::min(2.0 * t, to_box);
      near->evaluate(x + next * step, longer, nullptr);
      if (!(true_objective(objective, longer) <= limit)) break;
      t = next;
      if (next == to_box) break;
    }
    if (!(t > 0.0)) break;
    // Every point at the leg's end; should one outside the band have mattered after all, the
    // leg is verified again on all of them.
    model.evaluate(x + t * step, at_end, nullptr);
    if (!(true_objective(objective, at_end) <= limit))
      t *= verified_fraction(model, objective, x, t * step, limit, length, distances, at_end);
    const double gain = t * functional.dot(step);
    if (!(t > 0.0) || !(gain > 0.0)) break;
    x += t * step;
    distances = at_end;
    walked += gain;
    const bool reached_box = t * step.lpNorm<Eigen::Infinity>() >= (1.0 - 1e-6) * box;
    if (reached_box && box < largest_box)
      box = std::min(10.0 * box, largest_box);
    else if (gain <= 1e-6 * walked + 1e-3 * resolution)
      break;  // no longer getting anywhere
  }
  return x;
}

}  // namespace

double objective_tolerance(const ZoneOptions& options, const Eigen::VectorXd& d) {
  const double scale = options.scale > 0.0 ? options.scale : 1.0;
  return options.ambiguity_tolerance * std::max(scale, d.cwiseAbs().maxCoeff());
}

double displacement_resolution(const ZoneOptions& options) {
  return ambiguity_resolution * (options.scale > 0.0 ? options.scale : 1.0);
}

double largest_displacement(const ZoneModel& model, const Eigen::VectorXd& step,
                            const Eigen::VectorXd& distances_at_step,
                            const Eigen::VectorXd& distances_here) {
  return largest_displacement(model.displacements(step, distances_at_step, distances_here),
                              model.displacement_gauge().dimension);
}

bool proven_unique(const ZoneModel& model, ZoneObjective objective, const ZoneOptions& options,
                   const ZoneProgramme& last, const Eigen::VectorXd& d, double allowance,
                   double& reach) {
  return first_order_unique(model, objective, last.binding(), last.multipliers(),
                            objective_tolerance(options, d), displacement_resolution(options),
                            allowance, reach);
}

std::vector<WalkEnd> walk_ends(const ZoneModel& model, ZoneObjective objective,
                               const ZoneOptions& options, const Eigen::VectorXd& d,
                               double allowance, int& programmes) {
  const DisplacementGauge gauge = model.displacement_gauge();
  const double limit = true_objective(objective, d) + std::max(allowance, objective_tolerance(options, d));
  const double resolution = displacement_resolution(options);
  std::vector<WalkEnd> ends;
  for (Eigen::Index row = 0; row < gauge.functionals.rows(); ++row)
    for (double sign : {1.0, -1.0}) {
      WalkEnd end;
      end.step = walk(model, objective, options, d, sign * gauge.functionals.row(row),
                      sign * gauge.offset_weight, limit, resolution, allowance, end.distances,
                      programmes);
      end.objective = true_objective(objective, end.distances);
      ends.push_back(std::move(end));
    }
  return ends;
}

}  // namespace cylzone::detail
