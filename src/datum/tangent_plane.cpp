// Tangent (material-side) datum planes, and the tangent line used for a datum plane held
// perpendicular to another (detail/tangent_line.hpp).
//
// Constrained least-squares tangent plane (Shakarji & Srinivasan, J. Comput. Inf. Sci. Eng.
// 15(4), 2015): minimise the sum of squared orthogonal distances subject to every point lying
// on the material side. In a local frame at the current plane (origin at the centroid, last
// axis along the outward normal, tangential coordinates t) the plane z = h + s.t gives
// vertical distances z_i - h - s.t_i, linear in (h, s); the constrained problem in (h, s) is
// then a linear least-squares problem with linear inequality constraints (h + s.t_i >= z_i),
// solved exactly by detail/constrained_least_squares. The plane is re-rotated to the solution
// and the step repeated until the tilt |s| falls below the tolerance.
//
// Why the fixed point is the orthogonal-distance optimum: the orthogonal distance to the plane
// (h, s) is (z_i - h - s.t_i) / sqrt(1 + |s|^2). At s = 0 the factor 1 / sqrt(1 + |s|^2) equals
// 1 and has zero gradient, so the orthogonal distances and their gradients with respect to
// (h, s) equal the vertical ones. Objective and constraint gradients are therefore the same
// for both formulations at s = 0, and so are their KKT conditions (Nocedal & Wright, Theorem
// 12.1). When the vertical problem posed in the frame of the current plane returns s = 0, the
// current plane satisfies the KKT conditions of the orthogonal problem. The iteration
// contracts like the re-linearised least-squares plane: by a factor of the order of
// (deviation / extent)^2 per step, so a few steps reach rounding.
//
// Constraint screening: only points near the current plane can become active. The problem is
// solved with the constraints of a candidate subset (every point for small sets), then checked
// against all points; violators join the subset and it is solved again. The result satisfies
// every constraint and the KKT conditions of the subset, with zero multipliers for the rest:
// it is the solution of the full problem. The objective always uses every point.
//
// Minimax tangent plane (ISO 5459:2011): minimise the largest distance subject to the
// material-side constraint. Its orientation is that of the minimum-zone (flatness) planes, and
// it is the outer of the two (the largest distance from the outer plane is the zone width,
// and no tilt can lower the width).
#include "cylzone/datum/tangent_plane.hpp"

#include <Eigen/Eigenvalues>
#include <algorithm>
#include <cmath>
#include <cstddef>
#include <limits>
#include <numeric>
#include <stdexcept>
#include <string>
#include <vector>

#include "cylzone/core/errors.hpp"
#include "datum/detail/constrained_least_squares.hpp"
#include "detail/fit_support.hpp"
#include "detail/local_blocks.hpp"
#include "datum/detail/tangent_line.hpp"

namespace cylzone {
namespace {

template <int D>
using Vector = Eigen::Matrix<double, D, 1>;
template <int D>
using Points = Eigen::Matrix<double, D, Eigen::Dynamic>;

// Below this count every point's constraint enters the first solve; above it, the points
// highest above the plane (plus the previous contacts) form the first candidate subset.
constexpr Eigen::Index full_constraint_limit = 1000;
constexpr Eigen::Index screened_candidates = 256;
// The slack allowed to a constraint: the rounding level of the local coordinates (about
// eps times the data's size), with a margin.
constexpr double feasibility_fraction = 1e-14;
// A tilt this small that no longer decreases is at the rounding floor of the data.
constexpr double rounding_floor_tilt = 1e-10;
// The material-side direction must make a clear angle with the plane: |cos| to the normal at
// least this (about 78.5 degrees at most from the normal).
constexpr double least_material_cosine = 0.2;
constexpr double degrees_per_radian = 180.0 / 3.14159265358979323846;

// Right-handed orthonormal basis whose last column is `normal`.
Eigen::Matrix3d frame_at(const Vector<3>& normal) { return detail::basis_from_direction(normal); }
Eigen::Matrix2d frame_at(const Vector<2>& normal) {
  Eigen::Matrix2d basis;
  basis << normal.y(), normal.x(), -normal.x(), normal.y();
  return basis;
}

template <int D>
struct TangentSolution {
  Vector<D> point = Vector<D>::Zero();
  Vector<D> normal = Vector<D>::Zero();
  Eigen::VectorXd residuals;
  FitStatus status = FitStatus::converged;
  int iterations = 0;
  std::size_t contacts = 0;
};

// `outward` is the starting normal (the least-squares one, oriented out of the material).
template <int D>
TangentSolution<D> tangent_least_squares(const Points<D>& points, Vector<D> outward,
                                         const FitOptions& options) {
  constexpr int unknowns = D;  // offset h and D - 1 slopes
  const Eigen::Index n = points.cols();
  const Vector<D> centroid = points.rowwise().mean();
  const double scale = (points.colwise() - centroid).colwise().norm().maxCoeff();
  detail::ConstrainedLeastSquaresOptions lsi;
  lsi.feasibility_tolerance = feasibility_fraction * scale;

  TangentSolution<D> solution;
  Vector<D> on_plane = centroid;
  std::vector<char> previous_contact(static_cast<std::size_t>(n), 0);
  double previous_tilt = std::numeric_limits<double>::infinity();
  // The per-point arrays of a step are allocated once and overwritten by every step: on a
  // dense face each step's fresh arrays cost more in the system's zeroing of new pages than in
  // the arithmetic that fills them. The local coordinates are taken a block at a time
  // (detail/local_blocks.hpp: each column the same products as the whole-cloud expression), so
  // no D x n copy is held. Every value is computed by the same expression as before.
  Points<D> local;
  Eigen::VectorXd heights(n);
  Eigen::MatrixXd design(n, unknowns);
  design.col(0).setOnes();
  Eigen::VectorXd row_norm(n);
  Eigen::VectorXd clearance(n);
  std::vector<char> candidate(static_cast<std::size_t>(n));
  std::vector<Eigen::Index> order(static_cast<std::size_t>(n > full_constraint_limit ? n : 0));
  // A solve's candidate rows and their constraints, kept across the solves of the fit (the
  // same entries as fresh ones each time; resized only when the count changes).
  std::vector<Eigen::Index> rows;
  rows.reserve(static_cast<std::size_t>(n));
  Eigen::MatrixXd constraints;
  Eigen::VectorXd bounds;
  // Height of the plane x above each point (>= 0 when feasible): design x - heights, the
  // product evaluated as Eigen evaluates it inside that expression.
  const auto clearance_of = [&](const Eigen::VectorXd& x) {
    clearance.noalias() = design * x;
    clearance -= heights;
  };
  for (int iteration = 1;; ++iteration) {
    const Eigen::Matrix<double, D, D> basis = frame_at(outward);
    detail::for_each_local_block<D>(
        points, centroid, basis, local, [&](Eigen::Index start, const auto& block) {
          const Eigen::Index len = block.cols();
          heights.segment(start, len) = block.row(D - 1).transpose();
          // Slopes are scaled by the data's size so that every unknown is a length.
          for (int k = 0; k + 1 < D; ++k)
            design.col(k + 1).segment(start, len) = block.row(k).transpose() / scale;
        });
    const detail::LeastSquaresObjective objective(design, heights);

    if (n <= full_constraint_limit) {
      std::fill(candidate.begin(), candidate.end(), char(1));
    } else {
      std::fill(candidate.begin(), candidate.end(), char(0));
      std::iota(order.begin(), order.end(), Eigen::Index(0));
      std::nth_element(order.begin(), order.begin() + screened_candidates, order.end(),
                       [&](Eigen::Index a, Eigen::Index b) {
                         return heights(a) > heights(b) || (heights(a) == heights(b) && a < b);
                       });
      for (Eigen::Index k = 0; k < screened_candidates; ++k)
        candidate[static_cast<std::size_t>(order[static_cast<std::size_t>(k)])] = 1;
      for (std::size_t i = 0; i < candidate.size(); ++i)
        if (previous_contact[i]) candidate[i] = 1;
    }

    // Start: the current plane moved out to the highest point, feasible for every point.
    Eigen::VectorXd x = Eigen::VectorXd::Zero(unknowns);
    x(0) = heights.maxCoeff();
    row_norm = design.rowwise().norm();
    for (;;) {
      rows.clear();
      for (Eigen::Index i = 0; i < n; ++i)
        if (candidate[static_cast<std::size_t>(i)]) rows.push_back(i);
      const auto m = static_cast<Eigen::Index>(rows.size());
      constraints.resize(m, unknowns);
      bounds.resize(m);
      for (Eigen::Index k = 0; k < m; ++k) {
        constraints.row(k) = -design.row(rows[static_cast<std::size_t>(k)]);
        bounds(k) = -heights(rows[static_cast<std::size_t>(k)]);
      }
      x = detail::solve_constrained_least_squares(objective, constraints, bounds, x, lsi).x;
      // Height of the plane above each point: must be >= 0 within the tolerance.
      clearance_of(x);
      bool violated = false;
      for (Eigen::Index i = 0; i < n; ++i) {
        if (clearance(i) < -lsi.feasibility_tolerance * row_norm(i)) {
          candidate[static_cast<std::size_t>(i)] = 1;
          violated = true;
        }
      }
      if (!violated) break;
      x(0) -= std::min(0.0, clearance.minCoeff());  // feasible again for every point
    }

    const Eigen::Matrix<double, D - 1, 1> slope = x.tail(D - 1) / scale;
    Vector<D> local_normal;
    local_normal << -slope, 1.0;
    on_plane = centroid + x(0) * basis.col(D - 1);
    outward = (basis * local_normal).normalized();
    clearance_of(x);
    for (Eigen::Index i = 0; i < n; ++i)
      previous_contact[static_cast<std::size_t>(i)] =
          clearance(i) <= lsi.feasibility_tolerance * row_norm(i) ? 1 : 0;

    solution.iterations = iteration;
    const double tilt = slope.norm();
    if (tilt <= options.step_tolerance ||
        (tilt <= rounding_floor_tilt && tilt >= previous_tilt))
      break;
    if (iteration >= options.max_iterations) {
      solution.status = FitStatus::iteration_limit;
      break;
    }
    previous_tilt = tilt;
  }

  // Residuals along the final normal; the last tilt step moves the contacts off the plane by
  // at most the tilt times the data's size, and rounding by less, so the plane is moved out to
  // the outermost point: every residual is then <= 0 exactly and the largest is 0.
  Eigen::VectorXd residuals = (points.colwise() - on_plane).transpose() * outward;
  const double outermost = residuals.maxCoeff();
  on_plane += outermost * outward;
  residuals.array() -= outermost;
  solution.normal = outward;
  solution.point = centroid - (centroid - on_plane).dot(outward) * outward;
  solution.residuals = std::move(residuals);
  solution.contacts = static_cast<std::size_t>(
      (solution.residuals.array() >= -lsi.feasibility_tolerance).count());
  return solution;
}

// The least-squares normal turned to point out of the material.
template <int D>
Vector<D> oriented_outward(const Vector<D>& normal, const Vector<D>& material_side,
                           const char* element) {
  const double length = material_side.norm();
  if (!(length > 0.0) || !std::isfinite(length))
    throw FitError(std::string("the material side of the ") + element +
                   " must be a finite, non-zero vector");
  const double cosine = normal.dot(material_side) / length;
  if (std::abs(cosine) < least_material_cosine)
    throw FitError(std::string("the material side direction lies almost in the ") + element +
                   " (" + detail::format_number(std::acos(std::abs(cosine)) * degrees_per_radian, 1) +
                   " degrees from its normal); it must point into the material");
  return cosine > 0.0 ? Vector<D>(-normal) : normal;
}

std::string contact_text(std::size_t contacts) {
  return std::to_string(contacts) + (contacts == 1 ? " contact point" : " contact points");
}

}  // namespace

PlaneFit fit_plane_tangent_least_squares(const Eigen::Matrix3Xd& points,
                                         const Eigen::Vector3d& material_side,
                                         const FitOptions& options) {
  // The least-squares plane checks the points (count, collinearity) and is the start.
  return fit_plane_tangent_least_squares(points, material_side,
                                         fit_plane_least_squares(points, options), options);
}

PlaneFit fit_plane_tangent_least_squares(const Eigen::Matrix3Xd& points,
                                         const Eigen::Vector3d& material_side,
                                         const PlaneFit& least_squares,
                                         const FitOptions& options) {
  if (least_squares.summary.point_count != static_cast<std::size_t>(points.cols()))
    throw std::invalid_argument(
        "fit_plane_tangent_least_squares: the least-squares start is of " +
        std::to_string(least_squares.summary.point_count) + " points, not " +
        std::to_string(points.cols()));
  const TangentSolution<3> tangent = tangent_least_squares<3>(
      points, oriented_outward<3>(least_squares.normal, material_side, "plane"), options);
  PlaneFit fit;
  fit.point = tangent.point;
  fit.normal = tangent.normal;
  fit.residuals = detail::make_residuals(tangent.residuals);
  fit.summary.method = FitMethod::least_squares;
  fit.summary.status = tangent.status;
  fit.summary.iterations = tangent.iterations;
  fit.summary.point_count = static_cast<std::size_t>(points.cols());
  fit.summary.message = "tangent least-squares plane: " +
                        detail::iteration_message(tangent.status, tangent.iterations, options) +
                        ", " + contact_text(tangent.contacts);
  return fit;
}

PlaneFit fit_plane_tangent_minimax(const Eigen::Matrix3Xd& points,
                                   const Eigen::Vector3d& material_side,
                                   const FitOptions& options) {
  return tangent_minimax_from_zone(points, fit_plane_minimum_zone(points, options), material_side);
}

PlaneFit tangent_minimax_from_zone(const Eigen::Matrix3Xd& points, const PlaneFit& zone,
                                   const Eigen::Vector3d& material_side) {
  const Eigen::Vector3d outward = oriented_outward<3>(zone.normal, material_side, "plane");
  const Eigen::VectorXd distances = (points.colwise() - zone.point).transpose() * outward;
  const double outermost = distances.maxCoeff();
  PlaneFit fit;
  // zone.point is the centroid projected onto the mid-plane; moving it along the normal keeps
  // it the centroid's projection.
  fit.point = zone.point + outermost * outward;
  fit.normal = outward;
  fit.residuals = detail::make_residuals((distances.array() - outermost).matrix());
  fit.summary = zone.summary;
  fit.summary.message = "tangent minimax plane (outer minimum-zone plane): " + zone.summary.message;
  return fit;
}

namespace detail {

TangentLine2d fit_line_2d_tangent_least_squares(const Eigen::Matrix2Xd& points,
                                                const Eigen::Vector2d& material_side,
                                                const FitOptions& options) {
  require_point_count(static_cast<std::size_t>(points.cols()), 2, "line");
  const Eigen::Vector2d centroid = points.rowwise().mean();
  const Eigen::Matrix2Xd centred = points.colwise() - centroid;
  const double spread = centred.colwise().norm().maxCoeff();
  const double magnitude = std::max(1.0, centroid.cwiseAbs().maxCoeff());
  if (!(spread > 1e-12 * magnitude))
    throw FitError("all " + std::to_string(points.cols()) +
                   " points coincide in the plane; a line needs distinct points");
  // Least-squares line: its normal is the eigenvector of the smaller eigenvalue of the scatter.
  const Eigen::SelfAdjointEigenSolver<Eigen::Matrix2d> eigen(centred * centred.transpose());
  const Eigen::Vector2d start = eigen.eigenvectors().col(0);
  const TangentSolution<2> tangent =
      tangent_least_squares<2>(points, oriented_outward<2>(start, material_side, "line"), options);
  TangentLine2d line;
  line.point = tangent.point;
  line.normal = tangent.normal;
  line.residuals = tangent.residuals;
  line.status = tangent.status;
  line.iterations = tangent.iterations;
  line.contacts = tangent.contacts;
  return line;
}

}  // namespace detail
}  // namespace cylzone
