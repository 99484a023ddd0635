#pragma once
// Private to the fit stage: the linear programme of one step of the Chebyshev engine
// (fit/detail/chebyshev.hpp), solved with COIN-OR Clp or, when ZoneOptions::lp_solver asks, with
// the dense dual simplex of fit/detail/dense_lp.hpp (Clp again where that one fails). Only
// chebyshev_programme.cpp includes Clp; the engine's driver and its uniqueness walks see this
// interface alone.

#include <Eigen/Core>
#include <cstddef>
#include <utility>
#include <vector>

#include "fit/detail/chebyshev.hpp"
#include "fit/detail/dense_lp.hpp"

class ClpSimplex;

namespace cylzone::detail::zone_lp {

inline bool uses_upper(ZoneObjective o) { return o != ZoneObjective::maximum_inscribed; }
inline bool uses_lower(ZoneObjective o) { return o != ZoneObjective::minimum_circumscribed; }

/// The true objective, to be minimised: zone width, minus the inscribed radius, or the
/// circumscribed radius.
inline double true_objective(ZoneObjective o, const Eigen::VectorXd& d) {
  switch (o) {
    case ZoneObjective::minimum_zone: return d.maxCoeff() - d.minCoeff();
    case ZoneObjective::maximum_inscribed: return -d.minCoeff();
    case ZoneObjective::minimum_circumscribed: return d.maxCoeff();
  }
  return 0.0;
}

inline DenseLp::Options dense_options(const ZoneOptions& options) {
  DenseLp::Options dense;
  dense.max_iterations = options.dense_iteration_limit;
  return dense;
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

/// Rows of the programme in row-major (CSR) form, as Clp takes them (defined with the solver).
struct RowBlock;

/// Each row's |g_i|_1 into `out`: the sums of g.cwiseAbs().rowwise().sum(), which Eigen
/// forms, up to 4 columns (every programme's step: 2 to 4 parameters), for each row from its
/// first entry, adding the others in column order; here column by column over all rows (one
/// contiguous pass per column, which the compiler vectorises), each row's sum the same
/// sequence of roundings. Wider matrices by Eigen's expression (it pairs columns there).
/// tests/test_dense_lp.cpp compares both bit for bit.
void row_l1_norms(const Eigen::MatrixXd& g, Eigen::VectorXd& out);

/// The linearised problem at one element, in scaled variables y = x / Delta (|y_k| <= 1) and
/// bounds R' = (R - U0) / Delta, r' = (r - L0) / Delta, with U0, L0 the current largest and
/// smallest distance. Every row then reads  (d_i - U0)/Delta + g_i.y <= R'  (upper) or
/// (d_i - L0)/Delta + g_i.y >= r'  (lower), and the objective's decrease is -Delta times the
/// programme's optimum for all three kinds. Keeps the rows that were binding at the previous
/// element, which are the likeliest to bind again.
class ZoneProgramme {
 public:
  ZoneProgramme(ZoneObjective objective, const ZoneOptions& options, Eigen::Index n, int p)
      : objective_(objective), options_(options), n_(n), p_(p), dense_(dense_options(options)) {
    int col = p_;
    if (uses_upper(objective_)) upper_col_ = col++;
    if (uses_lower(objective_)) lower_col_ = col++;
    columns_ = col;
  }

  LinearStep solve(const Eigen::VectorXd& d, const Eigen::MatrixXd& g, double delta);

  /// Programmes solve() passed to Clp because the dense solver reported failure
  /// (ZoneOptions::lp_solver == dense only).
  int fallbacks() const noexcept { return fallbacks_; }

  /// Before the first solve: an earlier optimum's contacts, likely binding again. They join the
  /// first working set, and when they fill a basis (one per column) they are the dense
  /// solver's first basis, used if dual feasible (else its usual first basis).
  void seed(const std::vector<Constraint>& contacts);

  /// Rows binding at the last solution, and their multipliers (|dual|; they sum to 1 per side).
  const std::vector<Constraint>& binding() const noexcept { return binding_; }
  const std::vector<double>& multipliers() const noexcept { return multipliers_; }

  /// One programme of an ambiguity walk (see walk()): the step in the box |x_k| <= delta that
  /// moves one displacement component, `functional` x step (+ offset_weight x the change of the
  /// bounds' mean), farthest, subject to every linearised row and to a linearised objective no
  /// worse than the current element's. A small penalty on |x|_1 keeps directions that do not
  /// serve the component at zero. `allowance` > 0 (a length) lets the linearised objective be
  /// that much worse: the walks that explore for other optima across low ridges.
  Eigen::VectorXd farthest_step(const Eigen::VectorXd& d, const Eigen::MatrixXd& g, double delta,
                                const Eigen::RowVectorXd& functional, double offset_weight,
                                double allowance = 0.0);

 private:
  void candidates(const Eigen::VectorXd& d, const Eigen::VectorXd& g_l1, double delta, Side side,
                  std::vector<Eigen::Index>& out) const;
  void initial_rows(const Eigen::VectorXd& d, const std::vector<Eigen::Index>& cand, Side side,
                    std::vector<Constraint>& rows);
  /// The first working set of a programme at this element, into `rows` (cleared first; resets
  /// the membership flags).
  void first_rows(const Eigen::VectorXd& d, const Eigen::VectorXd& g_l1, double delta,
                  std::vector<Constraint>& rows);
  RowBlock make_rows(const Eigen::VectorXd& d, const Eigen::MatrixXd& g, double u0, double l0,
                     double delta, const std::vector<Constraint>& rows) const;
  /// Loads the rows, the box and the zone objective's costs, with `extra_columns` columns in
  /// [0, 1] (cost 0) after the programme's own.
  void load(ClpSimplex& lp, const RowBlock& block, double reach, int extra_columns) const;
  /// Constraint generation: adds the violated rows (worst first) and re-solves until none is.
  void add_violated_rows(ClpSimplex& lp, const Eigen::VectorXd& d, const Eigen::MatrixXd& g,
                         double u0, double l0, double delta, std::vector<Constraint>& rows);
  void run_simplex(ClpSimplex& lp) const;
  LinearStep solve_clp(const Eigen::VectorXd& d, const Eigen::MatrixXd& g, double delta);
  /// The same programme with the dense solver; false (binding rows untouched) if it failed.
  bool solve_dense(const Eigen::VectorXd& d, const Eigen::MatrixXd& g, double delta,
                   LinearStep& result);
  /// Constraint generation's check: the rows outside the working set that the solution x
  /// (y, then the bound columns) violates, worst first, at most a round's worth; they are
  /// marked members of the working set. The list is the programme's scratch (added_), valid
  /// until the next call.
  const std::vector<Constraint>& violated_rows(const double* x, const Eigen::VectorXd& d,
                                               const Eigen::MatrixXd& g, double u0, double l0,
                                               double delta);
  /// Where the rows (c, count) were set, the first of the upper rows of largest d and the
  /// first of the lower rows of least d (their places in c; -1 where that side has none).
  struct ExtremeRows {
    long top = -1, bottom = -1;
  };
  /// Rows first .. first + count - 1 (appended by DenseLp::append_rows) set to constraints
  /// c[0 .. count - 1] in the dense solver's form a.(y, R', r') <= b; with `extremes`, the
  /// extreme rows found in the same pass (the first basis' rows).
  void set_dense_rows(DenseLp::Id first, const Constraint* c, std::size_t count,
                      const Eigen::VectorXd& d, const Eigen::MatrixXd& g, double u0, double l0,
                      double delta, ExtremeRows* extremes = nullptr);
  /// set_dense_rows for P step columns and N columns in all (compile-time: loops unrolled).
  template <int P, int N>
  void set_dense_rows_of(DenseLp::Id first, const Constraint* c, std::size_t count,
                         const Eigen::VectorXd& d, const Eigen::MatrixXd& g, double u0, double l0,
                         double delta, ExtremeRows* extremes);

  ZoneObjective objective_;
  ZoneOptions options_;
  Eigen::Index n_;
  int p_;
  int upper_col_ = -1, lower_col_ = -1, columns_ = 0;
  std::vector<unsigned char> in_upper_, in_lower_;  // membership in the current working set
  std::vector<Constraint> binding_;                  // binding rows of the previous solve
  std::vector<double> multipliers_;                  // and their multipliers
  DenseLp dense_;                                    // its storage is reused between solves
  /// The last dense optimum's basis (a row by its point and side, or a bound of a column): the
  /// next programme, at a nearby element, starts from it when it is still dual feasible.
  struct BasisEntry {
    bool row = false;
    Constraint constraint{0, Side::upper};
    DenseLp::Id bound = 0;
  };
  std::vector<BasisEntry> dense_basis_;
  int fallbacks_ = 0;
  // Scratch of solve(), kept between the programmes of one fit (a descent solves 2-3) so that
  // only the first allocates: the working set and its candidates, the rows' |g_i|_1, the
  // constraint generation's check. Contents never carry from one solve to the next (each is
  // cleared or overwritten before it is read), so a solve's result does not depend on them.
  std::vector<Eigen::Index> cand_, order_;
  std::vector<Constraint> rows_, added_;
  std::vector<std::pair<double, Constraint>> violated_;
  Eigen::VectorXd g_l1_, y_, moved_;
};

}  // namespace cylzone::detail::zone_lp
