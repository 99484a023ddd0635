#pragma once
// Private to the fit stage: the full-pivoting LU factorisation of a small square matrix, its
// inverse and its solve of one right-hand side, computed by the same operations in the same
// order as Eigen 3.4's FullPivLU (Eigen/src/LU/FullPivLU.h, the triangular solvers of
// Eigen/src/Core/products), so with the same bits, but without the set-up of Eigen's general
// classes and blocked kernels, which cost more than the arithmetic at these sizes. The dense
// LP solver factorises its basis (at most 8 x 8) at every pivot, and Newton's method on a
// Chebyshev fit's contacts its Jacobian (about 12 x 12) at every step: tens of thousands of
// times in a Monte Carlo study. tests/test_small_lu.cpp compares each function with Eigen's
// bit for bit.
//
// Method: Gaussian elimination with complete pivoting (Golub & Van Loan, Matrix Computations,
// 4th ed. 2013, sec. 3.4.9, from memory for the section); the inverse and the solution by
// forward and back substitution in panels, as Eigen blocks them.

#include <algorithm>
#include <cmath>
#include <limits>
#include <utility>

namespace cylzone::detail {

/// The largest matrix these functions take.
constexpr int small_lu_max_size = 16;

/// The full-pivoting LU P A Q = L U of an n x n matrix (n <= small_lu_max_size; the top left block of `a`) in
/// place: on return `a` holds
/// L (unit lower, below the diagonal) and U, and row i of P A Q is row p[i] of A, column j is
/// column q[j]. The same operations in the same order as Eigen 3.4's
/// FullPivLU::computeInPlace() (Golub & Van Loan, Matrix Computations, 4th ed. 2013, sec.
/// 3.4.9, from memory for the section): at step k the pivot is the entry of largest magnitude
/// in the remaining corner, the first in column-major order among equal ones; whole rows and
/// columns are swapped, the column below the pivot divided by it, and the corner updated by
/// a_ij -= a_ik a_kj; the permutations are the transpositions composed as Eigen composes them.
/// So the same factor and pivots, bit for bit, without the set-up of Eigen's general class
/// (its l1 norm, permutation objects, threshold). False (a unfinished) when a pivot is zero.
/// The search for step k + 1's pivot runs inside step k's update of the corner (one pass over
/// it instead of two; the same entries compared in the same order). N > 0: n is N, a
/// compile-time constant, so the compiler can unroll the loops (the same operations in the
/// same order: the same bits; the dense LP's bases of 4 to 6 columns).
template <int N = 0, typename Square>
bool full_piv_lu_in_place(Square& a, int n_given, int* p, int* q) {
  const int n = N > 0 ? N : n_given;
  if (n <= 0) return true;  // nothing to factorise
  int row_swap[small_lu_max_size], col_swap[small_lu_max_size];
  // The first pivot: visited column by column, a later entry taken only when strictly larger.
  int pr = 0, pc = 0;
  double biggest = std::abs(a(0, 0));
  for (int j = 0; j < n; ++j)
    for (int i = (j == 0 ? 1 : 0); i < n; ++i) {
      const double v = std::abs(a(i, j));
      if (v > biggest) {
        biggest = v;
        pr = i;
        pc = j;
      }
    }
  for (int k = 0; k < n; ++k) {
    if (biggest == 0.0) return false;
    row_swap[k] = pr;
    col_swap[k] = pc;
    if (pr != k)
      for (int j = 0; j < n; ++j) std::swap(a(k, j), a(pr, j));
    if (pc != k)
      for (int i = 0; i < n; ++i) std::swap(a(i, k), a(i, pc));
    const double pivot = a(k, k);
    for (int i = k + 1; i < n; ++i) a(i, k) /= pivot;
    if (k + 1 == n) break;
    // The rank-one update of the corner and the next step's pivot search in one pass: the
    // search visits the updated corner in the order of a separate pass after the update
    // (column by column, (k+1, k+1) first, a later entry taken only when strictly larger),
    // and each entry's update reads only row k and column k, which the pass leaves alone, so
    // the same values, the same comparisons and the same pivots.
    const int next = k + 1;
    pr = pc = next;
    {
      const double akj = a(k, next);
      a(next, next) -= akj * a(next, k);
      biggest = std::abs(a(next, next));
      for (int i = next + 1; i < n; ++i) {
        a(i, next) -= akj * a(i, k);
        const double v = std::abs(a(i, next));
        if (v > biggest) {
          biggest = v;
          pr = i;
        }
      }
    }
    for (int j = next + 1; j < n; ++j) {
      const double akj = a(k, j);
      for (int i = next; i < n; ++i) {
        a(i, j) -= akj * a(i, k);
        const double v = std::abs(a(i, j));
        if (v > biggest) {
          biggest = v;
          pr = i;
          pc = j;
        }
      }
    }
  }
  for (int i = 0; i < n; ++i) p[i] = q[i] = i;
  for (int k = n - 1; k >= 0; --k) std::swap(p[k], p[row_swap[k]]);
  for (int k = 0; k < n; ++k) std::swap(q[k], q[col_swap[k]]);
  return true;
}

/// The inverse of an invertible n x n matrix (n <= small_lu_max_size) from its full-pivoting LU P A Q = L U:
/// `lu` (its top left n x n block) is FullPivLU::matrixLU() (L unit lower and U upper in one matrix), `p` and `q` the
/// permutations' indices. The same operations in the same order as Eigen 3.4's
/// FullPivLU::inverse() (its solve of the identity: c = P I, the unit lower then the upper
/// triangular solve in place, rows put back by Q), which runs them through the blocked
/// triangular solver (TriangularSolverMatrix.h: panels of max(mr, nr) = 4 columns, each solved
/// by substitution, the rows after it updated by the GEBP kernel with one sum per element,
/// accumulated from zero in column order, then subtracted; U's diagonal applied as a multiple
/// of its reciprocal), so the same bits, without the blocked solver's packing and set-up, which
/// cost most of a pivot of the dense solver. Requires every pivot non-zero (rank n). N > 0: n
/// is N, a compile-time constant (as for full_piv_lu_in_place).
template <int N = 0, typename LuMatrix, typename PIndices, typename QIndices, typename Out>
void inverse_from_full_piv_lu(const LuMatrix& lu, int n_given, const PIndices& p,
                              const QIndices& q, Out& out) {
  const int n = N > 0 ? N : n_given;
  constexpr int panel = 4;  // Eigen 3.4's SmallPanelWidth for double: max(mr, nr) = 4
  double c[small_lu_max_size][small_lu_max_size];  // c[j][i]: column j, row i (column-major, as Eigen's)
  for (int j = 0; j < n; ++j)
    for (int i = 0; i < n; ++i) c[j][i] = 0.0;
  for (int i = 0; i < n; ++i) c[i][p(i)] = 1.0;  // c = P I: row p(i) of c is row i of I
  // L x = c, L unit lower: panels from the top.
  for (int k1 = 0; k1 < n; k1 += panel) {
    const int width = std::min(n - k1, panel);
    for (int k = 0; k < width; ++k) {
      const int i = k1 + k;
      for (int j = 0; j < n; ++j) {
        const double b = c[j][i];
        for (int r = i + 1; r < k1 + width; ++r) c[j][r] -= b * lu(r, i);
      }
    }
    for (int j = 0; j < n; ++j)
      for (int r = k1 + width; r < n; ++r) {
        double sum = 0.0;
        for (int k = k1; k < k1 + width; ++k) sum += lu(r, k) * c[j][k];
        c[j][r] -= sum;
      }
  }
  // U x = c: panels from the bottom.
  for (int k1 = 0; k1 < n; k1 += panel) {
    const int width = std::min(n - k1, panel);
    for (int k = 0; k < width; ++k) {
      const int i = n - k1 - k - 1;
      const int first = i - (width - k - 1);
      const double a = 1.0 / lu(i, i);
      for (int j = 0; j < n; ++j) {
        c[j][i] *= a;
        const double b = c[j][i];
        for (int r = first; r < i; ++r) c[j][r] -= b * lu(r, i);
      }
    }
    const int start = n - k1 - width;  // the panel's first column; rows 0 .. start - 1 follow
    for (int j = 0; j < n; ++j)
      for (int r = 0; r < start; ++r) {
        double sum = 0.0;
        for (int k = start; k < start + width; ++k) sum += lu(r, k) * c[j][k];
        c[j][r] -= sum;
      }
  }
  for (int i = 0; i < n; ++i)
    for (int j = 0; j < n; ++j) out(q(i), j) = c[j][i];
}

/// Whether FullPivLU::isInvertible() holds for the factor of full_piv_lu_in_place: every
/// pivot above n epsilon times the largest in magnitude (Eigen's default threshold).
template <typename LuMatrix>
bool full_piv_lu_invertible(const LuMatrix& lu, int n) {
  double largest = 0.0;
  for (int k = 0; k < n; ++k) largest = std::max(largest, std::abs(lu(k, k)));
  const double threshold =
      largest * (std::numeric_limits<double>::epsilon() * static_cast<double>(n));
  for (int k = 0; k < n; ++k)
    if (!(std::abs(lu(k, k)) > threshold)) return false;
  return true;
}

/// x = A^-1 b from the factor of an invertible A (full_piv_lu_in_place, full_piv_lu_invertible):
/// the same operations in the same order as FullPivLU::solve() of one vector: c = P b; the unit
/// lower then the upper triangular solve in panels of 8 (Eigen's triangular_solve_vector: in a
/// panel, a zero entry is skipped, U's diagonal divides; the rows after a panel updated by one
/// sum per row, accumulated from zero in column order, then subtracted, as its matrix-vector
/// kernel does); x = Q c.
template <typename LuMatrix>
void full_piv_lu_solve(const LuMatrix& lu, int n, const int* p, const int* q, const double* b,
                       double* x) {
  constexpr int panel = 8;  // EIGEN_TUNE_TRIANGULAR_PANEL_WIDTH
  double c[small_lu_max_size];
  for (int i = 0; i < n; ++i) c[p[i]] = b[i];
  for (int start = 0; start < n; start += panel) {
    const int end = std::min(n, start + panel);
    for (int i = start; i < end; ++i)
      if (c[i] != 0.0)
        for (int r = i + 1; r < end; ++r) c[r] -= c[i] * lu(r, i);
    for (int r = end; r < n; ++r) {
      double sum = 0.0;
      for (int j = start; j < end; ++j) sum += lu(r, j) * c[j];
      c[r] -= sum;
    }
  }
  for (int end = n; end > 0; end -= panel) {
    const int start = std::max(0, end - panel);
    for (int i = end - 1; i >= start; --i)
      if (c[i] != 0.0) {
        c[i] /= lu(i, i);
        for (int r = start; r < i; ++r) c[r] -= c[i] * lu(r, i);
      }
    for (int r = 0; r < start; ++r) {
      double sum = 0.0;
      for (int j = start; j < end; ++j) sum += lu(r, j) * c[j];
      c[r] -= sum;
    }
  }
  for (int i = 0; i < n; ++i) x[q[i]] = c[i];
}

}  // namespace cylzone::detail
