// Sequential linear programming for Chebyshev and mating-envelope fits (see
// src/detail/chebyshev.hpp and docs/chebyshev.md). This is the only file that talks to Clp.
#include "fit/detail/chebyshev.hpp"

#include <ClpSimplex.hpp>
#include <CoinError.hpp>
#include <CoinPackedMatrix.hpp>
#include <Eigen/Geometry>
#include <Eigen/LU>
#include <Eigen/SVD>
#include <algorithm>
#include <cmath>
#include <initializer_list>
#include <limits>
#include <memory>
#include <stdexcept>
#include <utility>
#include <vector>

#include "cylzone/core/errors.hpp"
#include "detail/fit_support.hpp"

namespace cylzone::detail {

ZoneObjective zone_objective(FitMethod method) {
  switch (method) {
    case FitMethod::minimum_zone: return ZoneObjective::minimum_zone;
    case FitMethod::maximum_inscribed: return ZoneObjective::maximum_inscribed;
    case FitMethod::minimum_circumscribed: return ZoneObjective::minimum_circumscribed;
    case FitMethod::least_squares: break;
  }
  throw std::invalid_argument("least squares is not a Chebyshev-type association");
}

// ------------------------------------------------------------------ element models

namespace {

// A derivative of |x| at a point on the axis / at the centre does not exist; any subgradient
// of norm <= 1 is valid there and 0 keeps such a point out of the linear model's way.
inline double inverse_or_zero(double x) { return x > 0.0 ? 1.0 / x : 0.0; }

// The size used to turn tilts into lengths: the data's extent, never zero.
double tilt_scale_of(const Eigen::Matrix3Xd& points, const Eigen::Vector3d& centroid) {
  const double s = data_scale(points, centroid);
  return s > 0.0 ? s : 1.0;
}

}  // namespace

CircleZoneModel::CircleZoneModel(Eigen::Matrix2Xd points, const Eigen::Vector2d& start_centre)
    : points_(std::move(points)), centre_(start_centre) {
  centroid_ = points_.cols() > 0 ? Eigen::Vector2d(points_.rowwise().mean())
                                 : Eigen::Vector2d::Zero();
  local_ = points_.colwise() - centre_;
}

void CircleZoneModel::evaluate(const Eigen::VectorXd& step, Eigen::VectorXd& distances,
                               Eigen::MatrixXd* gradients) const {
  const Eigen::Index n = local_.cols();
  const Eigen::Vector2d a = step.head<2>();
  distances.resize(n);
  if (gradients) gradients->resize(n, 2);
  for (Eigen::Index i = 0; i < n; ++i) {
    const Eigen::Vector2d w = local_.col(i) - a;
    const double d = w.norm();
    distances(i) = d;
    if (gradients) gradients->row(i) = -w.transpose() * inverse_or_zero(d);  // -(q - c)/|q - c|
  }
}

void CircleZoneModel::move(const Eigen::VectorXd& step) {
  centre_ += step.head<2>();
  local_ = points_.colwise() - centre_;
}

// The subsets are built member by member: copying the whole model first would cost
// O(all points) for a copy of a few.
std::unique_ptr<ZoneModel> CircleZoneModel::subset(const std::vector<Eigen::Index>& indices) const {
  std::unique_ptr<CircleZoneModel> copy(new CircleZoneModel());
  copy->points_ = points_(Eigen::all, indices);
  copy->centroid_ = centroid_;
  copy->centre_ = centre_;
  copy->local_ = local_(Eigen::all, indices);
  return copy;
}

double CircleZoneModel::location_offset() const { return (centre_ - centroid_).norm(); }

DisplacementGauge CircleZoneModel::displacement_gauge() const {
  DisplacementGauge gauge;  // the centre's shift is the parameter itself
  gauge.functionals = Eigen::MatrixXd::Identity(2, 2);
  return gauge;
}

Eigen::VectorXd CircleZoneModel::displacements(const Eigen::VectorXd& step,
                                               const Eigen::VectorXd&,
                                               const Eigen::VectorXd&) const {
  return step.head<2>();
}

AxisZoneModel::AxisZoneModel(Eigen::Matrix3Xd points, const Axis& start)
    : points_(std::move(points)) {
  centroid_ = detail::centroid(points_);
  tilt_scale_ = tilt_scale_of(points_, centroid_);
  set_frame(start.point, start.direction);
}

void AxisZoneModel::set_frame(const Eigen::Vector3d& point_on_axis,
                              const Eigen::Vector3d& direction) {
  const Eigen::Vector3d w = direction.normalized();
  origin_ = point_on_axis + (centroid_ - point_on_axis).dot(w) * w;
  basis_ = basis_from_direction(w);
  local_ = local_coordinates(points_, origin_, basis_);
}

void AxisZoneModel::evaluate(const Eigen::VectorXd& step, Eigen::VectorXd& distances,
                             Eigen::MatrixXd* gradients) const {
  // The axis through a = (shift_u, shift_v, 0) along m = (b_u, b_v, 1), b = tilt / L:
  // d = |(q - a) x m| / |m|. |c| with c = (q - a) x m keeps full precision where
  // |q - a|^2 - ((q - a).m)^2 / |m|^2 would cancel. Derivatives: dc/da_u = (0, 1, -b_v),
  // dc/da_v = (-1, 0, b_u), dc/db_u = (0, w_z, -w_y), dc/db_v = (-w_z, 0, w_x) with w = q - a,
  // and d|m|/db = b / |m|. At zero step they reduce to Forbes' (NPL DITC 140/89):
  // -(x, y)/d and -z (x, y)/d.
  const double bu = step(2) / tilt_scale_, bv = step(3) / tilt_scale_;
  const Eigen::Vector3d a(step(0), step(1), 0.0), m(bu, bv, 1.0);
  const double s = m.norm();
  const double inv_l = 1.0 / tilt_scale_;
  const Eigen::Index n = local_.cols();
  distances.resize(n);
  if (gradients) gradients->resize(n, 4);
  for (Eigen::Index i = 0; i < n; ++i) {
    const Eigen::Vector3d w = local_.col(i) - a;
    const Eigen::Vector3d c = w.cross(m);
    const double cn = c.norm();
    distances(i) = cn / s;
    if (!gradients) continue;
    const double k = inverse_or_zero(cn) / s;
    auto& g = *gradients;
    g(i, 0) = k * (c.y() - bv * c.z());
    g(i, 1) = k * (-c.x() + bu * c.z());
    g(i, 2) = (k * (w.z() * c.y() - w.y() * c.z()) - cn * bu / (s * s * s)) * inv_l;
    g(i, 3) = (k * (-w.z() * c.x() + w.x() * c.z()) - cn * bv / (s * s * s)) * inv_l;
  }
}

void AxisZoneModel::move(const Eigen::VectorXd& step) {
  const Eigen::Vector3d point = origin_ + basis_ * Eigen::Vector3d(step(0), step(1), 0.0);
  const Eigen::Vector3d dir =
      basis_ * Eigen::Vector3d(step(2) / tilt_scale_, step(3) / tilt_scale_, 1.0);
  set_frame(point, dir);
}

std::unique_ptr<ZoneModel> AxisZoneModel::subset(const std::vector<Eigen::Index>& indices) const {
  std::unique_ptr<AxisZoneModel> copy(new AxisZoneModel());
  copy->points_ = points_(Eigen::all, indices);
  copy->centroid_ = centroid_;
  copy->tilt_scale_ = tilt_scale_;
  copy->origin_ = origin_;
  copy->basis_ = basis_;
  copy->local_ = local_(Eigen::all, indices);
  return copy;
}

double AxisZoneModel::location_offset() const { return (centroid_ - origin_).norm(); }

Axis AxisZoneModel::axis() const { return Axis{origin_, basis_.col(2)}; }

DisplacementGauge AxisZoneModel::displacement_gauge() const {
  // The displaced axis passes through (shift, 0) along (tilt / L, 1): it meets the plane z = t
  // (the cross-section at station t) at shift + t tilt / L, exactly. Reference points: the
  // axis at both ends of the points' extent, where a position or perpendicularity zone is
  // decided for a straight axis.
  DisplacementGauge gauge;
  gauge.functionals = Eigen::MatrixXd::Zero(4, 4);
  const double ends[2] = {local_.row(2).minCoeff(), local_.row(2).maxCoeff()};
  for (int e = 0; e < 2; ++e) {
    gauge.functionals(2 * e, 0) = 1.0;
    gauge.functionals(2 * e, 2) = ends[e] / tilt_scale_;
    gauge.functionals(2 * e + 1, 1) = 1.0;
    gauge.functionals(2 * e + 1, 3) = ends[e] / tilt_scale_;
  }
  return gauge;
}

Eigen::VectorXd AxisZoneModel::displacements(const Eigen::VectorXd& step,
                                             const Eigen::VectorXd&,
                                             const Eigen::VectorXd&) const {
  return displacement_gauge().functionals * step;  // exact, see displacement_gauge
}

PlaneZoneModel::PlaneZoneModel(Eigen::Matrix3Xd points, const Eigen::Vector3d& start_normal)
    : points_(std::move(points)) {
  centroid_ = detail::centroid(points_);
  tilt_scale_ = tilt_scale_of(points_, centroid_);
  set_frame(start_normal);
}

void PlaneZoneModel::set_frame(const Eigen::Vector3d& normal) {
  basis_ = basis_from_direction(normal);
  local_ = local_coordinates(points_, centroid_, basis_);
}

Eigen::Matrix2d PlaneZoneModel::box() const {
  Eigen::Matrix2d b;  // columns: lowest and highest in-plane coordinates
  b.col(0) = local_.topRows<2>().rowwise().minCoeff();
  b.col(1) = local_.topRows<2>().rowwise().maxCoeff();
  return b;
}

DisplacementGauge PlaneZoneModel::displacement_gauge() const {
  // The displaced mid-plane {q : q.m / |m| = mid} with m = (b, 1), b = slope / L, has height
  // z = mid |m| - b.(X, Y) above the in-plane point (X, Y); to first order its change is the
  // change of mid minus b.(X, Y). Reference points: the corners of the points' box.
  DisplacementGauge gauge;
  gauge.dimension = 1;
  gauge.offset_weight = 1.0;
  gauge.functionals.resize(4, 2);
  const Eigen::Matrix2d b = box();
  for (int c = 0; c < 4; ++c) {
    gauge.functionals(c, 0) = -b(0, c & 1) / tilt_scale_;
    gauge.functionals(c, 1) = -b(1, (c >> 1) & 1) / tilt_scale_;
  }
  return gauge;
}

Eigen::VectorXd PlaneZoneModel::displacements(const Eigen::VectorXd& step,
                                              const Eigen::VectorXd& distances_at_step,
                                              const Eigen::VectorXd& distances_here) const {
  const Eigen::Vector2d b = step.head<2>() / tilt_scale_;
  const double norm = std::sqrt(1.0 + b.squaredNorm());
  auto mid = [](const Eigen::VectorXd& s) { return 0.5 * (s.maxCoeff() + s.minCoeff()); };
  const double mid_step = mid(distances_at_step), mid_here = mid(distances_here);
  const Eigen::Matrix2d corners = box();
  Eigen::VectorXd out(4);
  for (int c = 0; c < 4; ++c) {
    const Eigen::Vector2d corner(corners(0, c & 1), corners(1, (c >> 1) & 1));
    out(c) = mid_step * norm - b.dot(corner) - mid_here;
  }
  return out;
}

void PlaneZoneModel::evaluate(const Eigen::VectorXd& step, Eigen::VectorXd& distances,
                              Eigen::MatrixXd* gradients) const {
  // s_i = q_i.m / |m| with m = (b_u, b_v, 1), b = slope / L; ds/db = q_xy / |m| - s_i b / |m|^2.
  const Eigen::Vector3d m(step(0) / tilt_scale_, step(1) / tilt_scale_, 1.0);
  const double norm = m.norm();
  distances = (m.transpose() * local_).transpose() / norm;
  if (!gradients) return;
  gradients->resize(local_.cols(), 2);
  for (int k = 0; k < 2; ++k)
    gradients->col(k) =
        (local_.row(k).transpose() / norm - distances * (m(k) / (norm * norm))) / tilt_scale_;
}

std::unique_ptr<ZoneModel> PlaneZoneModel::subset(const std::vector<Eigen::Index>& indices) const {
  std::unique_ptr<PlaneZoneModel> copy(new PlaneZoneModel());
  copy->points_ = points_(Eigen::all, indices);
  copy->centroid_ = centroid_;
  copy->tilt_scale_ = tilt_scale_;
  copy->basis_ = basis_;
  copy->local_ = local_(Eigen::all, indices);
  return copy;
}

void PlaneZoneModel::move(const Eigen::VectorXd& step) {
  set_frame(basis_ * Eigen::Vector3d(step(0) / tilt_scale_, step(1) / tilt_scale_, 1.0));
}

// ------------------------------------------------------------------ linear programme

namespace {

bool uses_upper(ZoneObjective o) { return o != ZoneObjective::maximum_inscribed; }
bool uses_lower(ZoneObjective o) { return o != ZoneObjective::minimum_circumscribed; }

/// The true objective, to be minimised: zone width, minus the inscribed radius, or the
/// circumscribed radius.
double true_objective(ZoneObjective o, const Eigen::VectorXd& d) {
  switch (o) {
    case ZoneObjective::minimum_zone: return d.maxCoeff() - d.minCoeff();
    case ZoneObjective::maximum_inscribed: return -d.minCoeff();
    case ZoneObjective::minimum_circumscribed: return d.maxCoeff();
  }
  return 0.0;
}

enum class Side { upper, lower };

struct Constraint {
  Eigen::Index point;
  Side side;
};

struct LinearStep {
  Eigen::VectorXd step;    ///< in the model's parameters (lengths)
  double predicted = 0.0;  ///< decrease of the objective the linear model predicts (>= 0)
  std::size_t rows = 0;
};

/// Rows of the programme in row-major (CSR) form, as Clp takes them.
struct RowBlock {
  std::vector<double> lower, upper, elements;
  std::vector<int> columns;
  std::vector<CoinBigIndex> starts;
  int count() const { return static_cast<int>(lower.size()); }
};

/// The linearised problem at one element, in scaled variables y = x / Delta (|y_k| <= 1) and
/// bounds R' = (R - U0) / Delta, r' = (r - L0) / Delta, with U0, L0 the current largest and
/// smallest distance. Every row then reads  (d_i - U0)/Delta + g_i.y <= R'  (upper) or
/// (d_i - L0)/Delta + g_i.y >= r'  (lower), and the objective's decrease is -Delta times the
/// programme's optimum for all three kinds. Keeps the rows that were binding at the previous
/// element, which are the likeliest to bind again.
class ZoneProgramme {
 public:
  ZoneProgramme(ZoneObjective objective, const ZoneOptions& options, Eigen::Index n, int p)
      : objective_(objective), options_(options), n_(n), p_(p) {
    int col = p_;
    if (uses_upper(objective_)) upper_col_ = col++;
    if (uses_lower(objective_)) lower_col_ = col++;
    columns_ = col;
  }

  LinearStep solve(const Eigen::VectorXd& d, const Eigen::MatrixXd& g, double delta);

  /// Rows binding at the last solution, and their multipliers (|dual|; they sum to 1 per side).
  const std::vector<Constraint>& binding() const noexcept { return binding_; }
  const std::vector<double>& multipliers() const noexcept { return multipliers_; }

  /// One programme of an ambiguity walk (see walk()): the step in the box |x_k| <= delta that
  /// moves one displacement component, `functional` x step (+ offset_weight x the change of the
  /// bounds' mean), farthest, subject to every linearised row and to a linearised objective no
  /// worse than the current element's. A small penalty on |x|_1 keeps directions that do not
  /// serve the component at zero.
  Eigen::VectorXd farthest_step(const Eigen::VectorXd& d, const Eigen::MatrixXd& g, double delta,
                                const Eigen::RowVectorXd& functional, double offset_weight);

 private:
  void candidates(const Eigen::VectorXd& d, const Eigen::VectorXd& g_l1, double delta, Side side,
                  std::vector<Eigen::Index>& out) const;
  void initial_rows(const Eigen::VectorXd& d, const std::vector<Eigen::Index>& cand, Side side,
                    std::vector<Constraint>& rows);
  /// The first working set of a programme at this element (resets the membership flags).
  std::vector<Constraint> first_rows(const Eigen::VectorXd& d, const Eigen::VectorXd& g_l1,
                                     double delta);
  RowBlock make_rows(const Eigen::VectorXd& d, const Eigen::MatrixXd& g, double u0, double l0,
                     double delta, const std::vector<Constraint>& rows) const;
  /// Loads the rows, the box and the zone objective's costs, with `extra_columns` columns in
  /// [0, 1] (cost 0) after the programme's own.
  void load(ClpSimplex& lp, const RowBlock& block, double reach, int extra_columns) const;
  /// Constraint generation: adds the violated rows (worst first) and re-solves until none is.
  void add_violated_rows(ClpSimplex& lp, const Eigen::VectorXd& d, const Eigen::MatrixXd& g,
                         double u0, double l0, double delta, std::vector<Constraint>& rows);
  void run_simplex(ClpSimplex& lp) const;

  ZoneObjective objective_;
  ZoneOptions options_;
  Eigen::Index n_;
  int p_;
  int upper_col_ = -1, lower_col_ = -1, columns_ = 0;
  std::vector<unsigned char> in_upper_, in_lower_;  // membership in the current working set
  std::vector<Constraint> binding_;                  // binding rows of the previous solve
  std::vector<double> multipliers_;                  // and their multipliers
};

// A row can bind (or be violated) only when (U0 - d_i)/Delta <= |g_i|_1 + |g_top|_1 (the top
// point's row is always present, so R' >= g_top.y >= -|g_top|_1, and |g_i.y| <= |g_i|_1): rows
// outside that band are redundant for this programme and are left out (likewise below).
void ZoneProgramme::candidates(const Eigen::VectorXd& d, const Eigen::VectorXd& g_l1,
                               double delta, Side side, std::vector<Eigen::Index>& out) const {
  Eigen::Index extreme = 0;
  if (side == Side::upper)
    d.maxCoeff(&extreme);
  else
    d.minCoeff(&extreme);
  const double reach = g_l1(extreme);
  const double bound = d(extreme);
  out.clear();
  for (Eigen::Index i = 0; i < n_; ++i) {
    const double gap = side == Side::upper ? bound - d(i) : d(i) - bound;
    if (gap <= delta * (g_l1(i) + reach) * (1.0 + 1e-9) + 1e-300) out.push_back(i);
  }
}

void ZoneProgramme::initial_rows(const Eigen::VectorXd& d, const std::vector<Eigen::Index>& cand,
                                 Side side, std::vector<Constraint>& rows) {
  auto& member = side == Side::upper ? in_upper_ : in_lower_;
  auto take = [&](Eigen::Index i) {
    if (!member[static_cast<std::size_t>(i)]) {
      member[static_cast<std::size_t>(i)] = 1;
      rows.push_back({i, side});
    }
  };
  if (cand.size() <= options_.full_set_limit) {
    for (Eigen::Index i : cand) take(i);
    return;
  }
  // The points nearest the bound ...
  const std::size_t k = std::min(options_.working_points_per_side, cand.size());
  std::vector<Eigen::Index> order(cand);
  auto more_extreme = [&](Eigen::Index a, Eigen::Index b) {
    return side == Side::upper ? d(a) > d(b) : d(a) < d(b);
  };
  std::nth_element(order.begin(), order.begin() + static_cast<std::ptrdiff_t>(k - 1), order.end(),
                   more_extreme);
  for (std::size_t j = 0; j < k; ++j) take(order[j]);
  // ... a stride sample, so the first programme sees the whole surface ...
  const std::size_t stride = std::max<std::size_t>(1, cand.size() / k);
  for (std::size_t j = 0; j < cand.size(); j += stride) take(cand[j]);
  // ... and the rows that bound the previous step.
  for (const Constraint& c : binding_)
    if (c.side == side) take(c.point);
}

std::vector<Constraint> ZoneProgramme::first_rows(const Eigen::VectorXd& d,
                                                  const Eigen::VectorXd& g_l1, double delta) {
  in_upper_.assign(static_cast<std::size_t>(n_), 0);
  in_lower_.assign(static_cast<std::size_t>(n_), 0);
  std::vector<Constraint> rows;
  std::vector<Eigen::Index> cand;
  if (upper_col_ >= 0) {
    candidates(d, g_l1, delta, Side::upper, cand);
    initial_rows(d, cand, Side::upper, rows);
  }
  if (lower_col_ >= 0) {
    candidates(d, g_l1, delta, Side::lower, cand);
    initial_rows(d, cand, Side::lower, rows);
  }
  return rows;
}

RowBlock ZoneProgramme::make_rows(const Eigen::VectorXd& d, const Eigen::MatrixXd& g, double u0,
                                  double l0, double delta,
                                  const std::vector<Constraint>& rows) const {
  RowBlock block;
  const auto count = rows.size();
  block.lower.resize(count);
  block.upper.resize(count);
  block.starts.assign(count + 1, 0);
  block.elements.reserve(count * static_cast<std::size_t>(p_ + 1));
  block.columns.reserve(block.elements.capacity());
  for (std::size_t r = 0; r < count; ++r) {
    const Constraint& c = rows[r];
    for (int k = 0; k < p_; ++k) {
      block.columns.push_back(k);
      block.elements.push_back(g(c.point, k));
    }
    if (c.side == Side::upper) {
      // g_i.y - R' <= -(d_i - U0)/Delta
      block.columns.push_back(upper_col_);
      block.elements.push_back(-1.0);
      block.lower[r] = -COIN_DBL_MAX;
      block.upper[r] = -(d(c.point) - u0) / delta;
    } else {
      // g_i.y - r' >= -(d_i - L0)/Delta
      block.columns.push_back(lower_col_);
      block.elements.push_back(-1.0);
      block.lower[r] = -(d(c.point) - l0) / delta;
      block.upper[r] = COIN_DBL_MAX;
    }
    block.starts[r + 1] = static_cast<CoinBigIndex>(block.columns.size());
  }
  return block;
}

// y = 0 with R' = r' = 0 is feasible with objective 0 (the extreme points' rows are present),
// so an optimum above 0 is a solver failure, not a property of the data: it is retried once
// from scratch and otherwise reported. The same holds for farthest_step's programmes.
void ZoneProgramme::run_simplex(ClpSimplex& lp) const {
  constexpr double impossible = 1e-9;
  auto solved = [&] { return lp.isProvenOptimal() && lp.objectiveValue() <= impossible; };
  try {
    lp.dual();
    if (!solved()) lp.initialSolve();
  } catch (const CoinError& e) {
    throw FitError("Chebyshev fit: the linear programme failed: " + e.message());
  }
  if (!solved())
    throw FitError("Chebyshev fit: the linear programme failed (Clp status " +
                   std::to_string(lp.status()) + ", secondary " +
                   std::to_string(lp.secondaryStatus()) + ")");
}

void ZoneProgramme::load(ClpSimplex& lp, const RowBlock& block, double reach,
                         int extra_columns) const {
  // Column bounds and costs. The bound variables are free in principle; at the optimum
  // |R'|, |r'| <= max_i |g_i|_1 (the extreme point's row is present and |g_i.y| <= |g_i|_1), so
  // a box of twice that (`reach`) is never active and keeps every column bounded.
  const int columns = columns_ + extra_columns;
  std::vector<double> column_lower(static_cast<std::size_t>(columns), -1.0);
  std::vector<double> column_upper(static_cast<std::size_t>(columns), 1.0);
  std::vector<double> cost(static_cast<std::size_t>(columns), 0.0);
  for (int col : {upper_col_, lower_col_}) {
    if (col < 0) continue;
    column_lower[static_cast<std::size_t>(col)] = -reach;
    column_upper[static_cast<std::size_t>(col)] = reach;
  }
  for (int col = columns_; col < columns; ++col) column_lower[static_cast<std::size_t>(col)] = 0.0;
  switch (objective_) {
    case ZoneObjective::minimum_zone:  // min R' - r'
      cost[static_cast<std::size_t>(upper_col_)] = 1.0;
      cost[static_cast<std::size_t>(lower_col_)] = -1.0;
      break;
    case ZoneObjective::maximum_inscribed:  // min -r'
      cost[static_cast<std::size_t>(lower_col_)] = -1.0;
      break;
    case ZoneObjective::minimum_circumscribed:  // min R'
      cost[static_cast<std::size_t>(upper_col_)] = 1.0;
      break;
  }
  std::vector<int> lengths(static_cast<std::size_t>(block.count()));
  for (std::size_t r = 0; r < lengths.size(); ++r)
    lengths[r] = static_cast<int>(block.starts[r + 1] - block.starts[r]);
  const CoinPackedMatrix matrix(false, columns, block.count(),
                                static_cast<CoinBigIndex>(block.elements.size()),
                                block.elements.data(), block.columns.data(), block.starts.data(),
                                lengths.data());
  lp.setLogLevel(0);  // the numeric core never prints
  // Tighter than Clp's defaults (1e-7): the rows are in units of Delta, and the step must be
  // accurate well below the tolerance of the outer iteration.
  lp.setPrimalTolerance(1e-10);
  lp.setDualTolerance(1e-10);
  // The rows are already scaled (coefficients O(1), right-hand sides in units of Delta); Clp's
  // own scaling was seen to end the dual simplex at a wrong "optimal" basis on such models.
  lp.scaling(0);
  lp.loadProblem(matrix, column_lower.data(), column_upper.data(), cost.data(),
                 block.lower.data(), block.upper.data());
}

// Constraint generation: check every point against the step, add the violated rows (worst
// first) and re-solve from the previous basis with the dual simplex, until none is violated.
// The relaxation's optimum is then feasible, hence optimal, for the full programme.
void ZoneProgramme::add_violated_rows(ClpSimplex& lp, const Eigen::VectorXd& d,
                                      const Eigen::MatrixXd& g, double u0, double l0,
                                      double delta, std::vector<Constraint>& rows) {
  constexpr double violation_tolerance = 1e-9;  // in units of Delta, above Clp's tolerance
  const std::size_t max_added = std::max<std::size_t>(64, 2 * options_.working_points_per_side);
  Eigen::VectorXd y(p_), moved(n_);
  std::vector<std::pair<double, Constraint>> violated;
  for (;;) {
    const double* x = lp.primalColumnSolution();
    for (int k = 0; k < p_; ++k) y(k) = x[k];
    moved.noalias() = g * y;
    violated.clear();
    for (Eigen::Index i = 0; i < n_; ++i) {
      const auto s = static_cast<std::size_t>(i);
      if (upper_col_ >= 0 && !in_upper_[s]) {
        const double excess = (d(i) - u0) / delta + moved(i) - x[upper_col_];
        if (excess > violation_tolerance) violated.push_back({excess, {i, Side::upper}});
      }
      if (lower_col_ >= 0 && !in_lower_[s]) {
        const double excess = x[lower_col_] - ((d(i) - l0) / delta + moved(i));
        if (excess > violation_tolerance) violated.push_back({excess, {i, Side::lower}});
      }
    }
    if (violated.empty()) return;
    const std::size_t take = std::min(max_added, violated.size());
    std::partial_sort(violated.begin(), violated.begin() + static_cast<std::ptrdiff_t>(take),
                      violated.end(),
                      [](const auto& a, const auto& b) { return a.first > b.first; });
    std::vector<Constraint> added;
    added.reserve(take);
    for (std::size_t j = 0; j < take; ++j) {
      const Constraint& c = violated[j].second;
      (c.side == Side::upper ? in_upper_ : in_lower_)[static_cast<std::size_t>(c.point)] = 1;
      added.push_back(c);
    }
    const RowBlock more = make_rows(d, g, u0, l0, delta, added);
    lp.addRows(more.count(), more.lower.data(), more.upper.data(), more.starts.data(),
               more.columns.data(), more.elements.data());
    rows.insert(rows.end(), added.begin(), added.end());
    run_simplex(lp);
  }
}

LinearStep ZoneProgramme::solve(const Eigen::VectorXd& d, const Eigen::MatrixXd& g,
                                double delta) {
  const double u0 = d.maxCoeff(), l0 = d.minCoeff();
  const Eigen::VectorXd g_l1 = g.cwiseAbs().rowwise().sum();
  std::vector<Constraint> rows = first_rows(d, g_l1, delta);
  ClpSimplex lp;
  load(lp, make_rows(d, g, u0, l0, delta, rows), 2.0 * g_l1.maxCoeff() + 1.0, 0);
  run_simplex(lp);
  add_violated_rows(lp, d, g, u0, l0, delta, rows);

  binding_.clear();
  multipliers_.clear();
  const double* dual = lp.dualRowSolution();
  for (std::size_t r = 0; r < rows.size(); ++r)
    if (lp.getRowStatus(static_cast<int>(r)) != ClpSimplex::basic) {
      binding_.push_back(rows[r]);
      multipliers_.push_back(std::abs(dual[r]));
    }

  const double* x = lp.primalColumnSolution();
  LinearStep result;
  result.step = delta * Eigen::Map<const Eigen::VectorXd>(x, p_);
  result.predicted = std::max(0.0, -delta * lp.objectiveValue());
  result.rows = rows.size();
  return result;
}

Eigen::VectorXd ZoneProgramme::farthest_step(const Eigen::VectorXd& d, const Eigen::MatrixXd& g,
                                             double delta, const Eigen::RowVectorXd& functional,
                                             double offset_weight) {
  const double u0 = d.maxCoeff(), l0 = d.minCoeff();
  const Eigen::VectorXd g_l1 = g.cwiseAbs().rowwise().sum();
  std::vector<Constraint> rows = first_rows(d, g_l1, delta);
  ClpSimplex lp;
  // Columns: the programme's own, then z_k >= |y_k| (k < p) for the penalty.
  load(lp, make_rows(d, g, u0, l0, delta, rows), 2.0 * g_l1.maxCoeff() + 1.0, p_);

  // Extra rows (constraint generation appends after them): the linearised objective no worse
  // than the current element's (0 in these variables), and z_k - y_k >= 0, z_k + y_k >= 0. No
  // slack is given to the objective: the vertex would spend it on directions where the
  // objective rises to first order (a shift that adds a little to the component), and the
  // verification on the true objective would then find the tolerance used up before the flat
  // directions are. The tolerance is applied there, on the true objective, only.
  RowBlock extra;
  extra.starts.push_back(0);
  auto add = [&](std::initializer_list<std::pair<int, double>> entries, double lo, double hi) {
    for (const auto& [col, value] : entries) {
      extra.columns.push_back(col);
      extra.elements.push_back(value);
    }
    extra.lower.push_back(lo);
    extra.upper.push_back(hi);
    extra.starts.push_back(static_cast<CoinBigIndex>(extra.columns.size()));
  };
  switch (objective_) {
    case ZoneObjective::minimum_zone:  // R' - r' <= 0
      add({{upper_col_, 1.0}, {lower_col_, -1.0}}, -COIN_DBL_MAX, 0.0);
      break;
    case ZoneObjective::maximum_inscribed:  // -r' <= 0
      add({{lower_col_, -1.0}}, -COIN_DBL_MAX, 0.0);
      break;
    case ZoneObjective::minimum_circumscribed:  // R' <= 0
      add({{upper_col_, 1.0}}, -COIN_DBL_MAX, 0.0);
      break;
  }
  for (int k = 0; k < p_; ++k) {
    add({{columns_ + k, 1.0}, {k, -1.0}}, 0.0, COIN_DBL_MAX);
    add({{columns_ + k, 1.0}, {k, 1.0}}, 0.0, COIN_DBL_MAX);
  }
  lp.addRows(extra.count(), extra.lower.data(), extra.upper.data(), extra.starts.data(),
             extra.columns.data(), extra.elements.data());

  // Minimise -(displacement component) / Delta + penalty x sum z. The penalty only breaks ties
  // among steps that move the component equally far: it is far below the functional's
  // coefficients (O(1): a station over the data's size at most).
  constexpr double penalty = 1e-6;
  for (int k = 0; k < p_; ++k) lp.setObjectiveCoefficient(k, -functional(k));
  for (int col : {upper_col_, lower_col_})
    if (col >= 0) lp.setObjectiveCoefficient(col, -0.5 * offset_weight);
  for (int k = 0; k < p_; ++k) lp.setObjectiveCoefficient(columns_ + k, penalty);
  run_simplex(lp);
  add_violated_rows(lp, d, g, u0, l0, delta, rows);
  return delta * Eigen::Map<const Eigen::VectorXd>(lp.primalColumnSolution(), p_);
}

}  // namespace

// ------------------------------------------------------------------ contact polish

namespace {

/// Where fewer contacts hold the optimum than there are unknowns (e.g. the smallest circle on
/// two diametral points), the linear model is flat along the contacts' common tangent and the
/// true objective varies only quadratically there, so comparing objective values cannot place
/// the element closer than about sqrt(rounding * size); at an ill-conditioned vertex (a long,
/// thin straightness zone) the stopping tolerance on the objective likewise leaves the axis
/// loose by the conditioning times that tolerance. This step solves the first-order
/// optimality (Karush-Kuhn-Tucker) conditions on the final contact set by Newton's method
/// instead: d_i(x) = t_side for every contact, sum over contacts of sign_i lambda_i grad d_i(x)
/// = 0 and sum of lambda per side = 1, with the Hessians of the contacts' distances from central
/// differences of their analytic gradients. The residuals are exact, so the accuracy of the
/// solution does not depend on the approximate Hessian. The result is kept only if every
/// multiplier stays non-negative, no other point crosses the zone, and the objective is no
/// worse: otherwise the element from the linear programmes stands.
bool polish_on_contacts(ZoneModel& model, ZoneObjective objective,
                        const std::vector<Constraint>& contacts,
                        const std::vector<double>& multipliers, double scale) {
  const int p = model.parameter_count();
  const int sides = (uses_upper(objective) ? 1 : 0) + (uses_lower(objective) ? 1 : 0);
  auto side_index = [&](Side side) { return side == Side::upper || sides == 1 ? 0 : 1; };
  auto sign = [](Side side) { return side == Side::upper ? 1.0 : -1.0; };

  // Only contacts that carry weight define the optimum; they are worked on in a model of their
  // own points (column k of it is contact k), so each Newton iteration costs O(contacts).
  std::vector<Constraint> active;
  std::vector<double> weight;
  std::vector<Eigen::Index> indices;
  for (std::size_t k = 0; k < contacts.size(); ++k)
    if (multipliers[k] > 1e-12) {
      active.push_back(contacts[k]);
      weight.push_back(multipliers[k]);
      indices.push_back(contacts[k].point);
    }
  const int m = static_cast<int>(active.size());
  // More weighted contacts than unknowns: a degenerate vertex with non-unique multipliers
  // (e.g. three-lobed data), which the linear programmes locate exactly; nothing to solve.
  if (m == 0 || m > p + sides) return false;
  for (Side side : {Side::upper, Side::lower}) {
    if (side == Side::upper ? !uses_upper(objective) : !uses_lower(objective)) continue;
    if (std::none_of(active.begin(), active.end(),
                     [&](const Constraint& c) { return c.side == side; }))
      return false;
  }
  const std::unique_ptr<ZoneModel> local = model.subset(indices);

  // Unknowns z = [x (p), t (one per side), lambda (one per contact)], started at the current
  // element, the contacts' mean distance per side and the programme's multipliers.
  const Eigen::Index unknowns = p + sides + m;
  Eigen::VectorXd z = Eigen::VectorXd::Zero(unknowns);
  Eigen::VectorXd d, d_plus, d_minus;
  Eigen::MatrixXd g, g_plus, g_minus;
  local->evaluate(z.head(p), d, nullptr);
  for (int s = 0; s < sides; ++s) {
    double sum = 0.0, count = 0.0;
    for (int k = 0; k < m; ++k)
      if (side_index(active[static_cast<std::size_t>(k)].side) == s) {
        sum += d(k);
        count += 1.0;
      }
    z(p + s) = sum / count;
  }
  for (int k = 0; k < m; ++k) z(p + sides + k) = weight[static_cast<std::size_t>(k)];

  const double h = 1e-6 * scale;  // central-difference step for the Hessians
  Eigen::VectorXd residual(unknowns);
  Eigen::MatrixXd jacobian(unknowns, unknowns);
  std::vector<Eigen::MatrixXd> hessian(static_cast<std::size_t>(m), Eigen::MatrixXd(p, p));
  bool settled = false;
  for (int iteration = 0; iteration < 30 && !settled; ++iteration) {
    const Eigen::VectorXd x = z.head(p);
    for (int j = 0; j < p; ++j) {
      Eigen::VectorXd e = x;
      e(j) += h;
      local->evaluate(e, d_plus, &g_plus);
      e(j) -= 2.0 * h;
      local->evaluate(e, d_minus, &g_minus);
      for (int k = 0; k < m; ++k)
        hessian[static_cast<std::size_t>(k)].col(j) =
            (g_plus.row(k) - g_minus.row(k)).transpose() / (2.0 * h);
    }
    local->evaluate(x, d, &g);
    residual.setZero();
    jacobian.setZero();
    for (int s = 0; s < sides; ++s) residual(p + s) = -1.0;
    for (int k = 0; k < m; ++k) {
      const Side side = active[static_cast<std::size_t>(k)].side;
      const double lambda = z(p + sides + k), sg = sign(side);
      const int row = p + sides + k, t = p + side_index(side);
      residual.head(p) += sg * lambda * g.row(k).transpose();
      residual(t) += lambda;
      residual(row) = d(k) - z(t);
      jacobian.topLeftCorner(p, p) += sg * lambda * hessian[static_cast<std::size_t>(k)];
      jacobian.block(0, row, p, 1) = sg * g.row(k).transpose();
      jacobian(t, row) = 1.0;
      jacobian.block(row, 0, 1, p) = g.row(k);
      jacobian(row, t) = -1.0;
    }
    const Eigen::FullPivLU<Eigen::MatrixXd> lu(jacobian);
    if (!lu.isInvertible()) return false;
    const Eigen::VectorXd dz = lu.solve(-residual);
    if (!dz.allFinite() || dz.head(p).lpNorm<Eigen::Infinity>() > scale) return false;
    z += dz;
    settled = dz.head(p).lpNorm<Eigen::Infinity>() <= 1e-15 * scale;
  }

  // Keep the refined element only if it is a valid zone at least as good as the current one.
  const Eigen::VectorXd x = z.head(p);
  if (!settled || (z.tail(m).array() < 0.0).any()) return false;
  model.evaluate(Eigen::VectorXd::Zero(p), d, nullptr);
  const double f_start = true_objective(objective, d);
  model.evaluate(x, d, nullptr);
  const double rounding =
      64.0 * std::numeric_limits<double>::epsilon() * std::max(scale, d.cwiseAbs().maxCoeff());
  if (uses_upper(objective) && d.maxCoeff() > z(p) + rounding) return false;
  if (uses_lower(objective) && d.minCoeff() < z(p + side_index(Side::lower)) - rounding)
    return false;
  if (true_objective(objective, d) > f_start + rounding) return false;
  model.move(x);
  return true;
}

}  // namespace

// ------------------------------------------------------------------ uniqueness

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
/// The optimum counts as proven unique when that bound is below `resolution`. Rows of A_B:
/// (g_i, -1 in the column of the contact's bound), over the programme's variables (x, R, r).
bool first_order_unique(const ZoneModel& model, ZoneObjective objective,
                        const std::vector<Constraint>& binding,
                        const std::vector<double>& multipliers, double tolerance,
                        double resolution) {
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
                     double offset_weight, double limit, double resolution,
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
  for (int leg = 0; leg < longest_walk; ++leg) {
    const std::unique_ptr<ZoneModel> near =
        model.subset(near_bounds(objective, distances, reach_factor * box));
    near->evaluate(x, d_near, &g_near);
    ZoneProgramme programme(objective, options, near->point_count(), p);
    const Eigen::VectorXd step = programme.farthest_step(d_near, g_near, box, functional,
                                                         offset_weight);
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

/// The ambiguity of a converged element (docs/chebyshev.md, "Non-unique optima"): 0 when
/// first_order_unique proves the optimum unique; otherwise the largest displacement of a
/// reference point of the gauge at the ends of the walks that push each of its components
/// both ways, with the true objective within the tolerance of the current element's.
void assess_uniqueness(const ZoneModel& model, ZoneObjective objective,
                       const ZoneOptions& options, const ZoneProgramme& last,
                       const Eigen::VectorXd& d, ZoneSummary& summary) {
  const double scale = options.scale > 0.0 ? options.scale : 1.0;
  const double tolerance =
      options.ambiguity_tolerance * std::max(scale, d.cwiseAbs().maxCoeff());
  const double resolution = ambiguity_resolution * scale;
  if (first_order_unique(model, objective, last.binding(), last.multipliers(), tolerance,
                         resolution)) {
    summary.proven_unique = true;
    return;
  }
  const DisplacementGauge gauge = model.displacement_gauge();
  Eigen::VectorXd at_end;
  const double limit = true_objective(objective, d) + tolerance;
  double worst = 0.0;
  try {
    for (Eigen::Index row = 0; row < gauge.functionals.rows(); ++row)
      for (double sign : {1.0, -1.0}) {
        const Eigen::VectorXd end =
            walk(model, objective, options, d, sign * gauge.functionals.row(row),
                 sign * gauge.offset_weight, limit, resolution, at_end,
                 summary.ambiguity_programmes);
        worst = std::max(worst, largest_displacement(model.displacements(end, at_end, d),
                                                     gauge.dimension));
      }
  } catch (const FitError& e) {
    // The element itself is valid; only its uniqueness is unknown, and is reported so.
    summary.ambiguity_failure = e.what();
  }
  summary.ambiguity = worst > resolution ? worst : 0.0;
}

}  // namespace

// ------------------------------------------------------------------ trust-region iteration

ZoneSummary solve_zone(ZoneModel& model, ZoneObjective objective, const ZoneOptions& options) {
  const Eigen::Index n = model.point_count();
  const int p = model.parameter_count();
  const double scale = options.scale > 0.0 ? options.scale : 1.0;
  const double length_tolerance = options.step_tolerance * scale;
  const double largest_radius = scale;
  double delta = options.initial_trust_radius > 0.0 ? options.initial_trust_radius : 1e-3 * scale;
  delta = std::min(std::max(delta, 10.0 * length_tolerance), largest_radius);
  const Eigen::VectorXd no_step = Eigen::VectorXd::Zero(p);

  ZoneSummary summary;
  Eigen::VectorXd d, trial;
  Eigen::MatrixXd g;
  model.evaluate(no_step, d, &g);
  double f = true_objective(objective, d);
  const bool watch_location = objective == ZoneObjective::maximum_inscribed;
  auto escaped = [&] { return watch_location && model.location_offset() > options.location_limit; };

  ZoneProgramme programme(objective, options, n, p);
  bool programme_is_current = false;  // the last linear programme was set up at this element
  if (escaped()) {
    summary.status = ZoneStatus::unbounded;
  } else {
    for (;;) {
      if (summary.iterations >= options.max_iterations) {
        summary.status = ZoneStatus::iteration_limit;
        break;
      }
      ++summary.iterations;
      const LinearStep s = programme.solve(d, g, delta);
      programme_is_current = true;
      summary.largest_working_set = std::max(summary.largest_working_set, s.rows);
      // No predicted improvement beyond the rounding of the distances themselves: the
      // linearisation at a first-order optimum. (A small prediction alone is no proof: where
      // fewer contacts than unknowns hold the optimum, the prediction is the product of the
      // trust region and the distance to the optimum.)
      const double rounding =
          16.0 * std::numeric_limits<double>::epsilon() * std::max(scale, d.cwiseAbs().maxCoeff());
      if (s.predicted <= rounding) break;
      model.evaluate(s.step, trial, nullptr);
      const double f_trial = true_objective(objective, trial);
      const double step_length = s.step.lpNorm<Eigen::Infinity>();
      const double ratio = (f - f_trial) / s.predicted;
      // Classical trust-region update (e.g. Nocedal & Wright, Numerical Optimization, ch. 4).
      if (ratio >= 0.01) {
        model.move(s.step);
        model.evaluate(no_step, d, &g);
        f = true_objective(objective, d);
        programme_is_current = false;
        if (escaped()) {
          summary.status = ZoneStatus::unbounded;
          break;
        }
        if (ratio >= 0.75 && step_length >= 0.5 * delta)
          delta = std::min(2.0 * delta, largest_radius);
      } else {
        delta = 0.25 * step_length;
        // Rejections recur where fewer contacts than unknowns hold the optimum (the linear
        // model is flat along their tangent): solving the optimality conditions on the
        // programme's contacts ends that slow approach at once when the contacts are right.
        if (polish_on_contacts(model, objective, programme.binding(), programme.multipliers(),
                               scale)) {
          model.evaluate(no_step, d, &g);
          f = true_objective(objective, d);
          programme_is_current = false;
          summary.polished = true;
          continue;
        }
      }
      if (step_length <= length_tolerance || delta <= length_tolerance) break;
    }
  }

  if (summary.status == ZoneStatus::converged) {
    if (!programme_is_current) programme.solve(d, g, std::max(delta, 10.0 * length_tolerance));
    if (polish_on_contacts(model, objective, programme.binding(), programme.multipliers(),
                           scale)) {
      model.evaluate(no_step, d, nullptr);
      summary.polished = true;
    }
    // The polish keeps the programme's contacts, so its binding rows and multipliers still
    // describe the optimum.
    if (options.assess_ambiguity) assess_uniqueness(model, objective, options, programme, d, summary);
  }
  // The polish may have run earlier, but the message reports how the final element was found.

  summary.distances = std::move(d);
  const std::string rows = std::to_string(summary.largest_working_set);
  switch (summary.status) {
    case ZoneStatus::converged:
      summary.message = "converged in " + std::to_string(summary.iterations) +
                        " linear programmes (at most " + rows + " rows)" +
                        (summary.polished ? ", contacts refined by Newton's method" : "") +
                        (summary.ambiguity_programmes > 0
                             ? "; not proven unique, " +
                                   std::to_string(summary.ambiguity_programmes) +
                                   " linear programmes measured its ambiguity"
                             : "") +
                        (summary.ambiguity_failure.empty() ? "" : "; ambiguity not assessed") +
                        (options.assess_ambiguity ? "" : "; uniqueness not assessed (off)");
      break;
    case ZoneStatus::iteration_limit:
      summary.message = "stopped at the iteration limit of " +
                        std::to_string(options.max_iterations) +
                        "; the element is the best found, not proven optimal";
      break;
    case ZoneStatus::unbounded:
      summary.message = "unbounded after " + std::to_string(summary.iterations) + " iterations";
      break;
  }
  return summary;
}

ZoneOptions zone_options(const FitOptions& options, double scale, double start_form) {
  ZoneOptions z;
  z.max_iterations = options.max_iterations;
  z.step_tolerance = options.step_tolerance;
  z.scale = scale;
  z.assess_ambiguity = options.assess_ambiguity;
  // The Chebyshev element lies within about the least-squares residual span of the start.
  z.initial_trust_radius = start_form > 0.0 ? start_form : 0.0;
  return z;
}

double zone_radius(ZoneObjective objective, const Eigen::VectorXd& distances) {
  switch (objective) {
    case ZoneObjective::minimum_zone: return 0.5 * (distances.minCoeff() + distances.maxCoeff());
    case ZoneObjective::maximum_inscribed: return distances.minCoeff();
    case ZoneObjective::minimum_circumscribed: return distances.maxCoeff();
  }
  return 0.0;
}

FitSummary zone_fit_summary(FitMethod method, const ZoneSummary& zone, std::size_t point_count) {
  FitSummary s;
  s.method = method;
  s.status = zone.status == ZoneStatus::iteration_limit ? FitStatus::iteration_limit
                                                        : FitStatus::converged;
  s.iterations = zone.iterations;
  s.point_count = point_count;
  s.message = zone.message;
  return s;
}

void warn_on_ambiguity(FitSummary& summary, const char* element, const ZoneSummary& zone) {
  const double ambiguity = zone.ambiguity;
  const bool failed = !zone.ambiguity_failure.empty();
  if (!(ambiguity > ambiguity_warning_length) && !failed) return;
  const std::string e = element;
  const char* method = summary.method == FitMethod::maximum_inscribed       ? "maximum-inscribed"
                       : summary.method == FitMethod::minimum_circumscribed ? "minimum-circumscribed"
                                                                            : "minimum-zone";
  const char* unchanged = summary.method == FitMethod::minimum_zone ? "the zone" : "the size";
  const char* part = e == "circle" ? "centre" : e == "plane" ? "mid-plane" : "axis";
  if (failed) {
    summary.warnings.push_back("the uniqueness of the " + std::string(method) + " " + e +
                               " could not be assessed (" + zone.ambiguity_failure +
                               "); its " + part + " may not be unique");
    return;
  }
  std::string moves, basis;
  if (e == "circle") {
    moves = "its centre can move by up to " + format_number(ambiguity, 6) + " mm";
    basis = "this centre";
  } else if (e == "plane") {
    moves = "its mid-plane can move by up to " + format_number(ambiguity, 6) +
            " mm at the corners of the points' extent";
    basis = "this plane";
  } else {
    moves = "its axis can move by up to " + format_number(ambiguity, 6) + " mm at the ends";
    basis = "this axis";
  }
  summary.warnings.push_back("the " + std::string(method) + " " + e + " is not unique: " + moves +
                             " without changing " + unchanged + "; figures based on " + basis +
                             " carry that ambiguity");
}

void throw_unbounded_inscribed(const char* element, double coverage_deg) {
  const bool circle = std::string(element) == "circle";
  throw FitError(std::string("maximum-inscribed ") + element +
                 " is unbounded: the points cover only " + format_number(coverage_deg, 1) +
                 " degrees around the least-squares " + (circle ? "centre" : "axis") +
                 " and do not surround a centre (an inscribed " + element +
                 " needs points all round, over more than 180 degrees)");
}

void require_enclosing_points(ZoneObjective objective, const char* element, double coverage_deg) {
  if (objective == ZoneObjective::maximum_inscribed && coverage_deg < 180.0)
    throw_unbounded_inscribed(element, coverage_deg);
}

}  // namespace cylzone::detail
