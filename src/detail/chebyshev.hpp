#pragma once
// Private: Chebyshev (minimum-zone) and mating-envelope association by sequential linear
// programming. Not installed.
//
// One engine serves every element. An element contributes only a ZoneModel: the orthogonal
// distances of the points to its current position and their gradients with respect to a local
// parametrisation (location and orientation only; the size is absorbed by the zone bounds r, R
// of the linear programme). The engine linearises d_i(x) ~ d_i + g_i.x about the current
// element, solves
//   minimum zone            min R - r  s.t.  r <= d_i + g_i.x <= R
//   maximum inscribed       max r      s.t.  d_i + g_i.x >= r
//   minimum circumscribed   min R      s.t.  d_i + g_i.x <= R
// inside a box trust region |x_k| <= Delta with COIN-OR Clp, accepts or rejects the step on
// the true (nonlinear) objective, adapts Delta and re-linearises at the new element. Because
// the linearisation is exact to first order at x = 0, a point where the linear programme
// predicts no improvement is a first-order Chebyshev optimum of the orthogonal distances
// (Anthony et al., Precision Engineering 19(1), 1996; Shakarji & Clement,
// CIRP Annals 53(1), 2004; from memory). Large point sets are handled by constraint
// generation on a working set; it returns the optimum of the full linear programme. The
// final contacts are refined by Newton's method on the optimality (KKT) conditions, which
// places the element exactly where the objective alone cannot (fewer contacts than unknowns).
// docs/chebyshev.md describes the method.

#include <Eigen/Core>
#include <cstddef>
#include <limits>
#include <memory>
#include <string>
#include <vector>

#include "cylzone/fit_types.hpp"

namespace cylzone::detail {

/// Which association the linear programme solves; maps one-to-one onto the Chebyshev-type
/// FitMethods.
enum class ZoneObjective { minimum_zone, maximum_inscribed, minimum_circumscribed };

/// The ZoneObjective of a Chebyshev-type method. Throws std::invalid_argument for least squares.
ZoneObjective zone_objective(FitMethod method);

/// The element-specific half of a Chebyshev fit: the current element and a local
/// parametrisation about it. Parameters are in length units (tilts are scaled by the data's
/// size), so one box trust region suits all of them.
class ZoneModel {
 public:
  virtual ~ZoneModel() = default;
  virtual Eigen::Index point_count() const = 0;
  /// Number of location/orientation parameters.
  virtual int parameter_count() const = 0;
  /// Exact distances of every point to the current element displaced by `step` (`distances`,
  /// n) and, when `gradients` is given, their gradients with respect to the local parameters
  /// at that step (n x parameter_count()). step = 0 is the linearisation at the current element.
  virtual void evaluate(const Eigen::VectorXd& step, Eigen::VectorXd& distances,
                        Eigen::MatrixXd* gradients) const = 0;
  /// Make the displaced element the current one and re-centre the local frame on it.
  virtual void move(const Eigen::VectorXd& step) = 0;
  /// Distance of the element's centre (circle) or axis (line, cylinder) from the points'
  /// centroid; 0 for a plane. Used to detect an unbounded maximum-inscribed problem.
  virtual double location_offset() const = 0;
  /// The same element, frame and parametrisation over the given points only (column k of the
  /// copy is point indices[k]); used to work on the contact points alone.
  virtual std::unique_ptr<ZoneModel> subset(const std::vector<Eigen::Index>& indices) const = 0;
};

/// Radial distances |q_i - c| of points in a plane from a centre c (circles, and cylinders with
/// a fixed direction). Parameters: the centre's shift (u, v).
class CircleZoneModel final : public ZoneModel {
 public:
  CircleZoneModel(Eigen::Matrix2Xd points, const Eigen::Vector2d& start_centre);
  Eigen::Index point_count() const override { return points_.cols(); }
  int parameter_count() const override { return 2; }
  void evaluate(const Eigen::VectorXd& step, Eigen::VectorXd& distances,
                Eigen::MatrixXd* gradients) const override;
  void move(const Eigen::VectorXd& step) override;
  double location_offset() const override;
  std::unique_ptr<ZoneModel> subset(const std::vector<Eigen::Index>& indices) const override;

  const Eigen::Vector2d& centre() const noexcept { return centre_; }

 private:
  Eigen::Matrix2Xd points_;
  Eigen::Vector2d centroid_;
  Eigen::Vector2d centre_;
  Eigen::Matrix2Xd local_;  // points_ - centre_
};

/// Orthogonal distances of points in space from a straight axis (cylinders, and lines for
/// straightness). Parameters in the frame (u, v, w = axis) at the foot of the centroid:
/// [shift_u, shift_v, L tilt_u, L tilt_v], the axis through (shift, 0) along (tilt, 1), with L
/// the data's size (Forbes, NPL DITC 140/89, the same parametrisation as the least-squares fit).
class AxisZoneModel final : public ZoneModel {
 public:
  AxisZoneModel(Eigen::Matrix3Xd points, const Axis& start);
  Eigen::Index point_count() const override { return points_.cols(); }
  int parameter_count() const override { return 4; }
  void evaluate(const Eigen::VectorXd& step, Eigen::VectorXd& distances,
                Eigen::MatrixXd* gradients) const override;
  void move(const Eigen::VectorXd& step) override;
  double location_offset() const override;
  std::unique_ptr<ZoneModel> subset(const std::vector<Eigen::Index>& indices) const override;

  /// Current axis: point = foot of the perpendicular from the centroid, unit direction.
  Axis axis() const;

 private:
  void set_frame(const Eigen::Vector3d& point_on_axis, const Eigen::Vector3d& direction);

  Eigen::Matrix3Xd points_;
  Eigen::Vector3d centroid_;
  double tilt_scale_ = 1.0;
  Eigen::Vector3d origin_;
  Eigen::Matrix3d basis_;
  Eigen::Matrix3Xd local_;  // basis_^T (points_ - origin_)
};

/// Signed distances of points from a plane through their centroid (flatness). Parameters:
/// [L slope_u, L slope_v]; the plane's offset is absorbed by the zone bounds.
class PlaneZoneModel final : public ZoneModel {
 public:
  PlaneZoneModel(Eigen::Matrix3Xd points, const Eigen::Vector3d& start_normal);
  Eigen::Index point_count() const override { return points_.cols(); }
  int parameter_count() const override { return 2; }
  void evaluate(const Eigen::VectorXd& step, Eigen::VectorXd& distances,
                Eigen::MatrixXd* gradients) const override;
  void move(const Eigen::VectorXd& step) override;
  double location_offset() const override { return 0.0; }
  std::unique_ptr<ZoneModel> subset(const std::vector<Eigen::Index>& indices) const override;

  const Eigen::Vector3d& centroid() const noexcept { return centroid_; }
  Eigen::Vector3d normal() const { return basis_.col(2); }

 private:
  void set_frame(const Eigen::Vector3d& normal);

  Eigen::Matrix3Xd points_;
  Eigen::Vector3d centroid_;
  double tilt_scale_ = 1.0;
  Eigen::Matrix3d basis_;
  Eigen::Matrix3Xd local_;  // basis_^T (points_ - centroid_)
};

struct ZoneOptions {
  int max_iterations = 100;
  /// Convergence when the step (or the trust region) is below step_tolerance * scale and when
  /// the predicted improvement is below the same length.
  double step_tolerance = 1e-13;
  /// The data's size (largest distance from the centroid); tolerances and the largest trust
  /// region are relative to it.
  double scale = 1.0;
  /// First trust-region half-width; 0 picks 1e-3 * scale.
  double initial_trust_radius = 0.0;
  /// Maximum inscribed only: a current element whose location_offset() exceeds this is outside
  /// the points' convex hull, where every distance grows along some direction: unbounded.
  double location_limit = std::numeric_limits<double>::infinity();
  /// Up to this many candidate constraints per side, every point enters the linear programme;
  /// above it, constraint generation on a working set is used.
  std::size_t full_set_limit = 400;
  /// Working set: this many points nearest each active bound, plus a stride sample of as many.
  std::size_t working_points_per_side = 48;
};

enum class ZoneStatus { converged, iteration_limit, unbounded };

struct ZoneSummary {
  ZoneStatus status = ZoneStatus::converged;
  int iterations = 0;                  ///< linear programmes solved for accepted/rejected steps
  std::size_t largest_working_set = 0; ///< most rows in one linear programme
  bool polished = false;               ///< the final contacts were refined by Newton's method
  Eigen::VectorXd distances;           ///< exact distances at the final element
  std::string message;
};

/// Runs the sequential linear programme from the model's current element; on return the model
/// holds the final element. Throws FitError if Clp fails on a linear programme.
ZoneSummary solve_zone(ZoneModel& model, ZoneObjective objective, const ZoneOptions& options);

/// Options for solve_zone from the public fit options and the data's size; `start_form` (the
/// least-squares residual span) sets the first trust region.
ZoneOptions zone_options(const FitOptions& options, double scale, double start_form);

/// The associated size: mean of inner and outer radius (minimum zone), the smallest distance
/// (maximum inscribed) or the largest (minimum circumscribed).
double zone_radius(ZoneObjective objective, const Eigen::VectorXd& distances);

/// FitSummary (method, status, iterations, message) for a finished solve_zone.
FitSummary zone_fit_summary(FitMethod method, const ZoneSummary& zone, std::size_t point_count);

/// Throws FitError for an unbounded maximum-inscribed element, e.g. "maximum-inscribed
/// cylinder is unbounded: the points cover only 90.0 degrees around the least-squares axis ...".
[[noreturn]] void throw_unbounded_inscribed(const char* element, double coverage_deg);

/// For maximum inscribed: throws as above when the points cover less than 180 degrees about the
/// start. Their angles then lie in an open half-plane through the start's centre, so the centre
/// is outside their convex hull, where moving it away from every point grows the radius without
/// bound: the points do not surround, hence do not bound, an inscribed element there.
void require_enclosing_points(ZoneObjective objective, const char* element, double coverage_deg);

}  // namespace cylzone::detail
