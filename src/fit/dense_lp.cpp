// The dense dual simplex for the Chebyshev engine's small programmes (fit/detail/dense_lp.hpp
// states the method and its sources).
#include "fit/detail/dense_lp.hpp"

#include <algorithm>
#include <cmath>
#include <cstring>
#include <limits>

namespace cylzone::detail::zone_lp {

namespace {

constexpr double infinity = std::numeric_limits<double>::infinity();

/// A fixed order of all constraints (bounds of column 0, 1, ..., then rows) for Bland's rule.
long rank_of(DenseLp::Id id, int columns) {
  return DenseLp::is_row(id) ? 2L * columns + id : -1 - id;
}

/// Row i's score in price_rows: true (and q, best set) if it is taken.
inline bool take_row(const RowView& rows, std::size_t i, double v, double tolerance, bool first,
                     double& best, long& q) {
  if (!(v > tolerance) || rows.in_basis[i]) return false;
  const double score = v * rows.inv_norm[i];
  if (!first && !(score > best)) return false;
  best = score;
  q = static_cast<long>(i);
  return true;
}

/// price_rows for N columns (N a compile-time constant: the column loop unrolled).
template <int N>
bool price_rows_fixed(const RowView& rows, const double* x, double tolerance, bool first,
                      double& best, long& q) {
  const double* const* a = rows.columns;
  const double* b = rows.rhs;
  const std::size_t m = rows.m;
  bool found = false;
  std::size_t i = 0;
#if defined(__GNUC__)
  // Two rows per operation: the lanes hold rows i and i + 1, each the scalar loop's roundings.
  typedef double Pair __attribute__((vector_size(16)));
  Pair xs[N];
  for (int k = 0; k < N; ++k) xs[k] = Pair{x[k], x[k]};
  for (; i + 2 <= m; i += 2) {
    Pair v;
    std::memcpy(&v, b + i, sizeof v);
    v = -v;
    for (int k = 0; k < N; ++k) {
      Pair ak;
      std::memcpy(&ak, a[k] + i, sizeof ak);
      v += ak * xs[k];
    }
    if (!(v[0] > tolerance) && !(v[1] > tolerance)) continue;
    for (std::size_t l = 0; l < 2; ++l)
      if (take_row(rows, i + l, v[l], tolerance, first, best, q)) {
        if (first) return true;
        found = true;
      }
  }
#endif
  for (; i < m; ++i) {
    double v = -b[i];
    for (int k = 0; k < N; ++k) v += a[k][i] * x[k];
    if (take_row(rows, i, v, tolerance, first, best, q)) {
      if (first) return true;
      found = true;
    }
  }
  return found;
}

}  // namespace

bool price_rows(const RowView& rows, const double* x, double tolerance, bool first, double& best,
                long& q) {
  switch (rows.n) {
    case 1: return price_rows_fixed<1>(rows, x, tolerance, first, best, q);
    case 2: return price_rows_fixed<2>(rows, x, tolerance, first, best, q);
    case 3: return price_rows_fixed<3>(rows, x, tolerance, first, best, q);
    case 4: return price_rows_fixed<4>(rows, x, tolerance, first, best, q);
    case 5: return price_rows_fixed<5>(rows, x, tolerance, first, best, q);
    case 6: return price_rows_fixed<6>(rows, x, tolerance, first, best, q);
    case 7: return price_rows_fixed<7>(rows, x, tolerance, first, best, q);
    case 8: return price_rows_fixed<8>(rows, x, tolerance, first, best, q);
    default: return false;
  }
}

void DenseLp::reset(const Vector& cost, const Vector& lower, const Vector& upper) {
  cost_ = cost;
  lower_ = lower;
  upper_ = upper;
  x_.setZero(cost.size());
  lambda_.setZero(cost.size());
  for (Column& column : a_) column.clear();
  rhs_.clear();
  inv_norm_.clear();
  in_basis_.clear();
  factored_ = false;
  iterations_ = 0;
}

void DenseLp::reserve(std::size_t rows) {
  for (int k = 0; k < columns(); ++k) a_[k].reserve(rows);
  rhs_.reserve(rows);
  inv_norm_.reserve(rows);
  in_basis_.reserve(rows);
}

DenseLp::Id DenseLp::add_row(const double* a, double b) {
  const Id i = append_rows(1);
  set_row(i, a, b);
  return i;
}

DenseLp::Id DenseLp::append_rows(std::size_t count) {
  const std::size_t first = rhs_.size(), size = first + count;
  for (int k = 0; k < columns(); ++k) a_[k].resize(size);
  rhs_.resize(size);
  inv_norm_.resize(size);
  in_basis_.resize(size, 0);
  return static_cast<Id>(first);
}

void DenseLp::normal(Id id, double* a, double& b) const {
  const int n = columns();
  if (is_row(id)) {
    const auto i = static_cast<std::size_t>(id);
    for (int k = 0; k < n; ++k) a[k] = a_[k][i];
    b = rhs_[i];
    return;
  }
  std::fill(a, a + n, 0.0);
  const Id bound = -1 - id;  // 2k (upper) or 2k + 1 (lower)
  const int k = static_cast<int>(bound / 2);
  if (bound % 2 == 0) {  // x_k <= upper_k
    a[k] = 1.0;
    b = upper_(k);
  } else {  // -x_k <= -lower_k
    a[k] = -1.0;
    b = -lower_(k);
  }
}

namespace {

/// The inverse of an n x n basis (its top left block, factored in place) into `inverse`; false
/// where it is singular or too nearly so. N = n where the caller knows it at compile time (the
/// small LU's loops unrolled, the same operations: the same bits), else 0.
template <int N, class Basis>
bool invert_basis(Basis& basis, int n, DenseLp::Matrix& inverse) {
  int p[DenseLp::max_columns], q[DenseLp::max_columns];
  if (!full_piv_lu_in_place<N>(basis, n, p, q)) return false;
  // Full pivoting puts the pivots on the diagonal in decreasing magnitude: the ratio of the last
  // to the first bounds how nearly dependent the active normals are.
  const double largest = std::abs(basis(0, 0));
  const double smallest = std::abs(basis(n - 1, n - 1));
  if (!(largest > 0.0) || !(smallest > 1e-12 * largest)) return false;
  inverse.resize(n, n);
  inverse_from_full_piv_lu<N>(
      basis, n, [&](int i) { return p[i]; }, [&](int i) { return q[i]; }, inverse);
  return true;
}

}  // namespace

bool DenseLp::refresh() {
  factored_ = false;
  const int n = columns();
  // Fixed storage (the compile-time stride of 8), the top left n x n block used.
  Eigen::Matrix<double, max_columns, max_columns> basis;
  Vector rhs(n);
  double a[max_columns];
  for (int j = 0; j < n; ++j) {
    normal(basis_[j], a, rhs(j));
    if (!std::isfinite(rhs(j))) return false;  // an infinite bound cannot be active
    for (int k = 0; k < n; ++k) basis(j, k) = a[k];
  }
  // The cylinders' programmes have 5 or 6 columns (4 parameters and one or two zone sides), the
  // planes' 4.
  bool inverted;
  switch (n) {
    case 4: inverted = invert_basis<4>(basis, n, inverse_); break;
    case 5: inverted = invert_basis<5>(basis, n, inverse_); break;
    case 6: inverted = invert_basis<6>(basis, n, inverse_); break;
    default: inverted = invert_basis<0>(basis, n, inverse_); break;
  }
  if (!inverted) return false;
  x_.noalias() = inverse_ * rhs;
  lambda_.noalias() = -(inverse_.transpose() * cost_);
  factored_ = x_.allFinite() && lambda_.allFinite();
  return factored_;
}

bool DenseLp::set_basis(const Id* basis) {
  const int n = columns();
  factored_ = false;
  std::fill(in_basis_.begin(), in_basis_.end(), 0);
  for (int j = 0; j < n; ++j) {
    const Id id = basis[j];
    if (is_row(id) ? static_cast<std::size_t>(id) >= rows() : -1 - id >= 2L * n) return false;
    for (int i = 0; i < j; ++i)
      if (basis[i] == id) return false;
    basis_[j] = id;
    if (is_row(id)) in_basis_[static_cast<std::size_t>(id)] = 1;
  }
  if (!refresh()) return false;
  // A start must be dual feasible to rounding: a multiplier clearly below 0 would stay there
  // wherever its w_j stays <= 0 (only the ratio test keeps lambda >= 0).
  return (lambda_.array() >= -options_.start_tolerance).all();
}

bool DenseLp::entering(bool bland, Id& q) {
  const int n = columns();
  const double tolerance = options_.feasibility_tolerance;
  double best = 0.0;
  long best_rank = std::numeric_limits<long>::max();
  bool found = false;
  auto consider = [&](Id id, double score) {
    if (bland) {
      const long r = rank_of(id, n);
      if (r < best_rank) {
        best_rank = r;
        q = id;
        found = true;
      }
    } else if (score > best) {
      best = score;
      q = id;
      found = true;
    }
  };
  auto basic = [&](Id id) {
    for (int j = 0; j < n; ++j)
      if (basis_[j] == id) return true;
    return false;
  };
  for (int k = 0; k < n; ++k) {
    if (x_(k) - upper_(k) > tolerance && !basic(upper_bound(k)))
      consider(upper_bound(k), x_(k) - upper_(k));
    if (lower_(k) - x_(k) > tolerance && !basic(lower_bound(k)))
      consider(lower_bound(k), lower_(k) - x_(k));
  }
  // Under Bland's rule the bounds (which come first in its order) are chosen before any row,
  // and among rows the first violated one.
  if (bland && found) return true;
  const double* columns[max_columns];
  for (int k = 0; k < n; ++k) columns[k] = a_[k].data();
  const RowView view{columns, n, rhs_.data(), inv_norm_.data(), in_basis_.data(), rows()};
  if (bland) return price_rows(view, x_.data(), tolerance, true, best, q);
  return price_rows(view, x_.data(), tolerance, false, best, q) || found;
}

DenseLp::Status DenseLp::solve() {
  const int n = columns();
  if (n <= 0 || n > max_columns) return Status::failed;
  const int limit = options_.max_iterations > 0
                        ? options_.max_iterations
                        : 50 + 4 * static_cast<int>(std::min<std::size_t>(rows() + 2 * n, 1u << 20));
  // The basis set (or the previous optimum) is current; rows added since do not change it, so
  // its factorisation from set_basis or the last pivot stands (the same bits as a new one).
  if (!factored_ && !refresh()) return Status::failed;
  int stalls = 0;
  bool bland = false;
  double a[max_columns];
  Vector w(n);
  for (;;) {
    Id q = 0;
    if (!entering(bland, q)) break;
    if (++iterations_ > limit) return Status::failed;
    double b = 0.0;
    normal(q, a, b);
    const Eigen::Map<const Vector> aq(a, n);
    w.noalias() = inverse_.transpose() * aq;  // B^T w = a_q
    // Ratio test: lambda - t w >= 0; the least ratio over w_j > 0 leaves.
    const double pivot = options_.pivot_tolerance * std::max(1.0, w.cwiseAbs().maxCoeff());
    double least = infinity;
    for (int j = 0; j < n; ++j)
      if (w(j) > pivot) least = std::min(least, std::max(lambda_(j), 0.0) / w(j));
    if (!(least < infinity)) return Status::failed;  // dual unbounded: the rows are infeasible
    // Only exact ties: a leaving constraint of a larger ratio would drive the least one's
    // multiplier negative (by the difference times its w), and the basis would stop being dual
    // feasible. Exact ties are the degenerate case (several lambda_j = 0).
    int leave = -1;
    for (int j = 0; j < n; ++j) {
      if (!(w(j) > pivot) || std::max(lambda_(j), 0.0) / w(j) > least) continue;
      if (leave < 0) {
        leave = j;
      } else if (bland ? rank_of(basis_[j], n) < rank_of(basis_[leave], n)
                       : w(j) > w(leave)) {  // the largest pivot among ties, for stability
        leave = j;
      }
    }
    const double before = objective();
    if (is_row(basis_[leave])) in_basis_[static_cast<std::size_t>(basis_[leave])] = 0;
    basis_[leave] = q;
    if (is_row(q)) in_basis_[static_cast<std::size_t>(q)] = 1;
    if (!refresh()) return Status::failed;
    if (objective() > before + 1e-14 * (1.0 + std::abs(before))) {
      stalls = 0;
    } else if (++stalls >= options_.stall_limit) {
      bland = true;
    }
  }
  if (!(lambda_.array() >= -options_.dual_tolerance).all()) return Status::failed;
  return Status::optimal;
}

}  // namespace cylzone::detail::zone_lp
