// Least squares with linear inequality constraints by the primal active-set method (Nocedal &
// Wright, Numerical Optimization, 2nd ed., Algorithm 16.3), on the triangular form of the
// objective (Lawson & Hanson, Solving Least Squares Problems, ch. 23).
//
// Each iteration either minimises the objective on the affine subspace where the working-set
// constraints hold as equalities (null-space method: p = Z y with Z an orthonormal basis of the
// null space of C_W, y the least-squares solution of (R Z) y = f - R x), or, at that minimum,
// tests the Lagrange multipliers and drops the constraint with the most negative one. A step
// that would cross a constraint outside the working set is shortened to it and the constraint
// joins the set. The objective is strictly convex (R non-singular), so the method terminates
// at the unique minimiser in exact arithmetic (Nocedal & Wright, Theorem 16.5 and the
// discussion after it); the iteration limit guards against cycling under rounding.
#include "datum/detail/constrained_least_squares.hpp"

#include <Eigen/Householder>
#include <Eigen/QR>
#include <Eigen/SVD>
#include <algorithm>
#include <cmath>
#include <cstddef>
#include <limits>
#include <string>

#include "cylzone/core/errors.hpp"

namespace cylzone::detail {
namespace {

constexpr double eps = std::numeric_limits<double>::epsilon();

// Relative size below which a subspace step is rounding noise: the step is recomputed from
// quantities of size |R| |x| + |f|, each carrying a relative error of a few eps.
constexpr double negligible_step = 1e-14;
// c_i . p must exceed this fraction of |c_i| |p| for constraint i to block a step: a constraint
// almost parallel to the step cannot be told from one that is parallel, and taking it into the
// working set would make the set numerically dependent.
constexpr double pivot_tolerance = 1e-11;
// A multiplier counts as negative only below this fraction of the gradient's natural size
// |R| |R x - f| (the gradient's magnitude before cancellation at the optimum).
constexpr double multiplier_tolerance = 1e-11;

Eigen::MatrixXd working_rows(const Eigen::MatrixXd& constraints,
                             const std::vector<Eigen::Index>& working_set) {
  Eigen::MatrixXd rows(static_cast<Eigen::Index>(working_set.size()), constraints.cols());
  for (std::size_t k = 0; k < working_set.size(); ++k)
    rows.row(static_cast<Eigen::Index>(k)) = constraints.row(working_set[k]);
  return rows;
}

// Minimiser of 1/2 |R (x + p) - f|^2 over p with C_W p = 0 (Nocedal & Wright, (16.39)).
Eigen::VectorXd subspace_step(const LeastSquaresObjective& objective,
                              const Eigen::MatrixXd& constraints,
                              const std::vector<Eigen::Index>& working_set,
                              const Eigen::VectorXd& x) {
  const Eigen::MatrixXd& r = objective.triangular();
  const Eigen::VectorXd rhs = objective.reduced_observations() - r * x;
  const Eigen::Index n = objective.unknowns();
  const auto k = static_cast<Eigen::Index>(working_set.size());
  if (k == 0) return r.triangularView<Eigen::Upper>().solve(rhs);
  // Z: the last n - k columns of the orthogonal factor of C_W^T.
  const Eigen::HouseholderQR<Eigen::MatrixXd> qr(working_rows(constraints, working_set).transpose());
  const Eigen::MatrixXd q = qr.householderQ() * Eigen::MatrixXd::Identity(n, n);
  const Eigen::MatrixXd z = q.rightCols(n - k);
  const Eigen::VectorXd y = (r * z).householderQr().solve(rhs);
  return z * y;
}

}  // namespace

LeastSquaresObjective::LeastSquaresObjective(const Eigen::MatrixXd& design,
                                             const Eigen::VectorXd& observations) {
  const Eigen::Index m = design.rows(), n = design.cols();
  if (observations.size() != m)
    throw FitError("least-squares problem: " + std::to_string(m) + " rows but " +
                   std::to_string(observations.size()) + " observations");
  if (n == 0 || m < n)
    throw FitError("least-squares problem has " + std::to_string(m) + " rows for " +
                   std::to_string(n) + " unknowns");
  // Sequential Householder QR of [A b] by blocks of rows (Bjorck, Numerical Methods for Least
  // Squares Problems, 1996, 2.4.5): the triangle of the rows so far is stacked on the next
  // block and factorised again. Same backward stability as one factorisation, but each step
  // works in cache, which matters for a million rows of a few columns.
  constexpr Eigen::Index block_rows = 1024;
  Eigen::MatrixXd triangle(0, n + 1);
  Eigen::MatrixXd stack;
  for (Eigen::Index first = 0; first < m; first += block_rows) {
    const Eigen::Index count = std::min(block_rows, m - first);
    stack.resize(triangle.rows() + count, n + 1);
    stack.topRows(triangle.rows()) = triangle;
    stack.bottomLeftCorner(count, n) = design.middleRows(first, count);
    stack.bottomRightCorner(count, 1) = observations.segment(first, count);
    const Eigen::HouseholderQR<Eigen::MatrixXd> qr(stack);
    const Eigen::Index kept = std::min<Eigen::Index>(stack.rows(), n + 1);
    triangle = qr.matrixQR().topRows(kept).triangularView<Eigen::Upper>();
  }
  r_ = triangle.topLeftCorner(n, n);
  f_ = triangle.col(n).head(n);
  rho2_ = triangle.rows() > n ? triangle(n, n) * triangle(n, n) : 0.0;
  const Eigen::VectorXd singular = Eigen::JacobiSVD<Eigen::MatrixXd>(r_).singularValues();
  if (!(singular(n - 1) > 1e-13 * singular(0)))
    throw FitError("least-squares problem is rank deficient: its unknowns are not determined by "
                   "the data");
}

double LeastSquaresObjective::value(const Eigen::VectorXd& x) const {
  return 0.5 * ((r_ * x - f_).squaredNorm() + rho2_);
}

Eigen::VectorXd LeastSquaresObjective::gradient(const Eigen::VectorXd& x) const {
  return r_.transpose() * (r_ * x - f_);
}

ConstrainedLeastSquaresSolution solve_constrained_least_squares(
    const LeastSquaresObjective& objective, const Eigen::MatrixXd& constraints,
    const Eigen::VectorXd& bounds, const Eigen::VectorXd& feasible_start,
    const ConstrainedLeastSquaresOptions& options) {
  const Eigen::Index n = objective.unknowns();
  const Eigen::Index m = constraints.rows();
  if (constraints.cols() != n || bounds.size() != m || feasible_start.size() != n)
    throw FitError("constrained least squares: " + std::to_string(n) + " unknowns, but C is " +
                   std::to_string(m) + " x " + std::to_string(constraints.cols()) + ", d has " +
                   std::to_string(bounds.size()) + " and the start " +
                   std::to_string(feasible_start.size()) + " entries");

  const Eigen::MatrixXd& r = objective.triangular();
  const double r_norm = r.norm();
  const Eigen::VectorXd row_norm = constraints.rowwise().norm();
  const double tau = options.feasibility_tolerance;

  Eigen::VectorXd x = feasible_start;
  // The slacks d - C x. Eigen evaluates that expression as d copied, then C x subtracted by
  // its matrix-vector kernel with the factor -1 (its rewriting of "a - product"), in a
  // temporary because the assignment might alias; here the same two steps in the slacks' own
  // storage: the same values without a temporary per step.
  Eigen::VectorXd slack(m);
  const auto set_slack = [&]() {
    slack = bounds;
    slack.noalias() -= constraints * x;
  };
  set_slack();
  // Rounding allowance of a slack computed from d_i and c_i x (|x| taken once, not per row).
  const double start_norm = x.norm();
  const auto rounding = [&](Eigen::Index i) {
    return 16.0 * eps * (std::abs(bounds(i)) + row_norm(i) * start_norm);
  };
  for (Eigen::Index i = 0; i < m; ++i) {
    if (slack(i) < -(tau * row_norm(i) + rounding(i)))
      throw FitError("constrained least squares: the starting point violates constraint " +
                     std::to_string(i) + " by " + std::to_string(-slack(i)));
  }

  std::vector<Eigen::Index> working_set;
  std::vector<char> working(static_cast<std::size_t>(m), 0);
  bool at_subspace_minimum = false;
  ConstrainedLeastSquaresSolution solution;
  Eigen::VectorXd lambda;
  Eigen::VectorXd cp(m);  // C p of a step, in one buffer for every step

  for (int iteration = 0;; ++iteration) {
    if (iteration > options.max_iterations)
      throw FitError("constrained least squares did not converge in " +
                     std::to_string(options.max_iterations) + " working-set changes");
    Eigen::VectorXd p = Eigen::VectorXd::Zero(n);
    if (!at_subspace_minimum && static_cast<Eigen::Index>(working_set.size()) < n) {
      p = subspace_step(objective, constraints, working_set, x);
      if (!p.allFinite()) throw FitError("constrained least squares: singular subproblem");
      const double size = r_norm * x.norm() + objective.reduced_observations().norm();
      if ((r * p).norm() <= negligible_step * size) p.setZero();
    }

    if (p.isZero(0.0)) {
      // x minimises the objective on the working subspace: KKT multipliers from
      // C_W^T lambda = -g (Nocedal & Wright, (16.42)); drop the most negative one.
      const Eigen::VectorXd g = objective.gradient(x);
      if (working_set.empty()) {
        lambda.resize(0);
        solution.iterations = iteration;
        break;
      }
      lambda = working_rows(constraints, working_set).transpose().householderQr().solve(-g);
      const double threshold =
          multiplier_tolerance * r_norm * (r * x - objective.reduced_observations()).norm();
      std::size_t drop = working_set.size();
      double most_negative = -threshold;
      for (std::size_t k = 0; k < working_set.size(); ++k) {
        const double scaled = lambda(static_cast<Eigen::Index>(k)) * row_norm(working_set[k]);
        if (scaled < most_negative) {
          most_negative = scaled;
          drop = k;
        }
      }
      if (drop == working_set.size()) {
        solution.iterations = iteration;
        break;
      }
      working[static_cast<std::size_t>(working_set[drop])] = 0;
      working_set.erase(working_set.begin() + static_cast<std::ptrdiff_t>(drop));
      at_subspace_minimum = false;
      continue;
    }

    // Ratio test, two passes (Harris 1973): first the longest step that keeps every constraint
    // within its tolerance, then among the constraints reached by then the one crossed most
    // steeply, which is the best conditioned to add to the working set.
    cp.noalias() = constraints * p;
    const double p_norm = p.norm();
    double alpha_limit = 1.0;
    for (Eigen::Index i = 0; i < m; ++i) {
      if (working[static_cast<std::size_t>(i)] || !(cp(i) > pivot_tolerance * row_norm(i) * p_norm))
        continue;
      alpha_limit = std::min(alpha_limit, (slack(i) + tau * row_norm(i)) / cp(i));
    }
    Eigen::Index blocking = -1;
    if (alpha_limit < 1.0) {
      double steepest = 0.0;
      for (Eigen::Index i = 0; i < m; ++i) {
        if (working[static_cast<std::size_t>(i)] ||
            !(cp(i) > pivot_tolerance * row_norm(i) * p_norm))
          continue;
        if (slack(i) / cp(i) <= alpha_limit && cp(i) / row_norm(i) > steepest) {
          steepest = cp(i) / row_norm(i);
          blocking = i;
        }
      }
    }
    if (blocking < 0) {
      x += p;
      at_subspace_minimum = true;
    } else {
      const double alpha = std::clamp(slack(blocking) / cp(blocking), 0.0, 1.0);
      x += alpha * p;
      working_set.push_back(blocking);
      working[static_cast<std::size_t>(blocking)] = 1;
      at_subspace_minimum = false;
    }
    set_slack();
  }

  solution.x = x;
  solution.multipliers = Eigen::VectorXd::Zero(m);
  for (std::size_t k = 0; k < working_set.size(); ++k)
    solution.multipliers(working_set[k]) = lambda(static_cast<Eigen::Index>(k));
  solution.working_set = working_set;
  solution.objective = objective.value(x);
  return solution;
}

}  // namespace cylzone::detail
