#pragma once
// Private to the fit stage: whether a converged Chebyshev element is the unique optimum and,
// when that cannot be proven, how far it can move without a worse objective
// (docs/chebyshev.md, "Non-unique optima").

#include <Eigen/Core>
#include <vector>

#include "fit/detail/chebyshev.hpp"
#include "fit/detail/chebyshev_programme.hpp"

namespace cylzone::detail {

/// Elements whose objective is within this of the optimum's count as equally good:
/// ZoneOptions::ambiguity_tolerance x max(scale, largest distance).
double objective_tolerance(const ZoneOptions& options, const Eigen::VectorXd& d);

/// Displacements of the reference points below this length (1e-9 of the data's size) are not a
/// freedom of the optimum and are reported as 0.
double displacement_resolution(const ZoneOptions& options);

/// Largest displacement of a reference point of `model`'s gauge for the element displaced by
/// `step` (distances there and at the current element given).
double largest_displacement(const ZoneModel& model, const Eigen::VectorXd& step,
                            const Eigen::VectorXd& distances_at_step,
                            const Eigen::VectorXd& distances_here);

/// The contacts of the last programme at the element prove it the unique optimum: full rank
/// with positive multipliers, so that an objective within the tolerance moves no reference
/// point by more than the resolution, to first order (Mangasarian, Linear Algebra Appl. 25,
/// 1979, from memory). `d`: the distances at the element. `reach`: how far, to first order, an
/// objective `allowance` worse can move a reference point (infinite when not proven).
bool proven_unique(const ZoneModel& model, ZoneObjective objective, const ZoneOptions& options,
                   const zone_lp::ZoneProgramme& last, const Eigen::VectorXd& d, double allowance,
                   double& reach);

/// The end of one walk along the near-optimal set: a step from the element, the extreme
/// distances there and the true objective there.
struct WalkEnd {
  Eigen::VectorXd step;
  /// (lowest, highest) of every point's distances at the end: all that the true objective
  /// (true_objective) and a model's displacements (ZoneModel::displacements: a plane's
  /// mid-offset) read of them, so that they give the same bits as the whole vector would. The
  /// whole vector is not kept: the walks of an optimum of a dense scan's face (eight, and as
  /// many exploring ones) would each hold one distance per point.
  Eigen::VectorXd distances;
  double objective = 0.0;
};

/// The walks that push each displacement component of the gauge both ways while the true
/// objective stays within the tolerance of the element's (docs/chebyshev.md, "Non-unique
/// optima"), two per component. An end may have a better objective than the element: the
/// element was then a stationary point, not an optimum (the engine descends again from there).
/// With `allowance` > 0 (a length) the walks explore instead: the objective may be up to that
/// much worse, so that they cross the low ridges between distinct local optima; their ends are
/// starts of further descents, not members of the near-optimal set.
/// Throws FitError when a linear programme fails; counts the programmes in `programmes`.
std::vector<WalkEnd> walk_ends(const ZoneModel& model, ZoneObjective objective,
                               const ZoneOptions& options, const Eigen::VectorXd& d,
                               double allowance, int& programmes);

/// The tie-break among equally good elements (docs/chebyshev.md, "Non-unique optima", 5): moves
/// `model` from its element (whose true objective is within `limit`) to the element that
/// minimises the sum of squared residuals, sum (d_i - rho)^2 over every point with rho free
/// (`free_offset`: the mean distance, a radius or a plane's offset) or 0 (a line's distances),
/// among the elements whose true objective is at most `limit`: a lexicographic (pre-emptive)
/// second stage, the objective first, then a strictly convex secondary objective over its
/// optimal set (e.g. Nocedal & Wright, Numerical Optimization, 2nd ed., 2006, on multiobjective
/// and goal programming by priority levels; from memory for the section). Gauss-Newton steps,
/// each the solution of a strictly convex quadratic programme with the linearised objective
/// bound and a trust box (Goldfarb & Idnani 1983), verified on the true objective. The
/// minimiser is unique and defined by the points alone, so it depends neither on the start nor
/// on a rigid motion of the points. Returns false (the model may have moved to another element
/// within the limit) when a programme fails or the iteration does not settle; `d` is then
/// undefined. On success `d` holds the distances at the new element.
bool settle_in_optimal_set(ZoneModel& model, ZoneObjective objective, const ZoneOptions& options,
                           bool free_offset, double limit, Eigen::VectorXd& d);

}  // namespace cylzone::detail
