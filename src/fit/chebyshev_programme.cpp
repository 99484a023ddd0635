// The linear programme of one step of the Chebyshev engine and of its ambiguity walks
// (fit/detail/chebyshev_programme.hpp). This is the only file that talks to Clp.
#include "fit/detail/chebyshev_programme.hpp"

#include <ClpSimplex.hpp>
#include <CoinError.hpp>
#include <CoinPackedMatrix.hpp>
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <initializer_list>
#include <string>
#include <utility>
#include <vector>

#include "cylzone/core/errors.hpp"

namespace cylzone::detail::zone_lp {

/// Rows of the programme in row-major (CSR) form, as Clp takes them.
struct RowBlock {
  std::vector<double> lower, upper, elements;
  std::vector<int> columns;
  std::vector<CoinBigIndex> starts;
  int count() const { return static_cast<int>(lower.size()); }
};

// The programme's per-point scratch (cand_, order_, g_l1_, moved_, violated_) is kept between
// the programmes of one fit where that saves allocations that matter: a Monte Carlo trial's
// few hundred points. On a dense cloud (datum A's 1.9 million points, a scanned bore's few
// hundred thousand) an allocation is nothing beside a pass over the points, but holding the
// arrays together would raise the peak by some 40 bytes a point (61 MB on the 5,000,000-point
// scan, measured), so there each is released where the local it replaced went out of scope.
namespace {
constexpr Eigen::Index scratch_kept_up_to = Eigen::Index(1) << 16;  // points

template <typename T>
void release(std::vector<T>& v) {
  std::vector<T>().swap(v);
}
void release(Eigen::VectorXd& v) { v.resize(0); }
}  // namespace

void row_l1_norms(const Eigen::MatrixXd& g, Eigen::VectorXd& out) {
  const Eigen::Index n = g.rows(), p = g.cols();
  // Above 4 columns Eigen's vectorised partial reduction adds them in pairs (its four-way
  // unrolled loop), another order: that expression itself then.
  if (p == 0 || p > 4) {
    out = g.cwiseAbs().rowwise().sum();
    return;
  }
  out.resize(n);
  double* __restrict o = out.data();
  const double* column = g.data();
  for (Eigen::Index i = 0; i < n; ++i) o[i] = std::abs(column[i]);
  for (Eigen::Index k = 1; k < p; ++k) {
    column = g.data() + k * n;
    for (Eigen::Index i = 0; i < n; ++i) o[i] += std::abs(column[i]);
  }
}

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
  // Every index is written at the next free place and kept by advancing the count: the same
  // list, in the same order, without a branch or a growth check per point.
  out.resize(static_cast<std::size_t>(n_));
  Eigen::Index* kept = out.data();
  std::size_t count = 0;
  for (Eigen::Index i = 0; i < n_; ++i) {
    const double gap = side == Side::upper ? bound - d(i) : d(i) - bound;
    kept[count] = i;
    count += gap <= delta * (g_l1(i) + reach) * (1.0 + 1e-9) + 1e-300 ? 1 : 0;
  }
  out.resize(count);
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
    // take() for every candidate, the rows written in place (at most one per candidate).
    const std::size_t base = rows.size();
    rows.resize(base + cand.size());
    Constraint* out = rows.data() + base;
    std::size_t added = 0;
    for (Eigen::Index i : cand) {
      unsigned char& in = member[static_cast<std::size_t>(i)];
      if (!in) {
        in = 1;
        out[added++] = {i, side};
      }
    }
    rows.resize(base + added);
    return;
  }
  // The points nearest the bound ...
  const std::size_t k = std::min(options_.working_points_per_side, cand.size());
  rows.reserve(rows.size() + 2 * k + 1 + binding_.size());
  std::vector<Eigen::Index>& order = order_;
  order.assign(cand.begin(), cand.end());
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

void ZoneProgramme::first_rows(const Eigen::VectorXd& d, const Eigen::VectorXd& g_l1,
                               double delta, std::vector<Constraint>& rows) {
  in_upper_.assign(static_cast<std::size_t>(n_), 0);
  in_lower_.assign(static_cast<std::size_t>(n_), 0);
  rows.clear();
  std::vector<Eigen::Index>& cand = cand_;
  cand.reserve(static_cast<std::size_t>(n_));
  if (upper_col_ >= 0) {
    candidates(d, g_l1, delta, Side::upper, cand);
    initial_rows(d, cand, Side::upper, rows);
  }
  if (lower_col_ >= 0) {
    candidates(d, g_l1, delta, Side::lower, cand);
    initial_rows(d, cand, Side::lower, rows);
  }
  if (n_ > scratch_kept_up_to) {
    release(cand_);
    release(order_);
  }
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

namespace {

/// What Clp's status codes mean (ClpModel::status(), secondaryStatus()), for messages.
std::string describe_status(int status) {
  switch (status) {
    case 0: return "reported optimal";
    case 1: return "reported it infeasible";
    case 2: return "reported it unbounded";
    case 3: return "stopped at its iteration limit";
    case 4: return "stopped on numerical errors";
    case 5: return "was stopped by an event handler";
    default: return "ended with status " + std::to_string(status);
  }
}

std::string scientific(double value) {
  char text[32];
  std::snprintf(text, sizeof text, "%.3g", value);
  return text;
}

/// The largest optimum either solver may return (in units of Delta): the current element is
/// feasible with objective 0, so anything above this is a solver failure (run_simplex).
constexpr double optimum_ceiling = 1e-9;

}  // namespace

// y = 0 with R' = r' = 0 is feasible with objective 0 (the extreme points' rows are present),
// so an optimum above 0, or any other outcome, is a solver failure, not a property of the
// data. Clp's status 0 ("optimal") alone is not enough: on a degenerate programme (many tied
// contacts: a round bore, coordinates rounded to a grid, duplicated sections) the
// warm-started dual simplex can stop at a basis it calls optimal whose objective is above 0
// (its cost perturbation and tolerances; earlier versions reported that as "the linear
// programme failed (Clp status 0, secondary 0)"). It is retried from the slack basis with the
// primal simplex and no perturbation, then with the dual simplex the same way; only if all
// three fail is the programme reported, saying what the solver returned.
void ZoneProgramme::run_simplex(ClpSimplex& lp) const {
  auto solved = [&] { return lp.isProvenOptimal() && lp.objectiveValue() <= optimum_ceiling; };
  try {
    lp.dual();
    if (!solved()) {
      lp.setPerturbation(100);  // off
      lp.allSlackBasis(true);
      lp.primal();
    }
    if (!solved()) {
      lp.allSlackBasis(true);
      lp.dual();
    }
  } catch (const CoinError& e) {
    throw FitError("Chebyshev fit: the linear programme solver (Clp) failed: " + e.message());
  }
  if (solved()) return;
  const std::string size = " (" + std::to_string(lp.numberRows()) + " rows, " +
                           std::to_string(lp.numberColumns()) + " columns)";
  if (lp.isProvenOptimal())
    throw FitError("Chebyshev fit: the linear programme solver (Clp) reported an optimum of " +
                   scientific(lp.objectiveValue()) +
                   " although the current element, of objective 0, is feasible: a numerical "
                   "failure on a degenerate programme" + size + ", not a property of the data");
  throw FitError("Chebyshev fit: the linear programme solver (Clp) " +
                 describe_status(lp.status()) + " (secondary status " +
                 std::to_string(lp.secondaryStatus()) +
                 ") on a programme whose current element is feasible" + size);
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

const std::vector<Constraint>& ZoneProgramme::violated_rows(const double* x,
                                                           const Eigen::VectorXd& d,
                                                           const Eigen::MatrixXd& g, double u0,
                                                           double l0, double delta) {
  constexpr double violation_tolerance = 1e-9;  // in units of Delta, above the solvers' tolerance
  const std::size_t max_added = std::max<std::size_t>(64, 2 * options_.working_points_per_side);
  Eigen::VectorXd& y = y_;
  Eigen::VectorXd& moved = moved_;
  y.resize(p_);
  moved.resize(n_);
  std::vector<std::pair<double, Constraint>>& violated = violated_;
  violated.clear();
  for (int k = 0; k < p_; ++k) y(k) = x[k];
  moved.noalias() = g * y;
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
  const std::size_t take = std::min(max_added, violated.size());
  std::partial_sort(violated.begin(), violated.begin() + static_cast<std::ptrdiff_t>(take),
                    violated.end(), [](const auto& a, const auto& b) { return a.first > b.first; });
  std::vector<Constraint>& added = added_;
  added.clear();
  for (std::size_t j = 0; j < take; ++j) {
    const Constraint& c = violated[j].second;
    (c.side == Side::upper ? in_upper_ : in_lower_)[static_cast<std::size_t>(c.point)] = 1;
    added.push_back(c);
  }
  if (n_ > scratch_kept_up_to) {
    release(moved_);
    release(violated_);
  }
  return added;
}

// Constraint generation: check every point against the step, add the violated rows (worst
// first) and re-solve from the previous basis with the dual simplex, until none is violated.
// The relaxation's optimum is then feasible, hence optimal, for the full programme.
void ZoneProgramme::add_violated_rows(ClpSimplex& lp, const Eigen::VectorXd& d,
                                      const Eigen::MatrixXd& g, double u0, double l0,
                                      double delta, std::vector<Constraint>& rows) {
  for (;;) {
    const std::vector<Constraint>& added =
        violated_rows(lp.primalColumnSolution(), d, g, u0, l0, delta);
    if (added.empty()) return;
    const RowBlock more = make_rows(d, g, u0, l0, delta, added);
    lp.addRows(more.count(), more.lower.data(), more.upper.data(), more.starts.data(),
               more.columns.data(), more.elements.data());
    rows.insert(rows.end(), added.begin(), added.end());
    run_simplex(lp);
  }
}

void ZoneProgramme::seed(const std::vector<Constraint>& contacts) {
  binding_ = contacts;
  multipliers_.assign(contacts.size(), 0.0);
  dense_basis_.clear();
  if (static_cast<int>(contacts.size()) != columns_) return;
  dense_basis_.reserve(contacts.size());  // one allocation, not a growth by doubling
  for (const Constraint& c : contacts) {
    BasisEntry e;
    e.row = true;
    e.constraint = c;
    dense_basis_.push_back(e);
  }
}

LinearStep ZoneProgramme::solve(const Eigen::VectorXd& d, const Eigen::MatrixXd& g,
                                double delta) {
  LinearStep result;
  if (options_.lp_solver == LpSolver::dense) {
    const bool solved = solve_dense(d, g, delta, result);
    if (n_ > scratch_kept_up_to) release(g_l1_);
    if (solved) return result;
    ++fallbacks_;
  }
  return solve_clp(d, g, delta);
}

LinearStep ZoneProgramme::solve_clp(const Eigen::VectorXd& d, const Eigen::MatrixXd& g,
                                    double delta) {
  const double u0 = d.maxCoeff(), l0 = d.minCoeff();
  const Eigen::VectorXd g_l1 = g.cwiseAbs().rowwise().sum();
  std::vector<Constraint> rows;
  first_rows(d, g_l1, delta, rows);
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

template <int P, int N>
void ZoneProgramme::set_dense_rows_of(DenseLp::Id first, const Constraint* c, std::size_t count,
                                      const Eigen::VectorXd& d, const Eigen::MatrixXd& g,
                                      double u0, double l0, double delta,
                                      ExtremeRows* extremes) {
  // One loop over the rows with the gradient columns' addresses held: the same coefficients and
  // right-hand sides, computed the same way, as one call per row. The extreme rows are the
  // first of largest (least) d in row order: a later row only where strictly beyond.
  const int p = P > 0 ? P : p_;
  // The bound columns follow the step's: at a compile-time shape their places are constants
  // (P, and P + 1 where both bounds are columns), so the constant entries fold into the row's
  // norm (the same products and sums in the same order).
  constexpr bool shaped = P > 0 && N > 0;
  const int uc = shaped ? P : upper_col_;
  const int lc = shaped ? (N == P + 2 ? P + 1 : P) : lower_col_;
  const bool both = shaped ? N == P + 2 : upper_col_ >= 0 && lower_col_ >= 0;
  const double* gk[DenseLp::max_columns] = {};
  for (int k = 0; k < p; ++k) gk[k] = g.data() + static_cast<std::ptrdiff_t>(k) * g.rows();
  double a[DenseLp::max_columns] = {};
  long top = -1, bottom = -1;
  double top_d = 0.0, bottom_d = 0.0;
  for (std::size_t r = 0; r < count; ++r) {
    const Eigen::Index i = c[r].point;
    const double di = d(i);
    if (c[r].side == Side::upper) {  // g_i.y - R' <= -(d_i - U0)/Delta
      for (int k = 0; k < p; ++k) a[k] = gk[k][i];
      a[uc] = -1.0;
      if (both) a[lc] = 0.0;
      dense_.set_row_of<N>(first + static_cast<DenseLp::Id>(r), a, -(di - u0) / delta);
      if (top < 0 || di > top_d) {
        top = static_cast<long>(r);
        top_d = di;
      }
    } else {  // g_i.y - r' >= -(d_i - L0)/Delta, i.e. -g_i.y + r' <= (d_i - L0)/Delta
      for (int k = 0; k < p; ++k) a[k] = -gk[k][i];
      a[lc] = 1.0;
      if (both) a[uc] = 0.0;
      dense_.set_row_of<N>(first + static_cast<DenseLp::Id>(r), a, (di - l0) / delta);
      if (bottom < 0 || di < bottom_d) {
        bottom = static_cast<long>(r);
        bottom_d = di;
      }
    }
  }
  if (extremes) *extremes = {top, bottom};
}

void ZoneProgramme::set_dense_rows(DenseLp::Id first, const Constraint* c, std::size_t count,
                                   const Eigen::VectorXd& d, const Eigen::MatrixXd& g, double u0,
                                   double l0, double delta, ExtremeRows* extremes) {
  // The shapes of the fits' programmes: an axis (4 step columns) or a circle's or plane's
  // centre (2 or 3), with one or two zone bounds; any other shape by the general loop.
  const int sides = columns_ - p_;
  auto set = &ZoneProgramme::set_dense_rows_of<0, 0>;
  if (p_ == 4) set = sides == 1 ? &ZoneProgramme::set_dense_rows_of<4, 5>
                                : &ZoneProgramme::set_dense_rows_of<4, 6>;
  if (p_ == 3) set = sides == 1 ? &ZoneProgramme::set_dense_rows_of<3, 4>
                                : &ZoneProgramme::set_dense_rows_of<3, 5>;
  if (p_ == 2) set = sides == 1 ? &ZoneProgramme::set_dense_rows_of<2, 3>
                                : &ZoneProgramme::set_dense_rows_of<2, 4>;
  (this->*set)(first, c, count, d, g, u0, l0, delta, extremes);
}

// The programme of solve_clp with the dense dual simplex: the same working set and constraint
// generation, the same variables, bounds and costs, so the same optimum. The dual simplex needs
// a dual-feasible first basis, and this programme has an obvious one: the extreme points' rows
// (the top for R', the bottom for r', each with multiplier 1, as their columns' costs require)
// and, for every step variable, the box bound on the side that balances those rows' gradients:
// the multipliers are then 1 and |sum of the rows' g_k|, all non-negative.
bool ZoneProgramme::solve_dense(const Eigen::VectorXd& d, const Eigen::MatrixXd& g, double delta,
                                LinearStep& result) {
  if (columns_ > DenseLp::max_columns) return false;
  const double u0 = d.maxCoeff(), l0 = d.minCoeff();
  // The sums of solve_clp's expression (row_l1_norms), into the programme's scratch.
  Eigen::VectorXd& g_l1 = g_l1_;
  row_l1_norms(g, g_l1);
  std::vector<Constraint>& rows = rows_;
  first_rows(d, g_l1, delta, rows);
  // As in load(): the bound columns' box is never active (twice the reach of the rows).
  const double reach = 2.0 * g_l1.maxCoeff() + 1.0;
  DenseLp::Vector cost = DenseLp::Vector::Zero(columns_);
  DenseLp::Vector lower = DenseLp::Vector::Constant(columns_, -1.0);
  DenseLp::Vector upper = DenseLp::Vector::Constant(columns_, 1.0);
  for (int col : {upper_col_, lower_col_})
    if (col >= 0) {
      lower(col) = -reach;
      upper(col) = reach;
    }
  if (upper_col_ >= 0) cost(upper_col_) = 1.0;   // min R' (- r')
  if (lower_col_ >= 0) cost(lower_col_) = -1.0;  // max r'
  dense_.reset(cost, lower, upper);
  dense_.reserve(rows.size());

  // The first basis: the most extreme row of each side present, and the balancing box bounds.
  DenseLp::Id basis[DenseLp::max_columns];
  int filled = 0;
  // Sum of the basis rows' y-normals (at most max_columns entries: no allocation).
  DenseLp::Vector balance = DenseLp::Vector::Zero(p_);
  const DenseLp::Id first = dense_.append_rows(rows.size());
  ExtremeRows extremes;  // found while the rows are set
  set_dense_rows(first, rows.data(), rows.size(), d, g, u0, l0, delta, &extremes);
  const long top = extremes.top, bottom = extremes.bottom;
  if (upper_col_ >= 0) {
    if (top < 0) return false;
    basis[filled++] = top;
    balance += g.row(rows[static_cast<std::size_t>(top)].point).transpose();
  }
  if (lower_col_ >= 0) {
    if (bottom < 0) return false;
    basis[filled++] = bottom;
    balance -= g.row(rows[static_cast<std::size_t>(bottom)].point).transpose();
  }
  // Stationarity in y: balance_k + mu_k s_k = 0 with the bound s_k y_k <= 1, mu_k >= 0.
  for (int k = 0; k < p_; ++k)
    basis[filled++] = balance(k) > 0.0 ? DenseLp::lower_bound(k) : DenseLp::upper_bound(k);
  // A warm start: the previous programme's optimal basis, where all its rows are present and its
  // multipliers (which depend on the gradients only) are still non-negative. Consecutive
  // programmes of a descent are at nearby elements and mostly share their contacts.
  DenseLp::Id warm[DenseLp::max_columns];
  bool warm_ok = static_cast<int>(dense_basis_.size()) == columns_;
  for (int j = 0; warm_ok && j < columns_; ++j) {
    const BasisEntry& e = dense_basis_[static_cast<std::size_t>(j)];
    if (!e.row) {
      warm[j] = e.bound;
      continue;
    }
    // A row is in the working set exactly where its point is marked a member on its side, so
    // the search (which would run through every row to fail) is made only where it finds it.
    const auto& member = e.constraint.side == Side::upper ? in_upper_ : in_lower_;
    warm_ok = member[static_cast<std::size_t>(e.constraint.point)] != 0;
    if (!warm_ok) break;
    const auto at = std::find_if(rows.begin(), rows.end(), [&](const Constraint& c) {
      return c.point == e.constraint.point && c.side == e.constraint.side;
    });
    warm_ok = at != rows.end();
    if (warm_ok) warm[j] = static_cast<DenseLp::Id>(at - rows.begin());
  }
  if (!(warm_ok && dense_.set_basis(warm)) && !dense_.set_basis(basis)) return false;
  if (dense_.solve() != DenseLp::Status::optimal) return false;
  // Constraint generation, resumed from the previous optimal basis.
  for (;;) {
    const std::vector<Constraint>& added =
        violated_rows(dense_.x().data(), d, g, u0, l0, delta);
    if (added.empty()) break;
    const DenseLp::Id next = dense_.append_rows(added.size());
    set_dense_rows(next, added.data(), added.size(), d, g, u0, l0, delta);
    rows.insert(rows.end(), added.begin(), added.end());
    if (dense_.solve() != DenseLp::Status::optimal) return false;
  }
  // As for Clp (run_simplex): the current element is feasible with objective 0, so an optimum
  // above that is a failure, not a property of the data.
  const double objective = dense_.objective();
  if (!(objective <= optimum_ceiling)) return false;

  dense_basis_.clear();
  for (int j = 0; j < columns_; ++j) {
    const DenseLp::Id id = dense_.basis()[j];
    BasisEntry e;
    e.row = DenseLp::is_row(id);
    if (e.row)
      e.constraint = rows[static_cast<std::size_t>(id)];
    else
      e.bound = id;
    dense_basis_.push_back(e);
  }
  // The basis rows are the binding ones (in row order, as Clp lists them).
  std::pair<DenseLp::Id, double> active[DenseLp::max_columns];
  int active_count = 0;
  for (int j = 0; j < columns_; ++j)
    if (DenseLp::is_row(dense_.basis()[j]))
      active[active_count++] = {dense_.basis()[j], std::max(0.0, dense_.multipliers()(j))};
  // In row order (the rows of a basis are distinct, so the order is unique); by insertion: at
  // most max_columns entries.
  for (int j = 1; j < active_count; ++j)
    for (int i = j; i > 0 && active[i].first < active[i - 1].first; --i)
      std::swap(active[i], active[i - 1]);
  binding_.clear();
  multipliers_.clear();
  for (int j = 0; j < active_count; ++j) {
    const auto& [row, lambda] = active[j];
    binding_.push_back(rows[static_cast<std::size_t>(row)]);
    multipliers_.push_back(lambda);
  }
  result.step = delta * Eigen::Map<const Eigen::VectorXd>(dense_.x().data(), p_);
  result.predicted = std::max(0.0, -delta * objective);
  result.rows = rows.size();
  return true;
}

Eigen::VectorXd ZoneProgramme::farthest_step(const Eigen::VectorXd& d, const Eigen::MatrixXd& g,
                                             double delta, const Eigen::RowVectorXd& functional,
                                             double offset_weight, double allowance) {
  const double u0 = d.maxCoeff(), l0 = d.minCoeff();
  const Eigen::VectorXd g_l1 = g.cwiseAbs().rowwise().sum();
  std::vector<Constraint> rows;
  first_rows(d, g_l1, delta, rows);
  ClpSimplex lp;
  // Columns: the programme's own, then z_k >= |y_k| (k < p) for the penalty.
  load(lp, make_rows(d, g, u0, l0, delta, rows), 2.0 * g_l1.maxCoeff() + 1.0, p_);

  // Extra rows (constraint generation appends after them): the linearised objective no worse
  // than the current element's (0 in these variables; `allowance` worse for an exploring
  // walk), and z_k - y_k >= 0, z_k + y_k >= 0. No
  // slack is given to the objective: the vertex would spend it on directions where the
  // objective rises to first order (a shift that adds a little to the component), and the
  // verification on the true objective would then find the tolerance used up before the flat
  // directions are. The tolerance is applied there, on the true objective, only.
  const double worse = std::max(0.0, allowance) / delta;
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
      add({{upper_col_, 1.0}, {lower_col_, -1.0}}, -COIN_DBL_MAX, worse);
      break;
    case ZoneObjective::maximum_inscribed:  // -r' <= 0
      add({{lower_col_, -1.0}}, -COIN_DBL_MAX, worse);
      break;
    case ZoneObjective::minimum_circumscribed:  // R' <= 0
      add({{upper_col_, 1.0}}, -COIN_DBL_MAX, worse);
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

}  // namespace cylzone::detail::zone_lp
