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
// inside a box trust region |x_k| <= Delta with COIN-OR Clp (or, where ZoneOptions::lp_solver
// asks, the dense dual simplex of fit/detail/dense_lp.hpp), accepts or rejects the step on
// the true (nonlinear) objective, adapts Delta and re-linearises at the new element. Because
// the linearisation is exact to first order at x = 0, a point where the linear programme
// predicts no improvement is a first-order Chebyshev optimum of the orthogonal distances
// (Anthony et al., Precision Engineering 19(1), 1996; Shakarji & Clement,
// CIRP Annals 53(1), 2004; from memory). Large point sets are handled by constraint
// generation on a working set; it returns the optimum of the full linear programme. The
// final contacts are refined by Newton's method on the optimality (KKT) conditions, which
// places the element exactly where the objective alone cannot (fewer contacts than unknowns).
// Finally the engine decides whether the optimum is unique and, when it cannot prove it,
// measures how far the element can move without a worse objective (ZoneSummary::ambiguity);
// a flat optimum is also explored for other local optima (a first-order descent stops at
// whichever its start leads to), the best is returned, and of distinct equally good ones the
// one the points themselves prefer, so that the result depends neither on the start nor on the
// part's placement.
// docs/chebyshev.md describes the method.

#include <Eigen/Core>
#include <cstddef>
#include <limits>
#include <memory>
#include <string>
#include <vector>

#include "cylzone/fit/fit_types.hpp"

namespace cylzone::detail {

/// Which association the linear programme solves; maps one-to-one onto the Chebyshev-type
/// FitMethods.
enum class ZoneObjective { minimum_zone, maximum_inscribed, minimum_circumscribed };

/// The ZoneObjective of a Chebyshev-type method. Throws std::invalid_argument for least squares.
ZoneObjective zone_objective(FitMethod method);

/// Where a model measures how far its element moves (the ambiguity of a non-unique optimum):
/// a few reference points of the element (a centre; an axis at both ends of the points'
/// extent; a plane at the corners of the points' box), each displaced by a vector of
/// `dimension` components. To first order the components are `functionals` x step
/// (+ offset_weight x the change of the zone's mid-offset, for a plane); ZoneModel::displacements
/// gives them exactly.
struct DisplacementGauge {
  Eigen::MatrixXd functionals;  ///< (points x dimension) x parameter_count(), lengths per length
  double offset_weight = 0.0;   ///< weight of the mid-offset change (r + R)/2 (planes: 1)
  int dimension = 2;            ///< components per reference point
};

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
  /// The reference points of the current element and their first-order displacements.
  virtual DisplacementGauge displacement_gauge() const = 0;
  /// Exact displacement components (as the gauge's rows) of the element displaced by `step`,
  /// given the distances at that step and at the current element (a plane's mid-offset is the
  /// mean of the extreme distances).
  virtual Eigen::VectorXd displacements(const Eigen::VectorXd& step,
                                        const Eigen::VectorXd& distances_at_step,
                                        const Eigen::VectorXd& distances_here) const = 0;
  /// The step from the current element to `other`'s current element (a model of the same
  /// kind over the same points, e.g. a copy that was moved elsewhere): this element displaced
  /// by the result is `other`'s. Used to compare distinct optima in one parametrisation.
  virtual Eigen::VectorXd step_to(const ZoneModel& other) const = 0;
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
  DisplacementGauge displacement_gauge() const override;
  Eigen::VectorXd displacements(const Eigen::VectorXd& step, const Eigen::VectorXd& distances_at_step,
                                const Eigen::VectorXd& distances_here) const override;
  Eigen::VectorXd step_to(const ZoneModel& other) const override;

  const Eigen::Vector2d& centre() const noexcept { return centre_; }

 private:
  CircleZoneModel() = default;  // for subset()

  Eigen::Matrix2Xd points_;
  Eigen::Vector2d centroid_;
  Eigen::Vector2d centre_;
  Eigen::Matrix2Xd local_;  // points_ - centre_
};

/// The points of an axis or plane zone model: the caller's, borrowed for the fit (they must
/// outlive the model and every subset of all of them), or a subset's own copy. A model of a
/// 1,500,000-point face then holds its local coordinates only, not a second copy of the points,
/// and the engine's copies of the whole model (subset of all points) share them. Copies share.
class ModelPoints {
 public:
  ModelPoints() = default;
  explicit ModelPoints(const Eigen::Matrix3Xd& borrowed) : view_(&borrowed) {}
  explicit ModelPoints(Eigen::Matrix3Xd&& owned)
      : owned_(std::make_shared<const Eigen::Matrix3Xd>(std::move(owned))), view_(owned_.get()) {}
  const Eigen::Matrix3Xd& operator*() const noexcept { return *view_; }
  const Eigen::Matrix3Xd* operator->() const noexcept { return view_; }
  /// The columns `indices`: these points shared when they are all of them in order, a copy of
  /// those columns otherwise.
  ModelPoints subset(const std::vector<Eigen::Index>& indices) const;

 private:
  std::shared_ptr<const Eigen::Matrix3Xd> owned_;
  const Eigen::Matrix3Xd* view_ = nullptr;
};

/// AxisZoneModel::evaluate on the points' coordinates `local` in the axis' frame (columns
/// (u, v, w)): distances from the axis displaced by `step` ([shift_u, shift_v, L tilt_u,
/// L tilt_v], L = `tilt_scale`) and, when asked, their gradients (n x 4). One loop over the
/// points, the same operations per point as |(q - a) x m| / |m| in Eigen (bit for bit).
void axis_distances(const Eigen::Matrix3Xd& local, double tilt_scale, const Eigen::VectorXd& step,
                    Eigen::VectorXd& distances, Eigen::MatrixXd* gradients);

/// Orthogonal distances of points in space from a straight axis (cylinders, and lines for
/// straightness). Parameters in the frame (u, v, w = axis) at the foot of the centroid:
/// [shift_u, shift_v, L tilt_u, L tilt_v], the axis through (shift, 0) along (tilt, 1), with L
/// the data's size (Forbes, NPL DITC 140/89, the same parametrisation as the least-squares fit).
class AxisZoneModel final : public ZoneModel {
 public:
  /// `points` are borrowed (ModelPoints): they must outlive the model.
  AxisZoneModel(const Eigen::Matrix3Xd& points, const Axis& start);
  AxisZoneModel(Eigen::Matrix3Xd&&, const Axis&) = delete;
  /// The same model where the caller already holds the points' centroid (detail::centroid)
  /// and data_scale(points, centroid): they are not computed a second time.
  AxisZoneModel(const Eigen::Matrix3Xd& points, const Axis& start,
                const Eigen::Vector3d& centroid, double data_scale);
  AxisZoneModel(Eigen::Matrix3Xd&&, const Axis&, const Eigen::Vector3d&, double) = delete;
  Eigen::Index point_count() const override { return points_->cols(); }
  int parameter_count() const override { return 4; }
  void evaluate(const Eigen::VectorXd& step, Eigen::VectorXd& distances,
                Eigen::MatrixXd* gradients) const override;
  void move(const Eigen::VectorXd& step) override;
  double location_offset() const override;
  std::unique_ptr<ZoneModel> subset(const std::vector<Eigen::Index>& indices) const override;
  DisplacementGauge displacement_gauge() const override;
  Eigen::VectorXd displacements(const Eigen::VectorXd& step, const Eigen::VectorXd& distances_at_step,
                                const Eigen::VectorXd& distances_here) const override;
  Eigen::VectorXd step_to(const ZoneModel& other) const override;

  /// Current axis: point = foot of the perpendicular from the centroid, unit direction.
  Axis axis() const;

 private:
  AxisZoneModel() = default;  // for subset()
  void set_frame(const Eigen::Vector3d& point_on_axis, const Eigen::Vector3d& direction);

  ModelPoints points_;
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
  /// `points` are borrowed (ModelPoints): they must outlive the model.
  PlaneZoneModel(const Eigen::Matrix3Xd& points, const Eigen::Vector3d& start_normal);
  PlaneZoneModel(Eigen::Matrix3Xd&&, const Eigen::Vector3d&) = delete;
  Eigen::Index point_count() const override { return points_->cols(); }
  int parameter_count() const override { return 2; }
  void evaluate(const Eigen::VectorXd& step, Eigen::VectorXd& distances,
                Eigen::MatrixXd* gradients) const override;
  void move(const Eigen::VectorXd& step) override;
  double location_offset() const override { return 0.0; }
  std::unique_ptr<ZoneModel> subset(const std::vector<Eigen::Index>& indices) const override;
  DisplacementGauge displacement_gauge() const override;
  Eigen::VectorXd displacements(const Eigen::VectorXd& step, const Eigen::VectorXd& distances_at_step,
                                const Eigen::VectorXd& distances_here) const override;
  Eigen::VectorXd step_to(const ZoneModel& other) const override;

  const Eigen::Vector3d& centroid() const noexcept { return centroid_; }
  Eigen::Vector3d normal() const { return basis_.col(2); }

 private:
  PlaneZoneModel() = default;  // for subset()
  void set_frame(const Eigen::Vector3d& normal);
  /// Lowest (column 0) and highest (column 1) in-plane coordinates of the points.
  Eigen::Matrix2d box() const;

  ModelPoints points_;
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
  /// Uniqueness of the optimum (docs/chebyshev.md, "Non-unique optima"): elements whose
  /// objective is within ambiguity_tolerance x max(scale, largest distance) of the optimum's
  /// count as equally good. 64 units in the last place: several times the rounding of one
  /// distance evaluation, so rounding cannot pass for a difference, and far below any
  /// difference of size or zone a measurement could show.
  double ambiguity_tolerance = 64.0 * std::numeric_limits<double>::epsilon();
  /// First trust-box half-width of the ambiguity walks, relative to scale; it grows tenfold
  /// whenever a verified step reaches the box, up to ambiguity_box_limit. Small, so that the
  /// linear programmes' feasibility tolerance (1e-10 of the box) stays below the objective
  /// tolerance.
  double ambiguity_box = 1e-6;
  double ambiguity_box_limit = 0.1;
  /// A converged element that is not proven unique is also the start of exploring walks that
  /// may lose up to this fraction of the data's size in objective, and of descents from their
  /// ends: they find other local optima across low ridges (docs/chebyshev.md, "Non-unique
  /// optima"). 0 turns the exploration off.
  double exploration_allowance = 1e-10;
  /// Off: uniqueness is neither proven nor measured (FitOptions::assess_ambiguity).
  bool assess_ambiguity = true;
  /// Off: ZoneSummary::message is left empty (FitOptions::result_messages).
  bool message = true;
  /// The tie-break's secondary objective (docs/chebyshev.md, "Non-unique optima", 5): the sum
  /// of squared residuals about a free offset (a radius; a plane's offset), or, off, of the
  /// distances themselves (a line: its points' distances from it).
  bool residuals_about_offset = true;
  /// The solver of the descent's linear programmes (FitOptions::lp_solver); the ambiguity walks
  /// always use Clp. With `dense`, a programme the dense solver fails on is solved by Clp.
  LpSolver lp_solver = LpSolver::clp;
  /// Iterations per dense programme; 0 picks 50 + 4 x its constraints (a guard, not a tuning).
  int dense_iteration_limit = 0;
  /// The model's element is an earlier fit's (FitOptions::start): ZoneSummary::start says how
  /// it served. `start_contacts` are that fit's contacts (indices into this model's points):
  /// Newton's method on their optimality conditions is tried before the first linear
  /// programme, which then certifies the element when they still hold; they also seed the
  /// first working set and the dense solver's first basis.
  bool from_start = false;
  std::vector<FitContact> start_contacts;
};

enum class ZoneStatus { converged, iteration_limit, unbounded };

struct ZoneSummary {
  ZoneStatus status = ZoneStatus::converged;
  int iterations = 0;                  ///< linear programmes solved for accepted/rejected steps
  std::size_t largest_working_set = 0; ///< most rows in one linear programme
  bool polished = false;               ///< the final contacts were refined by Newton's method
  Eigen::VectorXd distances;           ///< exact distances at the final element
  std::string message;
  /// The final contacts determine the element to first order (full rank, positive
  /// multipliers): the optimum is unique and `ambiguity` is 0 without further work.
  bool proven_unique = false;
  /// Largest verified displacement of the element's reference points (DisplacementGauge), from
  /// the returned element to any element found whose objective is within the tolerance of the
  /// optimum's: the ends of the walks along its near-optimal set and the other distinct optima
  /// found by the exploration; 0 when proven unique and when the iteration did not converge
  /// (not assessed).
  double ambiguity = 0.0;
  int ambiguity_programmes = 0;  ///< linear programmes solved to measure it and to explore
  /// Why the ambiguity could not be measured (a linear programme failed); empty otherwise.
  std::string ambiguity_failure;
  /// The optimum was not proven unique and the element is the tie-break's choice in its
  /// near-optimal set (the least sum of squared residuals), not the descent's.
  bool tie_broken = false;
  /// Linear programmes the dense solver failed on and Clp solved (ZoneOptions::lp_solver).
  int lp_fallbacks = 0;
  /// The final linear programme's binding rows (the contacts) when the returned element is the
  /// descent's own; empty after a tie-break moved it, and unless converged.
  std::vector<FitContact> contacts;
  /// With ZoneOptions::from_start: held (the start contacts gave the element the first
  /// programme certified) or descended; `none` otherwise.
  StartOutcome start = StartOutcome::none;
};

/// Runs the sequential linear programme from the model's current element; on return the model
/// holds the final element. Throws FitError if Clp fails on a linear programme.
ZoneSummary solve_zone(ZoneModel& model, ZoneObjective objective, const ZoneOptions& options);

/// Options for solve_zone from the public fit options and the data's size; `start_form` (the
/// least-squares residual span) sets the first trust region.
ZoneOptions zone_options(const FitOptions& options, double scale, double start_form);

/// The zone options of a fit from an earlier element (FitOptions::start, which must be set): its
/// residual span as the first trust region (the optimum moved about as far as the points did),
/// its contacts only where the earlier fit had as many points (they are indices into them).
ZoneOptions started_zone_options(const FitOptions& options, double scale,
                                 Eigen::Index point_count);

/// The associated size: mean of inner and outer radius (minimum zone), the smallest distance
/// (maximum inscribed) or the largest (minimum circumscribed).
double zone_radius(ZoneObjective objective, const Eigen::VectorXd& distances);

/// FitSummary (method, status, iterations, message) for a finished solve_zone.
FitSummary zone_fit_summary(FitMethod method, const ZoneSummary& zone, std::size_t point_count);

/// Fits warn when their ambiguity exceeds this length (mm): 0.1 um, the last digit of the
/// lengths in cylzone's reports (4 decimals of a millimetre); a smaller ambiguity is at the
/// level of the reports' rounding.
inline constexpr double ambiguity_warning_length = 1e-4;

/// Adds "the maximum-inscribed cylinder is not unique: its axis can move by up to X mm at the
/// ends without changing the size; ..." to `summary` (whose method is set) when the zone's
/// ambiguity exceeds ambiguity_warning_length, or a warning that it could not be measured.
/// `element`: "circle", "cylinder", "line" or "plane".
void warn_on_ambiguity(FitSummary& summary, const char* element, const ZoneSummary& zone);

/// Throws FitError for an unbounded maximum-inscribed element, e.g. "maximum-inscribed
/// cylinder is unbounded: the points cover only 90.0 degrees around the least-squares axis ...".
[[noreturn]] void throw_unbounded_inscribed(const char* element, double coverage_deg);

/// For maximum inscribed: throws as above when the points cover less than 180 degrees about the
/// start. Their angles then lie in an open half-plane through the start's centre, so the centre
/// is outside their convex hull, where moving it away from every point grows the radius without
/// bound: the points do not surround, hence do not bound, an inscribed element there.
void require_enclosing_points(ZoneObjective objective, const char* element, double coverage_deg);

}  // namespace cylzone::detail
