// The dense dual simplex of the Chebyshev engine (src/fit/detail/dense_lp.hpp) and the solver
// switch (FitOptions::lp_solver). References outside the solver:
//  * a textbook programme with its published optimum (Chvatal, Linear Programming, 1983, ch. 2,
//    from memory);
//  * COIN-OR Clp (Debian's coinor-libclp), the engine's reference solver: random programmes of
//    the engine's shape, all three objectives, must have the same optimal value, and the same
//    step where the optimum is unique (a dual-nondegenerate vertex);
//  * the Chebyshev fits on reference data with known solutions (Forbes & Minh, Int. J. Metrol.
//    Qual. Eng. 3(3), 2012, tests/support/reference_data.hpp) with either solver: the same
//    widths and radii as the Clp path to 1e-12 mm;
//  * scipy.optimize.linprog (HiGHS) through the hidden case "[dense-lp-cases]" and
//    tests/reference/crosscheck_dense_lp.py, on the whole programme written out independently.
#include <catch2/catch.hpp>

#include <Eigen/Geometry>
#include <Eigen/LU>
#include <algorithm>
#include <cmath>
#include <cstring>
#include <iomanip>
#include <limits>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include "case_file.hpp"
#include "cylzone/fit/fit_cylinder.hpp"
#include "cylzone/fit/fit_element.hpp"
#include "fit/detail/chebyshev_programme.hpp"
#include "fit/detail/dense_lp.hpp"
#include "reference_data.hpp"

using namespace cylzone;
using namespace cylzone::testing;
using detail::ZoneObjective;
using detail::ZoneOptions;
using detail::zone_lp::DenseLp;
using detail::zone_lp::Side;
using detail::zone_lp::ZoneProgramme;

namespace {

constexpr double pi = 3.14159265358979323846;

// ------------------------------------------------------------------ random programmes

/// One linearised programme of the engine's shape: distances d, gradients g (n x p) in the
/// parameters' length units, a trust-region half-width delta.
struct Programme {
  ZoneObjective objective = ZoneObjective::minimum_zone;
  Eigen::VectorXd d;
  Eigen::MatrixXd g;
  double delta = 1.0;
  std::string kind;
};

/// Radial distances and their gradients of points round a circle (p = 2: the centre's shift)
/// or a bore (p = 4: shifts and length-scaled tilts, the gradients of Forbes' parametrisation
/// at the current axis), a grid-rounded perfect circle (many exact ties: a degenerate
/// programme), or gradients drawn at random.
Programme random_programme(std::mt19937_64& rng, int variant, ZoneObjective objective) {
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  std::normal_distribution<double> gauss(0.0, 1.0);
  Programme prog;
  prog.objective = objective;
  const int sizes[] = {3, 6, 12, 40, 150, 400, 900, 1500};
  Eigen::Index n = sizes[static_cast<int>(unit(rng) * 8.0) % 8];
  const double sigma = 0.001 * std::pow(10.0, 2.0 * unit(rng) - 1.0);
  int p = 2;
  switch (variant % 4) {
    case 0: {  // circle, random angles
      prog.kind = "circle";
      prog.g.resize(n, 2);
      prog.d.resize(n);
      for (Eigen::Index i = 0; i < n; ++i) {
        const double a = 2.0 * pi * unit(rng);
        prog.g.row(i) << -std::cos(a), -std::sin(a);
        prog.d(i) = 10.0 + sigma * gauss(rng);
      }
      break;
    }
    case 1: {  // bore, random angles and depths
      prog.kind = "bore";
      p = 4;
      prog.g.resize(n, 4);
      prog.d.resize(n);
      for (Eigen::Index i = 0; i < n; ++i) {
        const double a = 2.0 * pi * unit(rng), t = 2.0 * unit(rng) - 1.0;
        prog.g.row(i) << -std::cos(a), -std::sin(a), -t * std::cos(a), -t * std::sin(a);
        prog.d(i) = 6.0 + sigma * (gauss(rng) + std::cos(3.0 * a));
      }
      break;
    }
    case 2: {  // a perfect circle rounded to a grid: exactly tied rows, degenerate vertices
      prog.kind = "ties";
      n = std::max<Eigen::Index>(n, 12) / 12 * 12;
      prog.g.resize(n, 2);
      prog.d.resize(n);
      const double grid = 0.001;
      for (Eigen::Index i = 0; i < n; ++i) {
        const double a = 2.0 * pi * static_cast<double>(i) / static_cast<double>(n);
        prog.g.row(i) << -std::cos(a), -std::sin(a);
        prog.d(i) = std::round((8.0 + 0.002 * std::cos(3.0 * a)) / grid) * grid;
      }
      break;
    }
    default: {  // arbitrary gradients in [-1, 1]^p, p = 2 or 4
      prog.kind = "random";
      p = unit(rng) < 0.5 ? 2 : 4;
      prog.g.resize(n, p);
      for (Eigen::Index i = 0; i < n; ++i)
        for (int k = 0; k < p; ++k) prog.g(i, k) = 2.0 * unit(rng) - 1.0;
      prog.d.resize(n);
      for (Eigen::Index i = 0; i < n; ++i) prog.d(i) = sigma * gauss(rng);
      break;
    }
  }
  const double spread = std::max(prog.d.maxCoeff() - prog.d.minCoeff(), 1e-6);
  prog.delta = spread * std::pow(10.0, 4.0 * unit(rng) - 3.0);  // 1e-3 .. 10 x the spread
  return prog;
}

struct Solved {
  detail::zone_lp::LinearStep step;
  std::vector<detail::zone_lp::Constraint> binding;
  std::vector<double> multipliers;
  int fallbacks = 0;
};

Solved solve_with(const Programme& prog, LpSolver solver) {
  ZoneOptions options;
  options.lp_solver = solver;
  ZoneProgramme programme(prog.objective, options, prog.d.size(),
                          static_cast<int>(prog.g.cols()));
  Solved s;
  s.step = programme.solve(prog.d, prog.g, prog.delta);
  s.binding = programme.binding();
  s.multipliers = programme.multipliers();
  s.fallbacks = programme.fallbacks();
  return s;
}

int columns_of(const Programme& prog) {
  return static_cast<int>(prog.g.cols()) + (prog.objective == ZoneObjective::minimum_zone ? 2 : 1);
}

/// Whether the solution is a dual-nondegenerate vertex, hence the unique optimum: `columns`
/// active constraints (binding rows and box bounds of the step) whose multipliers are all
/// strictly positive. The box bounds' multipliers follow from stationarity in y: the binding
/// rows' y-normals (g for an upper row, -g for a lower one) weighted by their multipliers.
bool unique_vertex(const Programme& prog, const Solved& s) {
  const int p = static_cast<int>(prog.g.cols());
  constexpr double positive = 1e-7;
  Eigen::VectorXd stationarity = Eigen::VectorXd::Zero(p);
  for (std::size_t j = 0; j < s.binding.size(); ++j) {
    if (!(s.multipliers[j] > positive)) return false;
    const double sign = s.binding[j].side == Side::upper ? 1.0 : -1.0;
    stationarity += sign * s.multipliers[j] * prog.g.row(s.binding[j].point).transpose();
  }
  int active = static_cast<int>(s.binding.size());
  for (int k = 0; k < p; ++k) {
    const double y = s.step.step(k) / prog.delta;
    if (std::abs(y) < 1.0 - 1e-9) continue;
    if (!(std::abs(stationarity(k)) > positive)) return false;
    ++active;
  }
  return active == columns_of(prog);
}

// ------------------------------------------------------------------ fits

/// Largest distance between two axes at the ends [t0, t1] of the extent (from a's point).
double axis_gap(const Axis& a, const Axis& b, double t0, double t1) {
  double worst = 0.0;
  for (double t : {t0, t1}) {
    const Eigen::Vector3d p = a.point + t * a.direction;
    const Eigen::Vector3d q = p - b.point;
    worst = std::max(worst, (q - q.dot(b.direction) * b.direction).norm());
  }
  return worst;
}

}  // namespace

// ------------------------------------------------------------------ the solver itself

TEST_CASE("dense LP: the textbook example of Chvatal (1983), ch. 2", "[dense-lp]") {
  // maximise 5 x1 + 4 x2 + 3 x3 s.t. 2 x1 + 3 x2 + x3 <= 5, 4 x1 + x2 + 2 x3 <= 11,
  // 3 x1 + 4 x2 + 2 x3 <= 8, x >= 0: optimum 13 at (2, 0, 1) (Chvatal, Linear Programming,
  // 1983, ch. 2, from memory; the vertex is checked directly below as well).
  DenseLp lp;
  DenseLp::Vector cost(3), lower(3), upper(3);
  cost << -5.0, -4.0, -3.0;  // minimise the negative
  lower.setZero();
  upper.setConstant(100.0);  // never active: a box the dual simplex can start from
  lp.reset(cost, lower, upper);
  const double rows[3][4] = {{2, 3, 1, 5}, {4, 1, 2, 11}, {3, 4, 2, 8}};
  for (const auto& r : rows) lp.add_row(r, r[3]);
  // Every upper bound active: multipliers (5, 4, 3) >= 0, a dual-feasible start.
  const DenseLp::Id start[3] = {DenseLp::upper_bound(0), DenseLp::upper_bound(1),
                                DenseLp::upper_bound(2)};
  REQUIRE(lp.set_basis(start));
  REQUIRE(lp.solve() == DenseLp::Status::optimal);
  CHECK(lp.objective() == Approx(-13.0).margin(1e-12));
  CHECK(lp.x()(0) == Approx(2.0).margin(1e-12));
  CHECK(lp.x()(1) == Approx(0.0).margin(1e-12));
  CHECK(lp.x()(2) == Approx(1.0).margin(1e-12));
  // Optimality certificate, independent of the solver: the multipliers satisfy
  // c + sum lambda_j a_j = 0 with lambda >= 0 over the basis (weak duality then proves it).
  Eigen::Vector3d residual(-5.0, -4.0, -3.0);
  for (int j = 0; j < 3; ++j) {
    const DenseLp::Id id = lp.basis()[j];
    const double lambda = lp.multipliers()(j);
    CHECK(lambda >= -1e-12);
    if (DenseLp::is_row(id))
      residual += lambda * Eigen::Vector3d(rows[id][0], rows[id][1], rows[id][2]);
    else
      residual(static_cast<int>((-1 - id) / 2)) += lambda * ((-1 - id) % 2 == 0 ? 1.0 : -1.0);
  }
  CHECK(residual.norm() < 1e-12);

  SECTION("an iteration limit is a failure, not an answer") {
    DenseLp::Options options;
    options.max_iterations = 1;
    DenseLp limited(options);
    limited.reset(cost, lower, upper);
    for (const auto& r : rows) limited.add_row(r, r[3]);
    REQUIRE(limited.set_basis(start));
    CHECK(limited.solve() == DenseLp::Status::failed);
  }
  SECTION("a start that is not dual feasible is refused") {
    const DenseLp::Id wrong[3] = {DenseLp::lower_bound(0), DenseLp::upper_bound(1),
                                  DenseLp::upper_bound(2)};
    CHECK_FALSE(lp.set_basis(wrong));  // x1 >= 0 active with cost -5: multiplier -5
    const DenseLp::Id repeated[3] = {DenseLp::upper_bound(0), DenseLp::upper_bound(0),
                                     DenseLp::upper_bound(2)};
    CHECK_FALSE(lp.set_basis(repeated));
  }
}

TEST_CASE("dense LP: rows appended in a batch and a kept factorisation give the same bits",
          "[dense-lp]") {
  // The computation the batch and the kept factorisation replace: every row appended one by
  // one (add_row) and the basis factorised again before the programme resumes after rows are
  // added (set_basis of the same basis). Random programmes over the box [-1, 1]^n with rows
  // a.x <= b, b > 0 (x = 0 feasible), half the rows added after a first optimum as the
  // engine's constraint generation does; the box bound opposing each cost is the dual-feasible
  // start (common practice for a bounded dual simplex). Both ways must agree bit for bit.
  std::mt19937_64 random(20261203);
  std::normal_distribution<double> normal(0.0, 1.0);
  for (int trial = 0; trial < 40; ++trial) {
    const int n = 2 + trial % 6;  // up to DenseLp::max_columns - 1 columns
    const int m = 12 + trial;
    DenseLp::Vector cost(n), lower(n), upper(n);
    for (int k = 0; k < n; ++k) cost(k) = normal(random);
    lower.setConstant(-1.0);
    upper.setConstant(1.0);
    std::vector<std::vector<double>> rows(static_cast<std::size_t>(m), std::vector<double>(n));
    std::vector<double> rhs(static_cast<std::size_t>(m));
    for (int i = 0; i < m; ++i) {
      for (int k = 0; k < n; ++k) rows[i][k] = normal(random);
      rhs[i] = 0.1 + std::abs(normal(random));
    }
    DenseLp::Id start[DenseLp::max_columns];
    for (int k = 0; k < n; ++k)
      start[k] = cost(k) < 0.0 ? DenseLp::upper_bound(k) : DenseLp::lower_bound(k);

    DenseLp batch, single;
    batch.reset(cost, lower, upper);
    single.reset(cost, lower, upper);
    const int first = m / 2;
    const DenseLp::Id at = batch.append_rows(static_cast<std::size_t>(first));
    for (int i = 0; i < first; ++i) batch.set_row(at + i, rows[i].data(), rhs[i]);
    for (int i = 0; i < first; ++i) single.add_row(rows[i].data(), rhs[i]);
    REQUIRE(batch.set_basis(start));
    REQUIRE(single.set_basis(start));
    REQUIRE(batch.solve() == DenseLp::Status::optimal);
    REQUIRE(single.solve() == DenseLp::Status::optimal);
    const DenseLp::Id next = batch.append_rows(static_cast<std::size_t>(m - first));
    for (int i = first; i < m; ++i) batch.set_row(next + (i - first), rows[i].data(), rhs[i]);
    for (int i = first; i < m; ++i) single.add_row(rows[i].data(), rhs[i]);
    DenseLp::Id optimum[DenseLp::max_columns];
    std::copy(single.basis(), single.basis() + n, optimum);
    REQUIRE(single.set_basis(optimum));  // factorised again: the path before the kept one
    REQUIRE(batch.solve() == DenseLp::Status::optimal);
    REQUIRE(single.solve() == DenseLp::Status::optimal);
    CHECK(batch.iterations() == single.iterations());
    for (int k = 0; k < n; ++k) {
      CHECK(batch.x()(k) == single.x()(k));
      CHECK(batch.multipliers()(k) == single.multipliers()(k));
      CHECK(batch.basis()[k] == single.basis()[k]);
    }
    // And an optimum in its own right: every row and bound holds at the vertex.
    for (int i = 0; i < m; ++i) {
      double ax = 0.0;
      for (int k = 0; k < n; ++k) ax += rows[i][k] * batch.x()(k);
      CHECK(ax <= rhs[i] + 1e-9);
    }
    CHECK(batch.x().cwiseAbs().maxCoeff() <= 1.0 + 1e-9);
  }
}

TEST_CASE("the dense solver's row pricing chooses as the plain loop over the rows",
          "[dense-lp]") {
  // The computation price_rows replaces (DenseLp::entering before): the violations
  // v_i = -b_i + a_i0 x_0 + ... column by column in a scalar loop, then the first row of the
  // largest v_i / |a_i| above the incoming best among the violated rows outside the basis (or
  // the first violated one). Random rows of every width, odd and even counts, repeated rows
  // (equal scores: the first must win), zero rows, basic rows, rows on the tolerance.
  std::mt19937_64 random(20261205);
  std::normal_distribution<double> normal(0.0, 1.0);
  const double tolerance = 1e-10;
  for (int trial = 0; trial < 3000; ++trial) {
    const int n = 1 + trial % DenseLp::max_columns;
    const std::size_t m = static_cast<std::size_t>(trial % 37);
    std::vector<std::vector<double>> a(static_cast<std::size_t>(n), std::vector<double>(m));
    std::vector<double> b(m), inv_norm(m), x(static_cast<std::size_t>(n));
    std::vector<unsigned char> in_basis(m, 0);
    for (double& xk : x) xk = normal(random);
    for (std::size_t i = 0; i < m; ++i) {
      const unsigned how = static_cast<unsigned>(random() % 8);
      for (int k = 0; k < n; ++k)
        a[static_cast<std::size_t>(k)][i] =
            how == 0 && i > 0 ? a[static_cast<std::size_t>(k)][i - 1] : how == 1 ? 0.0 : normal(random);
      b[i] = how == 0 && i > 0 ? b[i - 1] : normal(random);
      if (how == 2) {  // exactly on the tolerance: v = tolerance is not a violation
        double ax = -0.0;
        for (int k = 0; k < n; ++k) ax += a[static_cast<std::size_t>(k)][i] * x[static_cast<std::size_t>(k)];
        b[i] = ax - tolerance;
      }
      double norm2 = 0.0;
      for (int k = 0; k < n; ++k) norm2 += a[static_cast<std::size_t>(k)][i] * a[static_cast<std::size_t>(k)][i];
      inv_norm[i] = norm2 > 0.0 ? 1.0 / std::sqrt(norm2) : 0.0;
      in_basis[i] = how == 3 ? 1 : 0;
    }
    const double* columns[DenseLp::max_columns];
    for (int k = 0; k < n; ++k) columns[k] = a[static_cast<std::size_t>(k)].data();
    const detail::zone_lp::RowView view{columns, n, b.data(), inv_norm.data(), in_basis.data(), m};
    for (const bool first : {false, true}) {
      const double start = trial % 3 == 0 ? 0.5 : 0.0;
      // The reference: the loop price_rows replaces.
      std::vector<double> v(m);
      for (std::size_t i = 0; i < m; ++i) v[i] = -b[i];
      for (int k = 0; k < n; ++k)
        for (std::size_t i = 0; i < m; ++i) v[i] += a[static_cast<std::size_t>(k)][i] * x[static_cast<std::size_t>(k)];
      double best_ref = start;
      long q_ref = -7;
      bool found_ref = false;
      for (std::size_t i = 0; i < m; ++i) {
        if (!(v[i] > tolerance) || in_basis[i]) continue;
        const double score = v[i] * inv_norm[i];
        if (first || score > best_ref) {
          best_ref = score;
          q_ref = static_cast<long>(i);
          found_ref = true;
          if (first) break;
        }
      }
      double best = start;
      long q = -7;
      const bool found = detail::zone_lp::price_rows(view, x.data(), tolerance, first, best, q);
      INFO("trial " << trial << ", n = " << n << ", m = " << m << ", first " << first);
      CHECK(found == found_ref);
      CHECK(q == q_ref);
      CHECK(std::memcmp(&best, &best_ref, sizeof best) == 0);
    }
  }
}

TEST_CASE("the rows' l1 norms have the bits of Eigen's row-wise sum of magnitudes",
          "[dense-lp]") {
  // Reference: Eigen's g.cwiseAbs().rowwise().sum(), the expression row_l1_norms replaces in
  // the dense programme (memcmp: signed zeros, infinities and NaN included), for 1 to 8
  // columns and 0 to 301 rows (odd and even), entries of mixed scales and exact ties.
  std::mt19937_64 rng(20261209);
  std::normal_distribution<double> gauss(0.0, 1.0);
  int compared = 0;
  for (int trial = 0; trial < 400; ++trial) {
    const Eigen::Index n = static_cast<Eigen::Index>(rng() % 302);
    const Eigen::Index p = 1 + static_cast<Eigen::Index>(trial % 8);
    Eigen::MatrixXd g(n, p);
    for (Eigen::Index i = 0; i < n; ++i)
      for (Eigen::Index k = 0; k < p; ++k) {
        switch (rng() % 8) {
          case 0: g(i, k) = -0.0; break;
          case 1: g(i, k) = 0.1; break;  // ties, inexact in binary
          case 2: g(i, k) = std::ldexp(gauss(rng), static_cast<int>(rng() % 120) - 60); break;
          default: g(i, k) = gauss(rng);
        }
      }
    if (n > 0 && trial % 10 == 0) g(0, 0) = std::numeric_limits<double>::infinity();
    if (n > 1 && trial % 10 == 1) g(1, p - 1) = std::numeric_limits<double>::quiet_NaN();
    const Eigen::VectorXd expected = g.cwiseAbs().rowwise().sum();
    Eigen::VectorXd sums(3);  // resized by the call
    detail::zone_lp::row_l1_norms(g, sums);
    REQUIRE(sums.size() == n);
    INFO("trial " << trial << ": " << n << " rows, " << p << " columns");
    // memcmp only on a non-empty range: an empty vector's data() may be null (UBSan).
    CHECK((n == 0 || std::memcmp(sums.data(), expected.data(),
                                 sizeof(double) * static_cast<std::size_t>(n)) == 0));
    ++compared;
  }
  CHECK(compared == 400);
}

TEST_CASE("dense LP: infeasible rows end in failure", "[dense-lp]") {
  // x <= -1 and x >= 1 cannot both hold: the dual simplex finds no leaving constraint.
  DenseLp lp;
  DenseLp::Vector cost(1), lower(1), upper(1);
  cost << 1.0;
  lower << -10.0;
  upper << 10.0;
  lp.reset(cost, lower, upper);
  const double plus = 1.0, minus = -1.0;
  lp.add_row(&plus, -1.0);
  lp.add_row(&minus, -1.0);
  const DenseLp::Id start[1] = {DenseLp::lower_bound(0)};
  REQUIRE(lp.set_basis(start));
  CHECK(lp.solve() == DenseLp::Status::failed);
}

TEST_CASE("dense LP: rows added after a solve resume from the optimal basis", "[dense-lp]") {
  // min -2x - y in the box [0, 3]^2: (3, 3); then x + y <= 4: (3, 1), objective -7; then
  // x - y/2 <= 3/2: both rows active at (7/3, 5/3), objective -19/3 (elementary algebra).
  DenseLp lp;
  DenseLp::Vector cost(2), lower(2), upper(2);
  cost << -2.0, -1.0;
  lower.setZero();
  upper.setConstant(3.0);
  lp.reset(cost, lower, upper);
  const DenseLp::Id start[2] = {DenseLp::upper_bound(0), DenseLp::upper_bound(1)};
  REQUIRE(lp.set_basis(start));
  REQUIRE(lp.solve() == DenseLp::Status::optimal);
  CHECK(lp.objective() == Approx(-9.0).margin(1e-14));
  const double first[2] = {1.0, 1.0};
  lp.add_row(first, 4.0);
  REQUIRE(lp.solve() == DenseLp::Status::optimal);
  CHECK(lp.objective() == Approx(-7.0).margin(1e-14));
  CHECK(lp.x()(0) == Approx(3.0).margin(1e-14));
  const double second[2] = {1.0, -0.5};
  lp.add_row(second, 1.5);
  REQUIRE(lp.solve() == DenseLp::Status::optimal);
  CHECK(lp.x()(0) == Approx(7.0 / 3.0).margin(1e-14));
  CHECK(lp.x()(1) == Approx(5.0 / 3.0).margin(1e-14));
  CHECK(lp.objective() == Approx(-19.0 / 3.0).margin(1e-14));
}

// ------------------------------------------------------------------ against Clp

TEST_CASE("dense LP: random programmes of the engine's shape agree with Clp",
          "[dense-lp][chebyshev]") {
  // Reference: COIN-OR Clp on the same programmes (the engine's default solver). Agreement of
  // the optimal value (the predicted decrease over Delta) to 1e-12 of the programme's scale,
  // of the step to 1e-9 of Delta at unique vertices, and the multipliers' property the engine
  // relies on (they sum to 1 per side, and every binding row is active).
  std::mt19937_64 rng(20261203);
  int unique = 0, total = 0, degenerate = 0;
  for (int trial = 0; trial < 400; ++trial)
    for (ZoneObjective objective : {ZoneObjective::minimum_zone, ZoneObjective::maximum_inscribed,
                                    ZoneObjective::minimum_circumscribed}) {
      const Programme prog = random_programme(rng, trial, objective);
      const Solved clp = solve_with(prog, LpSolver::clp);
      const Solved dense = solve_with(prog, LpSolver::dense);
      INFO("trial " << trial << " " << prog.kind << " n " << prog.d.size() << " p "
                    << prog.g.cols() << " objective " << static_cast<int>(objective)
                    << " delta " << prog.delta);
      ++total;
      REQUIRE(dense.fallbacks == 0);
      const double value_clp = clp.step.predicted / prog.delta;
      const double value_dense = dense.step.predicted / prog.delta;
      CHECK(std::abs(value_clp - value_dense) <= 1e-12 * std::max(1.0, value_clp));
      CHECK(dense.step.step.lpNorm<Eigen::Infinity>() <= prog.delta * (1.0 + 1e-12));

      // Each side's multipliers sum to 1 (stationarity in the bound columns R', r').
      double upper = 0.0, lower = 0.0;
      for (std::size_t j = 0; j < dense.binding.size(); ++j) {
        (dense.binding[j].side == Side::upper ? upper : lower) += dense.multipliers[j];
        // Binding rows hold with equality at the step.
        const auto& c = dense.binding[j];
        const double moved = prog.d(c.point) + prog.g.row(c.point).dot(dense.step.step);
        const Eigen::VectorXd at = prog.d + prog.g * dense.step.step;
        const double bound = c.side == Side::upper ? at.maxCoeff() : at.minCoeff();
        CHECK(std::abs(moved - bound) <= 1e-9 * prog.delta);
      }
      if (objective != ZoneObjective::maximum_inscribed) CHECK(upper == Approx(1.0).margin(1e-12));
      if (objective != ZoneObjective::minimum_circumscribed) CHECK(lower == Approx(1.0).margin(1e-12));

      if (unique_vertex(prog, dense)) {
        ++unique;
        CHECK((clp.step.step - dense.step.step).lpNorm<Eigen::Infinity>() <= 1e-9 * prog.delta);
      }
      if (prog.kind == "ties") ++degenerate;
    }
  // The comparison of steps must not be vacuous, nor the degenerate programmes absent.
  CHECK(unique > total / 3);
  CHECK(degenerate > 100);
}

TEST_CASE("dense LP: a seeded first basis is used only where its rows are in the working set",
          "[dense-lp][chebyshev]") {
  // A seed (the contacts of an earlier optimum) is the dense solver's first basis only where
  // every seeded row is in the programme's working set. A seed with a row outside it (a point
  // far from its zone bound at a small trust region) must leave the programme exactly as
  // unseeded (the extreme rows' first basis: the same bits); a seed of the programme's own
  // optimal rows must reach Clp's optimum (the reference, as above).
  std::mt19937_64 rng(20261207);
  int absent = 0, present = 0;
  for (int trial = 0; trial < 300; ++trial)
    for (ZoneObjective objective : {ZoneObjective::minimum_zone, ZoneObjective::maximum_inscribed,
                                    ZoneObjective::minimum_circumscribed}) {
      Programme prog = random_programme(rng, trial, objective);
      // Every candidate in the working set (no seeded rows joined to it), and a trust region
      // small enough that the far side's points are no candidates of the near side.
      if (prog.d.size() > 400 || prog.d.size() < 12) continue;
      prog.delta = 1e-3 * std::max(prog.d.maxCoeff() - prog.d.minCoeff(), 1e-6);
      const int columns = columns_of(prog);
      const Side side =
          objective == ZoneObjective::maximum_inscribed ? Side::lower : Side::upper;
      Eigen::Index far = 0;  // the point farthest from that side's bound
      if (side == Side::upper)
        prog.d.minCoeff(&far);
      else
        prog.d.maxCoeff(&far);
      ZoneOptions options;
      options.lp_solver = LpSolver::dense;
      const Solved plain = solve_with(prog, LpSolver::dense);
      INFO("trial " << trial << " " << prog.kind << " n " << prog.d.size() << " objective "
                    << static_cast<int>(objective));
      REQUIRE(plain.fallbacks == 0);

      // The far point's row at a random place among other points' rows.
      std::vector<detail::zone_lp::Constraint> seed;
      const int at = static_cast<int>(rng() % static_cast<unsigned>(columns));
      for (int j = 0; j < columns; ++j) {
        const Eigen::Index point =
            j == at ? far : static_cast<Eigen::Index>((far + 1 + j) % prog.d.size());
        seed.push_back({point, side});
      }
      ZoneProgramme seeded(objective, options, prog.d.size(), static_cast<int>(prog.g.cols()));
      seeded.seed(seed);
      const detail::zone_lp::LinearStep s = seeded.solve(prog.d, prog.g, prog.delta);
      CHECK(seeded.fallbacks() == 0);
      CHECK(std::memcmp(s.step.data(), plain.step.step.data(),
                        sizeof(double) * static_cast<std::size_t>(s.step.size())) == 0);
      CHECK(std::memcmp(&s.predicted, &plain.step.predicted, sizeof(double)) == 0);
      CHECK(seeded.multipliers() == plain.multipliers);
      bool same_rows = seeded.binding().size() == plain.binding.size();
      for (std::size_t j = 0; same_rows && j < plain.binding.size(); ++j)
        same_rows = seeded.binding()[j].point == plain.binding[j].point &&
                    seeded.binding()[j].side == plain.binding[j].side;
      CHECK(same_rows);
      ++absent;

      // The optimum's own rows, where they fill a basis: the warm start from them.
      if (static_cast<int>(plain.binding.size()) != columns) continue;
      ZoneProgramme warm(objective, options, prog.d.size(), static_cast<int>(prog.g.cols()));
      warm.seed(plain.binding);
      const detail::zone_lp::LinearStep w = warm.solve(prog.d, prog.g, prog.delta);
      const Solved clp = solve_with(prog, LpSolver::clp);
      CHECK(warm.fallbacks() == 0);
      CHECK(std::abs(w.predicted - clp.step.predicted) / prog.delta <=
            1e-12 * std::max(1.0, clp.step.predicted / prog.delta));
      ++present;
    }
  CHECK(absent > 300);
  CHECK(present > 50);
}

// ------------------------------------------------------------------ fits with either solver

TEST_CASE("Chebyshev fits give the same figures with the dense solver as with Clp",
          "[dense-lp][chebyshev]") {
  // Reference data with known elements (null-space sets, Forbes & Minh 2012), noisy sets where
  // the Chebyshev element moves away from the least-squares start, and a 3,000-point bore that
  // needs constraint generation. Widths and radii agree with the Clp path to 1e-12 mm, axes to
  // 1e-10 mm at the ends (centres, for circles), normals to 1e-12 rad, and the dense solver
  // never needs its fall-back here.
  const FitOptions clp_options{};  // the defaults: the Clp path
  FitOptions dense_options;
  dense_options.lp_solver = LpSolver::dense;
  // Every Chebyshev method of the element, through the run-time dispatch, with either solver.
  auto check_same = [&](Element element, const Eigen::Matrix3Xd& points, const FitOptions& base) {
    std::vector<FitMethod> methods = {FitMethod::minimum_zone};
    if (element == Element::circle || element == Element::cylinder)
      methods = {FitMethod::minimum_zone, FitMethod::maximum_inscribed,
                 FitMethod::minimum_circumscribed};
    for (FitMethod method : methods) {
      FitOptions a = base, b = base;
      a.lp_solver = LpSolver::clp;
      b.lp_solver = LpSolver::dense;
      const ElementFit x = fit_element(element, method, points, {}, a);
      const ElementFit y = fit_element(element, method, points, {}, b);
      INFO(element_name(element) << " " << method_name(method) << ": " << x.summary.message
                                 << " / " << y.summary.message);
      CHECK(std::abs(x.residuals.form - y.residuals.form) <= 1e-12);
      if (x.radius) CHECK(std::abs(*x.radius - *y.radius) <= 1e-12);
      if (x.axis)
        CHECK(axis_gap(*x.axis, *y.axis, x.extent_min.value_or(0.0), x.extent_max.value_or(0.0)) <=
              1e-10);
      if (x.normal) CHECK(x.normal->cross(*y.normal).norm() <= 1e-12);  // radians
      if (x.ambiguity) CHECK(*x.ambiguity == Approx(*y.ambiguity).margin(1e-12));
      CHECK(y.summary.lp_fallbacks == 0);
      CHECK(y.summary.status == FitStatus::converged);
    }
  };
  auto check_cylinders = [&](const Eigen::Matrix3Xd& points, const FitOptions& base) {
    check_same(Element::cylinder, points, base);
  };
  auto check_circles = [&](const Eigen::Matrix3Xd& points) {
    check_same(Element::circle, points, clp_options);
  };

  SECTION("three-lobed cylinder: the known element (Forbes & Minh 2012)") {
    const Axis axis{{-20.0, 14.0, 35.0}, direction_from_angles(25.0, 130.0)};
    const double r = 6.0, eps = 0.003;
    const ReferenceSet lobed = make_lobed_cylinder(axis, r, -15.0, 25.0, 7, 24, eps, 5.0);
    const CylinderFit mz = fit_cylinder_minimum_zone(lobed.points, dense_options);
    CHECK(mz.residuals.form == Approx(2.0 * eps).margin(1e-9));
    CHECK(mz.radius == Approx(r).margin(1e-9));
    const CylinderFit mi = fit_cylinder_maximum_inscribed(lobed.points, dense_options);
    CHECK(mi.radius == Approx(r - eps).margin(1e-9));
    const CylinderFit mc = fit_cylinder_minimum_circumscribed(lobed.points, dense_options);
    CHECK(mc.radius == Approx(r + eps).margin(1e-9));
    check_cylinders(lobed.points, clp_options);
  }
  SECTION("noisy bores, tilted and off the origin, 300 and 3,000 points") {
    const Axis axis{{2.0, -1.0, 4.0}, direction_from_angles(15.0, 60.0)};
    check_cylinders(make_cylinder_reference(axis, 12.0, -20.0, 20.0, 10, 30, 360.0, 0.008, 5).points,
                    clp_options);
    check_cylinders(
        make_cylinder_reference(axis, 12.0, -20.0, 20.0, 25, 120, 360.0, 0.008, 21).points,
        clp_options);
  }
  SECTION("a bore metres from the origin, uniqueness not assessed (the Monte Carlo trials)") {
    const Axis axis{{1500.0, -2300.0, 800.0}, direction_from_angles(80.0, -20.0)};
    FitOptions lean;
    lean.assess_ambiguity = false;
    check_cylinders(make_cylinder_reference(axis, 5.0, 0.0, 30.0, 6, 48, 360.0, 0.002, 9).points,
                    lean);
  }
  SECTION("a bore with its direction held (a circle problem)") {
    const Axis axis{{3.0, 1.0, -2.0}, direction_from_angles(3.0, 10.0)};
    FitOptions held;
    held.fixed_direction = Eigen::Vector3d::UnitZ();
    check_cylinders(make_cylinder_reference(axis, 8.0, 0.0, 20.0, 5, 40, 360.0, 0.004, 13).points,
                    held);
  }
  SECTION("circles: three-lobed and noisy") {
    const Axis axis{{12.0, -7.5, 3.25}, direction_from_angles(35.0, 70.0)};
    check_circles(make_lobed_cylinder(axis, 12.5, 0.0, 0.0, 1, 36, 0.004, 10.0).points);
    check_circles(
        make_circle_reference(axis.point, axis.direction, 12.5, 0.0, 360.0, 200, 0.005, 3).points);
  }
  SECTION("flatness and straightness") {
    const Eigen::Vector3d point(4.0, -3.0, 12.0);
    const Eigen::Vector3d normal = direction_from_angles(20.0, 200.0);
    check_same(Element::plane, make_plane_reference(point, normal, 60.0, 40.0, 500, 0.01, 17).points,
               clp_options);
    const Axis line_axis{{-5.0, 2.0, 7.0}, direction_from_angles(60.0, 15.0)};
    check_same(Element::line, make_line_reference(line_axis, 0.0, 80.0, 300, 0.005, 23).points,
               clp_options);
  }
}

TEST_CASE("a programme the dense solver fails on is solved by Clp, and counted",
          "[dense-lp][chebyshev]") {
  // One iteration is too few for any of these programmes: every one falls back, and the fit is
  // then the Clp path's, bit for bit (the same programmes, in the same order, on Clp alone).
  const Axis axis{{2.0, -1.0, 4.0}, direction_from_angles(15.0, 60.0)};
  const ReferenceSet noisy = make_cylinder_reference(axis, 12.0, -20.0, 20.0, 10, 30, 360.0, 0.008, 5);
  const Eigen::Vector3d centroid = noisy.points.rowwise().mean();
  const double scale = (noisy.points.colwise() - centroid).colwise().norm().maxCoeff();
  const Axis start{axis.point + Eigen::Vector3d(0.01, -0.02, 0.0),
                   (axis.direction + Eigen::Vector3d(0.001, 0.0, -0.0005)).normalized()};
  ZoneOptions options;
  options.scale = scale;
  options.initial_trust_radius = 0.02;
  options.assess_ambiguity = false;
  detail::AxisZoneModel reference(noisy.points, start);
  const detail::ZoneSummary a = detail::solve_zone(reference, ZoneObjective::minimum_zone, options);
  options.lp_solver = LpSolver::dense;
  options.dense_iteration_limit = 1;
  detail::AxisZoneModel forced(noisy.points, start);
  const detail::ZoneSummary b = detail::solve_zone(forced, ZoneObjective::minimum_zone, options);
  INFO(b.message);
  CHECK(a.lp_fallbacks == 0);
  CHECK(b.lp_fallbacks >= b.iterations);
  CHECK(b.lp_fallbacks > 0);
  CHECK(b.message.find("solved by Clp after the dense solver failed") != std::string::npos);
  CHECK((a.distances - b.distances).cwiseAbs().maxCoeff() == 0.0);
}

// ------------------------------------------------------------------ scipy cross-check

TEST_CASE("write random programmes with the dense solver's optima for the scipy cross-check",
          "[.][dense-lp-cases]") {
  std::mt19937_64 rng(31);
  std::ostringstream json;
  json << std::setprecision(17) << "{\"cases\": [\n";
  bool first = true;
  for (int trial = 0; trial < 24; ++trial)
    for (ZoneObjective objective : {ZoneObjective::minimum_zone, ZoneObjective::maximum_inscribed,
                                    ZoneObjective::minimum_circumscribed}) {
      Programme prog = random_programme(rng, trial, objective);
      if (prog.d.size() > 400) continue;  // keeps the file small; generation is tested above
      const Solved dense = solve_with(prog, LpSolver::dense);
      REQUIRE(dense.fallbacks == 0);
      const char* name = objective == ZoneObjective::minimum_zone        ? "minimum-zone"
                         : objective == ZoneObjective::maximum_inscribed ? "max-inscribed"
                                                                         : "min-circumscribed";
      json << (first ? "" : ",\n") << "{\"kind\": \"" << prog.kind << "\", \"objective\": \""
           << name << "\", \"delta\": " << prog.delta << ", \"predicted\": "
           << dense.step.predicted << ", \"unique\": " << (unique_vertex(prog, dense) ? "true" : "false")
           << ", \"step\": [";
      for (Eigen::Index k = 0; k < dense.step.step.size(); ++k)
        json << (k ? ", " : "") << dense.step.step(k);
      json << "], \"d\": [";
      for (Eigen::Index i = 0; i < prog.d.size(); ++i) json << (i ? ", " : "") << prog.d(i);
      json << "], \"g\": [";
      for (Eigen::Index i = 0; i < prog.g.rows(); ++i) {
        json << (i ? ", " : "") << "[";
        for (Eigen::Index k = 0; k < prog.g.cols(); ++k) json << (k ? ", " : "") << prog.g(i, k);
        json << "]";
      }
      json << "]}";
      first = false;
    }
  json << "\n]}\n";
  write_case_file("CYLZONE_DENSE_LP_CASES", json.str());
}
