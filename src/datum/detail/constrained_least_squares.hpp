#pragma once
// Private: linear least squares with linear inequality constraints (LSI) for a handful of
// unknowns and many rows,
//     minimise 1/2 |A x - b|^2   subject to   C x <= d,
// by the primal active-set method for strictly convex quadratic programmes (Nocedal & Wright,
// Numerical Optimization, 2nd ed., 2006, Algorithm 16.3). The objective is first reduced to
// triangular form by a Householder QR of [A b] (Lawson & Hanson, Solving Least Squares
// Problems, 1974, ch. 23: 1/2 |A x - b|^2 = 1/2 (|R x - f|^2 + rho^2)), so each iteration costs
// O(n^3) for the subproblem plus O(m n) for the ratio test over the m constraints. Used for the
// tangent (material-side) datum planes and lines; not a general QP package.
//
// Deterministic: no randomness, ties are broken by the lowest constraint index.

#include <Eigen/Core>
#include <vector>

namespace cylzone::detail {

/// 1/2 |A x - b|^2 held as R (n x n upper triangular), f = (Q^T b)_(0..n-1) and rho^2, the
/// part of |b|^2 no x can reach. Throws FitError when A has fewer rows than columns or its
/// columns are numerically dependent (reciprocal condition of R below 1e-13): the unknowns are
/// not determined by the data.
class LeastSquaresObjective {
 public:
  LeastSquaresObjective(const Eigen::MatrixXd& design, const Eigen::VectorXd& observations);

  Eigen::Index unknowns() const noexcept { return r_.cols(); }
  /// 1/2 |A x - b|^2, evaluated as 1/2 (|R x - f|^2 + rho^2).
  double value(const Eigen::VectorXd& x) const;
  /// A^T (A x - b) = R^T (R x - f).
  Eigen::VectorXd gradient(const Eigen::VectorXd& x) const;
  const Eigen::MatrixXd& triangular() const noexcept { return r_; }
  const Eigen::VectorXd& reduced_observations() const noexcept { return f_; }

 private:
  Eigen::MatrixXd r_;
  Eigen::VectorXd f_;
  double rho2_ = 0.0;
};

struct ConstrainedLeastSquaresOptions {
  /// Iterations (steps and working-set changes) before giving up with FitError.
  int max_iterations = 1000;
  /// A constraint is satisfied when c_i x <= d_i + feasibility_tolerance |c_i|: the rounding
  /// level of the data (a distance when the rows are distances). With it the ratio test is the
  /// two-pass test of Harris (1973), which keeps the method from stalling on the many
  /// numerically coincident constraints of exact data; 0 demands exact feasibility.
  double feasibility_tolerance = 0.0;
};

struct ConstrainedLeastSquaresSolution {
  Eigen::VectorXd x;
  /// One per row of C: >= 0 (to rounding) on the working set, exactly 0 elsewhere, with the
  /// stationarity condition A^T (A x - b) + C^T multipliers = 0 (Nocedal & Wright, (16.37)).
  Eigen::VectorXd multipliers;
  /// Rows of C held as equalities at x: linearly independent, at most n of them.
  std::vector<Eigen::Index> working_set;
  int iterations = 0;      ///< steps and working-set changes (Algorithm 16.3 iterations)
  double objective = 0.0;  ///< 1/2 |A x - b|^2 at x
};

/// Solves the LSI problem from `feasible_start` (which must satisfy every constraint within the
/// feasibility tolerance; the callers have an obvious one, e.g. a plane moved beyond every
/// point). Throws FitError when the start is infeasible, when C's column count differs from the
/// objective's, or when the iteration limit is reached.
ConstrainedLeastSquaresSolution solve_constrained_least_squares(
    const LeastSquaresObjective& objective, const Eigen::MatrixXd& constraints,
    const Eigen::VectorXd& bounds, const Eigen::VectorXd& feasible_start,
    const ConstrainedLeastSquaresOptions& options = {});

}  // namespace cylzone::detail
