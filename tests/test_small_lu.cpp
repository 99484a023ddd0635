// The small full-pivoting LU (src/fit/detail/small_lu.hpp). The reference is the computation it
// replaces, Eigen 3.4's FullPivLU (Debian's libeigen3-dev): its factor, permutations,
// invertibility, inverse() and solve() must come out bit for bit the same (memcmp: signed zeros
// too) on random matrices of the kinds the fits factorise: rows of random normals and scales,
// unit rows (a bound of the dense LP), exact zeros, nearly dependent rows.
#include <catch2/catch.hpp>

#include <Eigen/LU>
#include <cmath>
#include <cstring>
#include <limits>
#include <random>

#include "fit/detail/small_lu.hpp"

using namespace cylzone::detail;

namespace {

constexpr int max_columns = 8;  // the dense LP solver's basis (DenseLp::max_columns)

/// A random n x n matrix of the kinds above.
template <typename Matrix>
void random_rows(Matrix& basis, int n, std::mt19937_64& random) {
  std::normal_distribution<double> normal(0.0, 1.0);
  std::uniform_int_distribution<int> kind(0, 5);
  for (int j = 0; j < n; ++j) {
    const int how = kind(random);
    for (int k = 0; k < n; ++k) basis(j, k) = normal(random);
    if (how == 0) {  // a bound: +-e_k
      basis.row(j).setZero();
      basis(j, static_cast<int>(random() % static_cast<unsigned>(n))) =
          random() % 2 ? 1.0 : -1.0;
    } else if (how == 1) {  // exact zeros
      for (int k = 0; k < n; ++k)
        if (random() % 2) basis(j, k) = 0.0;
    } else if (how == 2) {  // another scale
      basis.row(j) *= std::ldexp(1.0, static_cast<int>(random() % 40) - 20);
    } else if (how == 3 && j > 0) {  // nearly a copy of the row before
      basis.row(j) = basis.row(j - 1) + 1e-6 * basis.row(j);
    }
  }
}

bool same_bits(double a, double b) { return std::memcmp(&a, &b, sizeof a) == 0; }

/// Whether a factor and its permutations (top left n x n block) are FullPivLU's, bit for bit.
template <class Factor, class Lu>
bool same_as_full_piv_lu(const Factor& factor, int n, const int* p, const int* q, const Lu& lu) {
  bool same = true;
  for (int i = 0; i < n; ++i) {
    same = same && p[i] == lu.permutationP().indices()(i) &&
           q[i] == lu.permutationQ().indices()(i);
    for (int k = 0; k < n; ++k) same = same && same_bits(factor(i, k), lu.matrixLU()(i, k));
  }
  return same;
}

/// full_piv_lu_in_place<N> and inverse_from_full_piv_lu<N> (n a compile-time constant, as the
/// dense LP's bases of 4 to 6 columns use them) on `basis` against the run-time size's
/// `factor`, permutations and regularity, and the inverses from both, bit for bit.
template <int N, class Basis, class Factor>
bool fixed_size_agrees(const Basis& basis, const Factor& factor, const int* p, const int* q,
                       bool regular) {
  Eigen::Matrix<double, max_columns, max_columns> fixed;
  fixed.setConstant(std::numeric_limits<double>::quiet_NaN());
  fixed.topLeftCorner(N, N) = basis;
  int fp[max_columns], fq[max_columns];
  if (full_piv_lu_in_place<N>(fixed, N, fp, fq) != regular) return false;
  if (!regular) return true;
  bool same = true;
  for (int i = 0; i < N; ++i) {
    same = same && fp[i] == p[i] && fq[i] == q[i];
    for (int k = 0; k < N; ++k) same = same && same_bits(fixed(i, k), factor(i, k));
  }
  if (!same || !full_piv_lu_invertible(fixed, N)) return same;
  Eigen::Matrix<double, N, N> at_compile_time, at_run_time;
  const auto pi = [&](int i) { return fp[i]; };
  const auto qi = [&](int i) { return fq[i]; };
  inverse_from_full_piv_lu<N>(fixed, N, pi, qi, at_compile_time);
  inverse_from_full_piv_lu(fixed, N, pi, qi, at_run_time);
  return std::memcmp(at_compile_time.data(), at_run_time.data(), sizeof(double) * N * N) == 0;
}

}  // namespace

TEST_CASE("the factor and inverse of small matrices have the bits of FullPivLU and inverse()",
          "[small-lu]") {
  // The dense LP solver's case: bases up to 8 x 8, held in the top left block of a fixed 8 x 8
  // matrix.
  using Matrix = Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, 0, max_columns, max_columns>;
  std::mt19937_64 random(20261204);
  int compared = 0;
  for (int trial = 0; trial < 4000; ++trial) {
    const int n = 1 + trial % max_columns;
    Matrix basis(n, n);
    random_rows(basis, n, random);
    const Eigen::FullPivLU<Matrix> lu(basis);
    Eigen::Matrix<double, max_columns, max_columns> factor;
    factor.setConstant(std::numeric_limits<double>::quiet_NaN());
    factor.topLeftCorner(n, n) = basis;
    int p[max_columns], q[max_columns];
    const bool regular = full_piv_lu_in_place(factor, n, p, q);
    INFO("trial " << trial << ", n = " << n);
    CHECK(regular == (lu.nonzeroPivots() == n));
    // The dense LP's sizes also at compile time: the same bits as at run time.
    if (n == 4) CHECK(fixed_size_agrees<4>(basis, factor, p, q, regular));
    if (n == 5) CHECK(fixed_size_agrees<5>(basis, factor, p, q, regular));
    if (n == 6) CHECK(fixed_size_agrees<6>(basis, factor, p, q, regular));
    if (regular) {
      CHECK(same_as_full_piv_lu(factor, n, p, q, lu));
      CHECK(full_piv_lu_invertible(factor, n) == lu.isInvertible());
    }
    if (!lu.isInvertible()) continue;
    const Matrix expected = lu.inverse();
    Matrix inverse(n, n);
    inverse_from_full_piv_lu(lu.matrixLU(), n, lu.permutationP().indices(),
                             lu.permutationQ().indices(), inverse);
    bool same = true;
    for (int i = 0; i < n; ++i)
      for (int k = 0; k < n; ++k) same = same && same_bits(inverse(i, k), expected(i, k));
    CHECK(same);
    ++compared;
  }
  CHECK(compared > 3500);
}

TEST_CASE("the solve of small systems has the bits of FullPivLU::solve()", "[small-lu]") {
  // Newton's method on a Chebyshev fit's contacts: Jacobians up to 16 x 16 (two panels of the
  // triangular solves), dynamic in Eigen, in the top left block of a fixed 16 x 16 matrix here;
  // right-hand sides with exact zeros (the solves skip them).
  constexpr int size = small_lu_max_size;
  std::mt19937_64 random(20261206);
  std::normal_distribution<double> normal(0.0, 1.0);
  int compared = 0;
  for (int trial = 0; trial < 3000; ++trial) {
    const int n = 1 + trial % size;
    Eigen::MatrixXd a(n, n);
    random_rows(a, n, random);
    Eigen::VectorXd b(n);
    for (int i = 0; i < n; ++i) b(i) = random() % 4 == 0 ? 0.0 : normal(random);
    const Eigen::FullPivLU<Eigen::MatrixXd> lu(a);
    Eigen::Matrix<double, size, size> factor;
    factor.topLeftCorner(n, n) = a;
    int p[size], q[size];
    const bool regular = full_piv_lu_in_place(factor, n, p, q);
    INFO("trial " << trial << ", n = " << n);
    CHECK((regular && full_piv_lu_invertible(factor, n)) == lu.isInvertible());
    if (!lu.isInvertible()) continue;
    const Eigen::VectorXd expected = lu.solve(-b);
    const Eigen::VectorXd minus_b = -b;
    double x[size];
    full_piv_lu_solve(factor, n, p, q, minus_b.data(), x);
    bool same = true;
    for (int i = 0; i < n; ++i) same = same && same_bits(x[i], expected(i));
    CHECK(same);
    ++compared;
  }
  CHECK(compared > 2500);
}

namespace {

/// The factorisation as it was written before its pivot search moved into the update (kept
/// here as the reference): at every step a separate pass over the corner for the pivot, then
/// the swaps, the division and the rank-one update.
template <typename Square>
bool two_pass_lu_reference(Square& a, int n, int* p, int* q) {
  int row_swap[small_lu_max_size], col_swap[small_lu_max_size];
  for (int k = 0; k < n; ++k) {
    int pr = k, pc = k;
    double biggest = std::abs(a(k, k));
    for (int j = k; j < n; ++j)
      for (int i = (j == k ? k + 1 : k); i < n; ++i) {
        const double v = std::abs(a(i, j));
        if (v > biggest) {
          biggest = v;
          pr = i;
          pc = j;
        }
      }
    if (biggest == 0.0) return false;
    row_swap[k] = pr;
    col_swap[k] = pc;
    if (pr != k)
      for (int j = 0; j < n; ++j) std::swap(a(k, j), a(pr, j));
    if (pc != k)
      for (int i = 0; i < n; ++i) std::swap(a(i, k), a(i, pc));
    const double pivot = a(k, k);
    for (int i = k + 1; i < n; ++i) a(i, k) /= pivot;
    for (int j = k + 1; j < n; ++j) {
      const double akj = a(k, j);
      for (int i = k + 1; i < n; ++i) a(i, j) -= akj * a(i, k);
    }
  }
  for (int i = 0; i < n; ++i) p[i] = q[i] = i;
  for (int k = n - 1; k >= 0; --k) std::swap(p[k], p[row_swap[k]]);
  for (int k = 0; k < n; ++k) std::swap(q[k], q[col_swap[k]]);
  return true;
}

using Square16 = Eigen::Matrix<double, small_lu_max_size, small_lu_max_size>;

/// The same bits, or NaN in both: which NaN an operation on two NaNs returns is not fixed by
/// IEEE 754 and follows the operands' order the compiler chose (clang and g++ differ); a NaN
/// anywhere fails the Newton step and the basis alike, so its payload never reaches a result.
bool same_or_both_nan(double a, double b) {
  return same_bits(a, b) || (std::isnan(a) && std::isnan(b));
}

/// full_piv_lu_in_place<N> (as Newton's method on the contacts calls it for 4 to 12 unknowns)
/// on `a` against `factor`, p, q and `regular` of the run-time size, bit for bit.
template <int N>
bool fixed_agrees_16(const Square16& a, const Square16& factor, const int* p, const int* q,
                     bool regular) {
  Square16 fixed = a;
  int fp[small_lu_max_size], fq[small_lu_max_size];
  if (full_piv_lu_in_place<N>(fixed, N, fp, fq) != regular) return false;
  if (!regular) return true;
  for (int i = 0; i < N; ++i) {
    if (fp[i] != p[i] || fq[i] != q[i]) return false;
    for (int k = 0; k < N; ++k)
      if (!same_or_both_nan(fixed(i, k), factor(i, k))) return false;
  }
  return true;
}

template <int N>
bool fixed_agrees_if(int n, const Square16& a, const Square16& factor, const int* p, const int* q,
                     bool regular) {
  return n != N || fixed_agrees_16<N>(a, factor, p, q, regular);
}

}  // namespace

TEST_CASE("the one-pass pivot search gives the two-pass factorisation and FullPivLU's bits",
          "[small-lu]") {
  // Ties decide pivots: small integers (many equal magnitudes, exact zeros, singular matrices),
  // the random kinds above, signed zeros, and a NaN. The reference is the two-pass loop it
  // replaced and Eigen's FullPivLU; every size to 16 at run time, 4 to 12 also at compile time.
  std::mt19937_64 random(20261205);
  std::uniform_int_distribution<int> small(-2, 2), kind(0, 3);
  int ties = 0, singular = 0, compared = 0;
  for (int trial = 0; trial < 6000; ++trial) {
    const int n = 1 + trial % small_lu_max_size;
    Square16 a;
    a.setConstant(std::numeric_limits<double>::quiet_NaN());
    const int how = kind(random);
    Eigen::MatrixXd block(n, n);
    if (how == 0) {
      random_rows(block, n, random);
    } else {
      for (int i = 0; i < n; ++i)
        for (int k = 0; k < n; ++k) {
          const int v = small(random);
          block(i, k) = v == 0 && random() % 2 ? -0.0 : static_cast<double>(v);
        }
      if (how == 3) block(static_cast<int>(random() % n), static_cast<int>(random() % n)) =
          std::numeric_limits<double>::quiet_NaN();
    }
    a.topLeftCorner(n, n) = block;
    Square16 factor = a, reference = a;
    int p[small_lu_max_size], q[small_lu_max_size], rp[small_lu_max_size], rq[small_lu_max_size];
    const bool regular = full_piv_lu_in_place(factor, n, p, q);
    const bool reference_regular = two_pass_lu_reference(reference, n, rp, rq);
    INFO("trial " << trial << ", n = " << n << ", kind " << how);
    REQUIRE(regular == reference_regular);
    if (regular) {
      bool same = true;
      for (int i = 0; i < n; ++i) {
        same = same && p[i] == rp[i] && q[i] == rq[i];
        for (int k = 0; k < n; ++k)
          same = same && same_or_both_nan(factor(i, k), reference(i, k));
      }
      CHECK(same);
      ++compared;
    } else {
      ++singular;
    }
    if (how != 0) ++ties;
    if (how != 3) {  // Eigen's FullPivLU on the finite matrices
      const Eigen::FullPivLU<Eigen::MatrixXd> lu(block);
      CHECK(regular == (lu.nonzeroPivots() == n));
      if (regular) {
        CHECK(same_as_full_piv_lu(factor, n, p, q, lu));
      }
    }
    CHECK(fixed_agrees_if<4>(n, a, factor, p, q, regular));
    CHECK(fixed_agrees_if<5>(n, a, factor, p, q, regular));
    CHECK(fixed_agrees_if<6>(n, a, factor, p, q, regular));
    CHECK(fixed_agrees_if<7>(n, a, factor, p, q, regular));
    CHECK(fixed_agrees_if<8>(n, a, factor, p, q, regular));
    CHECK(fixed_agrees_if<9>(n, a, factor, p, q, regular));
    CHECK(fixed_agrees_if<10>(n, a, factor, p, q, regular));
    CHECK(fixed_agrees_if<11>(n, a, factor, p, q, regular));
    CHECK(fixed_agrees_if<12>(n, a, factor, p, q, regular));
  }
  CHECK(compared > 2000);
  CHECK(singular > 100);
  CHECK(ties > 3000);
}
