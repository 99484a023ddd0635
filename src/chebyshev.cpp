// Sequential linear programming for Chebyshev and mating-envelope fits (see
// src/detail/chebyshev.hpp and docs/chebyshev.md). This is the only file that talks to Clp.
#include "detail/chebyshev.hpp"

#include <ClpSimplex.hpp>
#include <CoinError.hpp>
#include <CoinPackedMatrix.hpp>
#include <Eigen/Geometry>
#include <Eigen/LU>
#include <algorithm>
#include <cmath>
#include <limits>
#include <memory>
#include <stdexcept>
#include <utility>
#include <vector>

#include "cylzone/errors.hpp"
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

std::unique_ptr<ZoneModel> CircleZoneModel::subset(const std::vector<Eigen::Index>& indices) const {
  auto copy = std::make_unique<CircleZoneModel>(*this);
  copy->points_ = points_(Eigen::all, indices);
  copy->local_ = local_(Eigen::all, indices);
  return copy;
}

double CircleZoneModel::location_offset() const { return (centre_ - centroid_).norm(); }

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
  auto copy = std::make_unique<AxisZoneModel>(*this);
  copy->points_ = points_(Eigen::all, indices);
  copy->local_ = local_(Eigen::all, indices);
  return copy;
}

double AxisZoneModel::location_offset() const { return (centroid_ - origin_).norm(); }

Axis AxisZoneModel::axis() const { return Axis{origin_, basis_.col(2)}; }

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
  auto copy = std::make_unique<PlaneZoneModel>(*this);
  copy->points_ = points_(Eigen::all, indices);
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

 private:
  void candidates(const Eigen::VectorXd& d, const Eigen::VectorXd& g_l1, double delta, Side side,
                  std::vector<Eigen::Index>& out) const;
  void initial_rows(const Eigen::VectorXd& d, const std::vector<Eigen::Index>& cand, Side side,
                    std::vector<Constraint>& rows);
  RowBlock make_rows(const Eigen::VectorXd& d, const Eigen::MatrixXd& g, double u0, double l0,
                     double delta, const std::vector<Constraint>& rows) const;
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
// from scratch and otherwise reported.
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

LinearStep ZoneProgramme::solve(const Eigen::VectorXd& d, const Eigen::MatrixXd& g,
                                double delta) {
  const double u0 = d.maxCoeff(), l0 = d.minCoeff();
  const Eigen::VectorXd g_l1 = g.cwiseAbs().rowwise().sum();
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

  // Column bounds and costs. The bound variables are free in principle; at the optimum
  // |R'|, |r'| <= max_i |g_i|_1 (the extreme point's row is present and |g_i.y| <= |g_i|_1), so
  // a box of twice that is never active and keeps every column bounded.
  const double reach = 2.0 * g_l1.maxCoeff() + 1.0;
  std::vector<double> column_lower(static_cast<std::size_t>(columns_), -1.0);
  std::vector<double> column_upper(static_cast<std::size_t>(columns_), 1.0);
  std::vector<double> cost(static_cast<std::size_t>(columns_), 0.0);
  for (int col : {upper_col_, lower_col_}) {
    if (col < 0) continue;
    column_lower[static_cast<std::size_t>(col)] = -reach;
    column_upper[static_cast<std::size_t>(col)] = reach;
  }
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
  const RowBlock first = make_rows(d, g, u0, l0, delta, rows);
  std::vector<int> lengths(rows.size());
  for (std::size_t r = 0; r < rows.size(); ++r)
    lengths[r] = static_cast<int>(first.starts[r + 1] - first.starts[r]);
  const CoinPackedMatrix matrix(false, columns_, first.count(),
                                static_cast<CoinBigIndex>(first.elements.size()),
                                first.elements.data(), first.columns.data(), first.starts.data(),
                                lengths.data());

  ClpSimplex lp;
  lp.setLogLevel(0);  // the numeric core never prints
  // Tighter than Clp's defaults (1e-7): the rows are in units of Delta, and the step must be
  // accurate well below the tolerance of the outer iteration.
  lp.setPrimalTolerance(1e-10);
  lp.setDualTolerance(1e-10);
  // The rows are already scaled (coefficients O(1), right-hand sides in units of Delta); Clp's
  // own scaling was seen to end the dual simplex at a wrong "optimal" basis on such models.
  lp.scaling(0);
  lp.loadProblem(matrix, column_lower.data(), column_upper.data(), cost.data(),
                 first.lower.data(), first.upper.data());
  run_simplex(lp);

  // Constraint generation: check every point against the step, add the violated rows (worst
  // first) and re-solve from the previous basis with the dual simplex, until none is violated.
  // The relaxation's optimum is then feasible, hence optimal, for the full programme.
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
    if (violated.empty()) break;
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

  binding_.clear();
  multipliers_.clear();
  const double* dual = lp.dualRowSolution();
  for (std::size_t r = 0; r < rows.size(); ++r)
    if (lp.getRowStatus(static_cast<int>(r)) != ClpSimplex::basic) {
      binding_.push_back(rows[r]);
      multipliers_.push_back(std::abs(dual[r]));
    }

  LinearStep result;
  result.step = delta * y;
  result.predicted = std::max(0.0, -delta * lp.objectiveValue());
  result.rows = rows.size();
  return result;
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
  }
  // The polish may have run earlier, but the message reports how the final element was found.

  summary.distances = std::move(d);
  const std::string rows = std::to_string(summary.largest_working_set);
  switch (summary.status) {
    case ZoneStatus::converged:
      summary.message = "converged in " + std::to_string(summary.iterations) +
                        " linear programmes (at most " + rows + " rows)" +
                        (summary.polished ? ", contacts refined by Newton's method" : "");
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
