// The constrained least-squares solver (datum/detail/constrained_least_squares.hpp): least
// squares under linear inequality constraints by an active-set method, the kernel of the tangent
// datum planes.
//
// References outside the code under test:
//  * the Karush-Kuhn-Tucker conditions (Nocedal & Wright, Numerical Optimization, 2nd ed.,
//    Theorems 12.1 and 16.4: for a convex quadratic programme a KKT point is the global
//    minimiser), checked by exhaustive enumeration of active sets and by the multipliers the
//    solver returns.
#include <Eigen/LU>
#include <Eigen/QR>
#include <catch2/catch.hpp>
#include <cmath>
#include <cstdint>
#include <cstring>
#include <random>
#include <vector>

#include "cylzone/core/errors.hpp"
#include "datum/detail/constrained_least_squares.hpp"

using namespace cylzone;
using Catch::Matchers::Contains;

namespace {

// ---------------------------------------------------------------- constrained least squares

struct LsiProblem {
  Eigen::MatrixXd a;
  Eigen::VectorXd b;
  Eigen::MatrixXd c;
  Eigen::VectorXd d;
  Eigen::VectorXd start;
};

// Random problem whose unconstrained minimiser violates some constraints: the constraints are
// strictly satisfied at a start placed away from it.
LsiProblem random_lsi_problem(int unknowns, int rows, int constraints, std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> normal(0.0, 1.0);
  auto random_matrix = [&](int r, int c) {
    Eigen::MatrixXd m(r, c);
    for (int i = 0; i < r; ++i)
      for (int j = 0; j < c; ++j) m(i, j) = normal(rng);
    return m;
  };
  LsiProblem p;
  p.a = random_matrix(rows, unknowns);
  p.b = random_matrix(rows, 1);
  p.c = random_matrix(constraints, unknowns);
  const Eigen::VectorXd unconstrained = p.a.colPivHouseholderQr().solve(p.b);
  p.start = unconstrained + 3.0 * random_matrix(unknowns, 1);
  p.d = p.c * p.start;
  for (int i = 0; i < constraints; ++i) p.d(i) += 0.5 * std::abs(normal(rng));
  return p;
}

// The minimiser by the KKT conditions alone: for every set S of at most n constraints held as
// equalities, solve [A^T A  C_S^T; C_S  0] [x; lambda] = [A^T b; d_S]; the unique minimiser of
// the strictly convex problem is the x that is feasible with lambda >= 0 (Nocedal & Wright,
// Theorem 16.4). Exhaustive, so only for small problems.
Eigen::VectorXd minimiser_by_enumeration(const LsiProblem& p) {
  const int n = static_cast<int>(p.a.cols());
  const int m = static_cast<int>(p.c.rows());
  const Eigen::MatrixXd h = p.a.transpose() * p.a;
  const Eigen::VectorXd g = p.a.transpose() * p.b;
  for (unsigned mask = 0; mask < (1u << m); ++mask) {
    std::vector<int> set;
    for (int i = 0; i < m; ++i)
      if (mask & (1u << i)) set.push_back(i);
    if (static_cast<int>(set.size()) > n) continue;
    const int k = static_cast<int>(set.size());
    Eigen::MatrixXd kkt = Eigen::MatrixXd::Zero(n + k, n + k);
    Eigen::VectorXd rhs(n + k);
    kkt.topLeftCorner(n, n) = h;
    rhs.head(n) = g;
    for (int j = 0; j < k; ++j) {
      kkt.block(n + j, 0, 1, n) = p.c.row(set[j]);
      kkt.block(0, n + j, n, 1) = p.c.row(set[j]).transpose();
      rhs(n + j) = p.d(set[j]);
    }
    const Eigen::FullPivLU<Eigen::MatrixXd> lu(kkt);
    if (lu.rank() < n + k) continue;
    const Eigen::VectorXd sol = lu.solve(rhs);
    const Eigen::VectorXd x = sol.head(n);
    if (((p.c * x - p.d).array() > 1e-10).any()) continue;
    if ((sol.tail(k).array() < -1e-10).any()) continue;
    return x;
  }
  FAIL("no KKT point found by enumeration");
  return {};
}

}  // namespace

// ================================================================ constrained least squares

TEST_CASE("constrained least squares agrees with the KKT minimiser found by enumeration",
          "[datum][lsi]") {
  for (int unknowns = 2; unknowns <= 4; ++unknowns) {
    for (std::uint64_t seed = 1; seed <= 12; ++seed) {
      const LsiProblem p = random_lsi_problem(unknowns, 40, 9, 100 * unknowns + seed);
      const detail::LeastSquaresObjective objective(p.a, p.b);
      const auto solution = detail::solve_constrained_least_squares(objective, p.c, p.d, p.start);
      const Eigen::VectorXd expected = minimiser_by_enumeration(p);
      INFO("unknowns " << unknowns << ", seed " << seed);
      CHECK((solution.x - expected).norm() <= 1e-10 * (1.0 + expected.norm()));
      CHECK(solution.objective == Approx(0.5 * (p.a * expected - p.b).squaredNorm()).epsilon(1e-12));
    }
  }
}

TEST_CASE("constrained least squares returns multipliers satisfying the KKT conditions",
          "[datum][lsi]") {
  // Nocedal & Wright (16.37): A^T (A x - b) + C^T lambda = 0, lambda >= 0, lambda_i = 0 unless
  // constraint i is active, C x <= d.
  for (std::uint64_t seed = 1; seed <= 20; ++seed) {
    const int unknowns = 2 + static_cast<int>(seed % 3);
    const LsiProblem p = random_lsi_problem(unknowns, 2000, 300, seed);
    const detail::LeastSquaresObjective objective(p.a, p.b);
    const auto s = detail::solve_constrained_least_squares(objective, p.c, p.d, p.start);
    const Eigen::VectorXd slack = p.d - p.c * s.x;
    const Eigen::VectorXd stationarity = p.a.transpose() * (p.a * s.x - p.b) + p.c.transpose() * s.multipliers;
    const double scale = p.a.norm() * (p.a * s.x - p.b).norm();
    INFO("seed " << seed);
    CHECK(slack.minCoeff() >= -1e-12 * (1.0 + p.d.cwiseAbs().maxCoeff()));
    CHECK(s.multipliers.minCoeff() >= -1e-10 * scale);
    CHECK(stationarity.norm() <= 1e-10 * scale);
    CHECK(s.working_set.size() >= 1);  // the start was chosen so that some constraint binds
    for (const Eigen::Index i : s.working_set) CHECK(std::abs(slack(i)) <= 1e-10 * (1.0 + std::abs(p.d(i))));
    for (Eigen::Index i = 0; i < slack.size(); ++i)
      if (slack(i) > 1e-8) CHECK(s.multipliers(i) == 0.0);
  }
}

TEST_CASE("constrained least squares without binding constraints is the plain least-squares "
          "solution", "[datum][lsi]") {
  const LsiProblem p = random_lsi_problem(3, 50, 5, 7);
  const Eigen::VectorXd unconstrained = p.a.colPivHouseholderQr().solve(p.b);
  // Bounds far beyond the unconstrained minimiser.
  const Eigen::VectorXd far = p.c * unconstrained + Eigen::VectorXd::Constant(5, 10.0);
  const detail::LeastSquaresObjective objective(p.a, p.b);
  const Eigen::VectorXd start = unconstrained;
  const auto s = detail::solve_constrained_least_squares(objective, p.c, far, start);
  CHECK((s.x - unconstrained).norm() <= 1e-12 * (1.0 + unconstrained.norm()));
  CHECK(s.working_set.empty());
}

TEST_CASE("constrained least squares fails clearly", "[datum][lsi][errors]") {
  const LsiProblem p = random_lsi_problem(3, 30, 6, 3);
  const detail::LeastSquaresObjective objective(p.a, p.b);
  Eigen::VectorXd tight = p.d;
  tight(4) = p.c.row(4).dot(p.start) - 1.0;  // the start violates constraint 4 by 1
  CHECK_THROWS_WITH(detail::solve_constrained_least_squares(objective, p.c, tight, p.start),
                    Contains("starting point violates constraint 4"));
  detail::ConstrainedLeastSquaresOptions few;
  few.max_iterations = 0;
  CHECK_THROWS_WITH(detail::solve_constrained_least_squares(objective, p.c, p.d, p.start, few),
                    Contains("did not converge"));
  Eigen::MatrixXd dependent = p.a;
  dependent.col(2) = 2.0 * dependent.col(0) - dependent.col(1);
  CHECK_THROWS_WITH(detail::LeastSquaresObjective(dependent, p.b), Contains("rank deficient"));
  CHECK_THROWS_WITH(detail::LeastSquaresObjective(p.a.topRows(2), p.b.head(2)),
                    Contains("2 rows for 3 unknowns"));
  CHECK_THROWS_AS(detail::solve_constrained_least_squares(objective, p.c.leftCols(2), p.d, p.start),
                  FitError);
}

TEST_CASE("the solver's slacks in their own storage are Eigen's d - C x, bit for bit",
          "[constrained_least_squares]") {
  // solve_constrained_least_squares forms the slacks d - C x of every step as d copied into
  // the slacks' storage and C x subtracted in place (noalias), and C p into one buffer, where
  // it evaluated the expressions into temporaries before. Reference: those expressions,
  // compared with memcmp (signed zeros count), on the tangent planes' shapes (m x 3, m x 2)
  // and others, m from 1 (Eigen's dot-product case) to past its blocking, with exact zeros,
  // -0.0 (also as d where C x is -0.0) and mixed magnitudes.
  std::mt19937_64 rng(41);
  std::normal_distribution<double> g;
  int compared = 0;
  for (const Eigen::Index cols : {1, 2, 3, 4, 6}) {
    for (const Eigen::Index m : {1, 2, 3, 4, 5, 7, 8, 9, 16, 17, 73, 145, 168, 1001}) {
      for (int rep = 0; rep < 4; ++rep) {
        Eigen::MatrixXd c(m, cols);
        Eigen::VectorXd d(m), x(cols);
        for (Eigen::Index i = 0; i < m; ++i) {
          d(i) = rep >= 2 && i % 3 == 0 ? -0.0
                                         : g(rng) * std::pow(10.0, static_cast<double>(i % 7) - 3.0);
          for (Eigen::Index j = 0; j < cols; ++j)
            c(i, j) = (i + j) % 5 == 0 ? (rep == 1 ? -0.0 : 0.0) : g(rng);
          if (rep == 3 && i % 2 == 0) c.row(i).setZero();  // C x = +-0 against d = -0
        }
        for (Eigen::Index j = 0; j < cols; ++j) x(j) = (rep == 1 && j == 0) ? -0.0 : g(rng);
        if (rep == 3) x = -x.cwiseAbs();  // zero rows give -0.0 products
        const Eigen::VectorXd reference = d - c * x;
        Eigen::VectorXd slack(m);
        slack = d;
        slack.noalias() -= c * x;
        CHECK(std::memcmp(slack.data(), reference.data(), sizeof(double) * m) == 0);
        Eigen::VectorXd cp(m);
        cp.noalias() = c * x;
        const Eigen::VectorXd cp_reference = c * x;
        CHECK(std::memcmp(cp.data(), cp_reference.data(), sizeof(double) * m) == 0);
        ++compared;
      }
    }
  }
  CHECK(compared == 5 * 14 * 4);
}
