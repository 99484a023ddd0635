// Uniqueness of a converged Chebyshev element and the walks that measure its ambiguity
// (fit/detail/chebyshev_uniqueness.hpp).
#include "fit/detail/chebyshev_uniqueness.hpp"

#include <Eigen/Cholesky>
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
  Eigen::VectorXd at_end;  // every point's distances at a walk's end
  for (Eigen::Index row = 0; row < gauge.functionals.rows(); ++row)
    for (double sign : {1.0, -1.0}) {
      WalkEnd end;
      end.step = walk(model, objective, options, d, sign * gauge.functionals.row(row),
                      sign * gauge.offset_weight, limit, resolution, allowance, at_end,
                      programmes);
      end.objective = true_objective(objective, at_end);
      end.distances = Eigen::Vector2d(at_end.minCoeff(), at_end.maxCoeff());
      ends.push_back(std::move(end));
    }
  return ends;
}

}  // namespace cylzone::detail

// ------------------------------------------------------------------ tie-break in the optimal set

namespace cylzone::detail {

namespace {

/// min 1/2 z'Hz + h'z subject to N.col(k)'z >= b(k) for every k, H positive definite: the dual
/// active-set method of Goldfarb & Idnani (Math. Programming 27, 1983). It starts from the
/// unconstrained minimiser and adds the most violated constraint at a time, keeping the
/// multipliers of the active ones non-negative, so it needs no feasible start and stops at the
/// optimum, which is unique (strictly convex objective). With a handful of unknowns the
/// projections are recomputed from scratch at every step rather than updated. A violated row
/// that the active ones span with no multiplier to give way (inconsistent, in exact arithmetic)
/// is set aside: the callers' rows are consistent by construction (the current element keeps
/// them), so that can only be rounding among tied rows, and the callers verify the result on
/// the true objective. Returns false when the iteration does not settle.
bool dual_active_set_qp(const Eigen::MatrixXd& hessian, const Eigen::VectorXd& h,
                        const Eigen::MatrixXd& normals, const Eigen::VectorXd& bounds,
                        double feasibility, Eigen::VectorXd& z) {
  const Eigen::LLT<Eigen::MatrixXd> llt(hessian);
  if (llt.info() != Eigen::Success) return false;
  const Eigen::Index q = hessian.rows();
  const Eigen::MatrixXd inverse = llt.solve(Eigen::MatrixXd::Identity(q, q));
  z = -inverse * h;
  std::vector<Eigen::Index> active;
  std::vector<double> u;
  std::vector<bool> set_aside(static_cast<std::size_t>(normals.cols()), false);
  const int most_steps = 50 * static_cast<int>(q) + 200;
  for (int steps = 0; steps < most_steps;) {
    Eigen::VectorXd slack = normals.transpose() * z - bounds;
    for (Eigen::Index k = 0; k < slack.size(); ++k)
      if (set_aside[static_cast<std::size_t>(k)]) slack(k) = 0.0;
    Eigen::Index worst = 0;
    if (slack.size() == 0 || slack.minCoeff(&worst) >= -feasibility) return true;
    double u_new = 0.0;
    for (; steps < most_steps; ++steps) {
      const Eigen::VectorXd n = normals.col(worst);
      const auto k = static_cast<Eigen::Index>(active.size());
      Eigen::VectorXd r(k), dz;
      if (k == 0) {
        dz = inverse * n;
      } else {
        Eigen::MatrixXd a(q, k);
        for (Eigen::Index j = 0; j < k; ++j)
          a.col(j) = normals.col(active[static_cast<std::size_t>(j)]);
        const Eigen::MatrixXd ha = inverse * a;
        r = (a.transpose() * ha).ldlt().solve(ha.transpose() * n);
        dz = inverse * n - ha * r;
      }
      // Partial step: the active constraint whose multiplier reaches 0 first leaves.
      double t2 = std::numeric_limits<double>::infinity();
      Eigen::Index leaving = -1;
      for (Eigen::Index j = 0; j < k; ++j)
        if (r(j) > 0.0 && u[static_cast<std::size_t>(j)] / r(j) < t2) {
          t2 = u[static_cast<std::size_t>(j)] / r(j);
          leaving = j;
        }
      // n.dz is the squared (inverse-Hessian) norm of the part of n that the active normals do
      // not span: relative to n's own, it tells a dependent row.
      const double curvature = n.dot(dz);
      const bool dependent = !(curvature > 1e-12 * n.dot(inverse * n));
      if (dependent && leaving < 0) {  // inconsistent: rounding among tied rows
        set_aside[static_cast<std::size_t>(worst)] = true;
        ++steps;
        break;
      }
      const double t1 = dependent ? std::numeric_limits<double>::infinity()
                                  : -(n.dot(z) - bounds(worst)) / curvature;
      const double t = std::min(t1, t2);
      if (!dependent) z += t * dz;
      for (Eigen::Index j = 0; j < k; ++j) u[static_cast<std::size_t>(j)] -= t * r(j);
      u_new += t;
      if (t1 <= t2) {
        active.push_back(worst);
        u.push_back(u_new);
        ++steps;
        break;
      }
      active.erase(active.begin() + leaving);
      u.erase(u.begin() + leaving);
    }
  }
  return false;
}

}  // namespace

bool settle_in_optimal_set(ZoneModel& model, ZoneObjective objective, const ZoneOptions& options,
                           bool free_offset, double limit, Eigen::VectorXd& d) {
  const double scale = options.scale > 0.0 ? options.scale : 1.0;
  const int p = model.parameter_count();
  const Eigen::Index n = model.point_count();
  // Unknowns: the step x, the residuals' offset rho (free_offset) and, for a minimum zone, the
  // zone's mid-distance m, so that the width bound reads |d_i + g_i x - m| <= limit / 2.
  const bool zone = objective == ZoneObjective::minimum_zone;
  const int mid_col = zone ? p + (free_offset ? 1 : 0) : -1;
  const int q = p + (free_offset ? 1 : 0) + (zone ? 1 : 0);
  const double tolerance = objective_tolerance(options, d);
  // The true objective may exceed the limit by this much at an accepted step (the second-order
  // part of a step that the linearised bound keeps within the limit); the next linearisation,
  // exact at the new element, brings it back.
  const double accept = limit + tolerance;
  const double settled = 1e-11 * scale;
  // Linearised rows violated by less than this count as kept: dependent rows (exact ties of a
  // symmetric part) differ in their bounds by rounding.
  const double feasibility = 0.1 * tolerance;
  double box = std::max(options.ambiguity_box * scale, 1e-4 * scale);
  const double largest_box = options.ambiguity_box_limit * scale;
  Eigen::VectorXd trial, z;
  Eigen::MatrixXd g;
  if (!(true_objective(objective, d) <= accept)) return false;
  for (int iteration = 0; iteration < 60; ++iteration) {
    model.evaluate(Eigen::VectorXd::Zero(p), d, &g);
    // The secondary objective, sum (d_i + g_i x - rho)^2, linearised (Gauss-Newton).
    Eigen::MatrixXd hessian = Eigen::MatrixXd::Zero(q, q);
    Eigen::VectorXd h = Eigen::VectorXd::Zero(q);
    {
      Eigen::MatrixXd a(n, p + (free_offset ? 1 : 0));
      a.leftCols(p) = g;
      if (free_offset) a.col(p).setConstant(-1.0);
      hessian.topLeftCorner(a.cols(), a.cols()) = a.transpose() * a;
      h.head(a.cols()) = a.transpose() * d;
    }
    if (zone) {
      // The mid-distance needs a weight of its own (it is not in the secondary objective): a
      // pull toward the current mid, of the objective's own scale so that the programme stays
      // well conditioned. It vanishes where the iteration settles (a zero step keeps the mid),
      // so the settled element satisfies the optimality conditions without it, whatever its
      // weight.
      const double weight = std::max(1.0, hessian.diagonal().head(p).mean());
      hessian(mid_col, mid_col) = weight;
      h(mid_col) = -weight * 0.5 * (d.maxCoeff() + d.minCoeff());
    }
    // Only points that could bind within the box (a step moves every distance by at most
    // reach_factor / 2 x |x|_inf) enter.
    const double band = reach_factor * box + (accept - true_objective(objective, d));
    const double top = d.maxCoeff(), bottom = d.minCoeff();
    std::vector<std::pair<Eigen::Index, Side>> rows;
    for (Eigen::Index i = 0; i < n; ++i) {
      if (uses_upper(objective) && top - d(i) <= band) rows.emplace_back(i, Side::upper);
      if (uses_lower(objective) && d(i) - bottom <= band) rows.emplace_back(i, Side::lower);
    }
    const auto m = static_cast<Eigen::Index>(rows.size());
    Eigen::MatrixXd normals = Eigen::MatrixXd::Zero(q, m + 2 * p);
    Eigen::VectorXd bounds(normals.cols());
    for (Eigen::Index k = 0; k < m; ++k) {
      const auto [i, side] = rows[static_cast<std::size_t>(k)];
      // Upper: d_i + g_i x <= bound; lower: d_i + g_i x >= bound, with the bound the limit
      // (circumscribed), minus the limit (inscribed: -min d <= limit) or m +- limit / 2 (zone).
      const double sign = side == Side::upper ? -1.0 : 1.0;
      normals.col(k).head(p) = sign * g.row(i).transpose();
      double bound = side == Side::upper ? limit : -limit;
      if (zone) {
        normals(mid_col, k) = -sign;
        bound = side == Side::upper ? 0.5 * limit : -0.5 * limit;
      }
      bounds(k) = sign * (bound - d(i));
    }
    for (int k = 0; k < p; ++k) {  // the box |x_k| <= box
      normals(k, m + 2 * k) = 1.0;
      bounds(m + 2 * k) = -box;
      normals(k, m + 2 * k + 1) = -1.0;
      bounds(m + 2 * k + 1) = -box;
    }
    if (!dual_active_set_qp(hessian, h, normals, bounds, feasibility, z)) return false;
    const Eigen::VectorXd x = z.head(p);
    const double length = x.lpNorm<Eigen::Infinity>();
    if (length <= settled) return true;
    model.evaluate(x, trial, nullptr);
    if (!(true_objective(objective, trial) <= accept)) {
      box = 0.25 * length;  // the linearisation does not hold that far: a smaller box
      if (box <= settled) return true;
      continue;
    }
    model.move(x);
    if (length >= 0.99 * box) box = std::min(2.0 * box, largest_box);
  }
  model.evaluate(Eigen::VectorXd::Zero(p), d, nullptr);
  return false;
}

}  // namespace cylzone::detail
