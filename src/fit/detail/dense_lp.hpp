#pragma once
// Private to the fit stage: a small dense linear-programme solver for the Chebyshev engine's
// programmes (fit/detail/chebyshev_programme.hpp), which have a handful of columns (at most
// max_columns: the step's 2 or 4 parameters and one or two zone bounds) and up to a few hundred
// rows. COIN-OR Clp solves them too, but its fixed cost per programme (model load,
// factorisation, pricing set-up, allocation) is many times the work such a programme needs;
// repeated fits (Monte Carlo trials) pay it thousands of times.
//
// Method: the dual simplex method on the inequality form
//     minimise c.x  subject to  a_i.x <= b_i (rows),  lower_k <= x_k <= upper_k (bounds),
// in the space of the columns. A basis is a set of `columns` active constraints (rows or
// bounds) with linearly independent normals; its vertex x solves B x = b_B and its multipliers
// solve B^T lambda = -c. The basis is dual feasible when lambda >= 0. Each iteration takes the
// most violated constraint q (violation over the norm of its normal) into the basis and lets
// the basic constraint j leave that keeps lambda >= 0 (the ratio test on w = B^-T a_q: the least
// lambda_j / w_j over w_j > 0); the objective c.x never decreases. When no constraint is
// violated the vertex is primal feasible, hence optimal. This is the dual simplex method
// (Chvatal, Linear Programming, Freeman 1983, ch. 10; Nocedal & Wright, Numerical Optimization,
// 2nd ed. 2006, sec. 13.6, from memory for the sections) written for the dual of the
// inequality form, where every basis is a small square matrix: bounds are constraints like
// rows (so it is a bounded-variable method without a separate bound logic), and rows added
// after a solve leave the basis dual feasible, so that `solve` resumes from the previous
// optimal basis, which is what constraint generation needs.
//
// Anti-cycling: a step of zero length (a dual-degenerate basis: some lambda_j = 0) does not
// raise the objective; after a run of such steps the choice of both the entering and the
// leaving constraint switches to the least index (Bland's rule, for the dual simplex as in
// Chvatal ch. 10, from memory), which cannot cycle.
//
// The basis is factorised afresh (full-pivoting LU of at most max_columns^2 entries) at every
// iteration and the vertex and multipliers recomputed from it, so rounding does not accumulate.
// Storage is fixed-size (the basis) or reused between programmes (the rows), so a pivot
// allocates nothing. The solver is honest about failure: a singular basis, no admissible
// leaving constraint, an iteration limit, a non-finite value, or a start that is not dual
// feasible give Status::failed, and the caller falls back to Clp.

#include <Eigen/Core>
#include <algorithm>
#include <cmath>
#include <cstddef>
#include <memory>
#include <new>
#include <utility>
#include <vector>

#include "fit/detail/small_lu.hpp"

namespace cylzone::detail::zone_lp {

/// An allocator whose value-less construct leaves a double as it is: the row storage grows by
/// resize() without the zero fill that set_row would overwrite at once (a trial's programmes
/// append thousands of rows).
template <typename T>
struct UnfilledAllocator : std::allocator<T> {
  template <typename U>
  struct rebind {
    using other = UnfilledAllocator<U>;
  };
  UnfilledAllocator() = default;
  template <typename U>
  UnfilledAllocator(const UnfilledAllocator<U>&) noexcept {}
  template <typename U>
  void construct(U* p) noexcept {
    ::new (static_cast<void*>(p)) U;
  }
  template <typename U, typename... Args>
  void construct(U* p, Args&&... args) {
    ::new (static_cast<void*>(p)) U(std::forward<Args>(args)...);
  }
};

/// The rows of a programme as the dense solver stores them: column k's coefficients at
/// columns[k][i], b_i at rhs[i], 1 / |a_i| at inv_norm[i], in_basis[i] non-zero for a basic row.
struct RowView {
  const double* const* columns = nullptr;
  int n = 0;
  const double* rhs = nullptr;
  const double* inv_norm = nullptr;
  const unsigned char* in_basis = nullptr;
  std::size_t m = 0;
};

/// The dense solver's row pricing: among the rows not in the basis whose violation
/// v_i = a_i.x - b_i (computed as -b_i + a_i0 x_0 + a_i1 x_1 + ..., in column order) exceeds
/// `tolerance`, the one of largest v_i / |a_i| above `best` (the first of equal ones), which
/// sets `best` and `q`; with `first`, the first violated row whatever its score. True if a row
/// was taken. Two rows per operation where the compiler offers vectors of two doubles (g++,
/// clang): each row's violation is the same sequence of roundings as the scalar loop's, so
/// the same bits and the same choice (tests/test_dense_lp.cpp compares it with that loop).
bool price_rows(const RowView& rows, const double* x, double tolerance, bool first, double& best,
                long& q);

class DenseLp {
 public:
  static constexpr int max_columns = 8;
  using Vector = Eigen::Matrix<double, Eigen::Dynamic, 1, 0, max_columns, 1>;
  using Matrix = Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, 0, max_columns, max_columns>;

  enum class Status { optimal, failed };

  /// A constraint's identifier: a row index (>= 0), or a bound of column k: upper_bound(k),
  /// lower_bound(k) (negative).
  using Id = long;
  static constexpr Id upper_bound(int k) noexcept { return -1 - 2 * static_cast<Id>(k); }
  static constexpr Id lower_bound(int k) noexcept { return -2 - 2 * static_cast<Id>(k); }
  static constexpr bool is_row(Id id) noexcept { return id >= 0; }

  struct Options {
    /// A constraint is violated when a.x - b exceeds this (the rows are in scaled units).
    double feasibility_tolerance = 1e-10;
    /// Ratio-test entries w_j at or below this are not pivots.
    double pivot_tolerance = 1e-9;
    /// Multipliers below -this make a result dual infeasible (a failure) ...
    double dual_tolerance = 1e-9;
    /// ... and below -this a start (set_basis): rounding only.
    double start_tolerance = 1e-13;
    /// Zero-length steps in a row before Bland's rule takes over.
    int stall_limit = 8;
    /// Iterations per solve(); 0: 50 + 4 x (rows + 2 x columns).
    int max_iterations = 0;
  };

  DenseLp() = default;
  explicit DenseLp(const Options& options) : options_(options) {}

  /// Starts a new programme of cost.size() <= max_columns columns with the given bounds (may
  /// be infinite) and no rows; keeps the row storage's capacity.
  void reset(const Vector& cost, const Vector& lower, const Vector& upper);
  /// Room for this many rows in all (no allocation while adding up to them).
  void reserve(std::size_t rows);
  /// Appends the row a.x <= b (a: columns() coefficients) and returns its index.
  Id add_row(const double* a, double b);
  /// Appends `count` rows at once, to be filled by set_row before the next solve(), and returns
  /// the first one's index: one resize of each column instead of one append per coefficient
  /// (a trial's programmes add thousands of rows).
  Id append_rows(std::size_t count);
  /// Sets row `i` (appended, or rewritten) to a.x <= b: the same row, bit for bit, as
  /// add_row(a, b).
  void set_row(Id i, const double* a, double b) { set_row_of<0>(i, a, b); }
  /// set_row for a programme of N = columns() columns: the loops unrolled, the same operations.
  template <int N>
  void set_row_of(Id i, const double* a, double b) {
    const auto r = static_cast<std::size_t>(i);
    const int n = N > 0 ? N : columns();
    double norm2 = 0.0;
    for (int k = 0; k < n; ++k) {
      a_[k][r] = a[k];
      norm2 += a[k] * a[k];
    }
    rhs_[r] = b;
    inv_norm_[r] = norm2 > 0.0 ? 1.0 / std::sqrt(norm2) : 0.0;
    if (in_basis_[r]) factored_ = false;  // a basis row rewritten: factorise again
  }
  int columns() const noexcept { return static_cast<int>(cost_.size()); }
  std::size_t rows() const noexcept { return rhs_.size(); }

  /// Sets the starting basis: columns() constraints whose normals are independent and whose
  /// multipliers are non-negative (dual feasible). False (and nothing solved) otherwise.
  bool set_basis(const Id* basis);
  /// Runs the dual simplex from the current basis (the one set, or the previous optimum, with
  /// any rows added since) until no constraint is violated.
  Status solve();

  /// The vertex, the objective c.x, and the basis with its multipliers (lambda >= 0; a row's
  /// multiplier is the magnitude of its dual value), valid after solve() returned optimal.
  const Vector& x() const noexcept { return x_; }
  double objective() const noexcept { return cost_.dot(x_); }
  const Id* basis() const noexcept { return basis_; }
  const Vector& multipliers() const noexcept { return lambda_; }
  int iterations() const noexcept { return iterations_; }

 private:
  /// Factorises the basis and recomputes x_ and lambda_; false if it is singular.
  bool refresh();
  /// Normal and right-hand side of a constraint.
  void normal(Id id, double* a, double& b) const;
  /// Most violated constraint not in the basis (Bland: the least violated index); false if none.
  bool entering(bool bland, Id& q);

  Options options_;
  Vector cost_, lower_, upper_, x_, lambda_;
  // Appended rows are unset until set_row (UnfilledAllocator): solve() reads only set rows.
  using Column = std::vector<double, UnfilledAllocator<double>>;
  Column a_[max_columns];  // the rows' coefficients, column by column
  Column rhs_;             // b_i
  Column inv_norm_;        // 1 / |a_i|
  std::vector<unsigned char> in_basis_;  // per row
  Id basis_[max_columns] = {};
  Matrix inverse_;  // B^-1 of the current basis
  // inverse_, x_ and lambda_ are refresh()'s of the current basis: solve() need not factorise
  // it again (a pure function of the basis' constraints, which rows added since leave alone).
  bool factored_ = false;
  int iterations_ = 0;
};

}  // namespace cylzone::detail::zone_lp
