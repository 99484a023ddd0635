// The driver of the Chebyshev engine (fit/detail/chebyshev.hpp, docs/chebyshev.md): the
// trust-region iteration of linear programmes, the Newton refinement on the final contacts, and
// the summaries and messages the fits share. The linear programme is in chebyshev_programme.cpp,
// the uniqueness walks in chebyshev_uniqueness.cpp, the element models in chebyshev_models.cpp.
#include "fit/detail/chebyshev.hpp"

#include <Eigen/LU>
#include <algorithm>
#include <cmath>
#include <limits>
#include <memory>
#include <stdexcept>
#include <string>
#include <utility>
#include <vector>

#include "cylzone/core/errors.hpp"
#include "detail/fit_support.hpp"
#include "fit/detail/chebyshev_programme.hpp"
#include "fit/detail/chebyshev_uniqueness.hpp"
#include "fit/detail/small_lu.hpp"

namespace cylzone::detail {

using namespace zone_lp;

ZoneObjective zone_objective(FitMethod method) {
  switch (method) {
    case FitMethod::minimum_zone: return ZoneObjective::minimum_zone;
    case FitMethod::maximum_inscribed: return ZoneObjective::maximum_inscribed;
    case FitMethod::minimum_circumscribed: return ZoneObjective::minimum_circumscribed;
    case FitMethod::least_squares: break;
  }
  throw std::invalid_argument("least squares is not a Chebyshev-type association");
}

// ------------------------------------------------------------------ contact polish

namespace {

/// The Jacobian's storage up to small_lu_max_size unknowns: assembled in place in its top left
/// block (column stride small_lu_max_size) and factorised there.
using SmallFactor = Eigen::Matrix<double, small_lu_max_size, small_lu_max_size>;

/// dz = -J^-1 residual for the n x n Jacobian in the top left block of `factor` (n <=
/// small_lu_max_size), factorised in place; false where J is singular as
/// FullPivLU::isInvertible() decides. The small LU (fit/detail/small_lu.hpp) runs Eigen's
/// FullPivLU's operations without its set-up: the same bits (tests/test_small_lu.cpp).
bool small_newton_step(SmallFactor& factor, int n, const Eigen::VectorXd& residual,
                       Eigen::VectorXd& dz) {
  int p[small_lu_max_size], q[small_lu_max_size];
  // The contacts' systems have p + sides + contacts unknowns: 6 to 12 for an axis (4
  // parameters), fewer for a plane or circle. With n known at compile time the LU's loops are
  // unrolled (the same operations in the same order: the same bits, tests/test_small_lu.cpp).
  bool factored;
  switch (n) {
    case 4: factored = full_piv_lu_in_place<4>(factor, n, p, q); break;
    case 5: factored = full_piv_lu_in_place<5>(factor, n, p, q); break;
    case 6: factored = full_piv_lu_in_place<6>(factor, n, p, q); break;
    case 7: factored = full_piv_lu_in_place<7>(factor, n, p, q); break;
    case 8: factored = full_piv_lu_in_place<8>(factor, n, p, q); break;
    case 9: factored = full_piv_lu_in_place<9>(factor, n, p, q); break;
    case 10: factored = full_piv_lu_in_place<10>(factor, n, p, q); break;
    case 11: factored = full_piv_lu_in_place<11>(factor, n, p, q); break;
    case 12: factored = full_piv_lu_in_place<12>(factor, n, p, q); break;
    default: factored = full_piv_lu_in_place(factor, n, p, q); break;
  }
  if (!factored || !full_piv_lu_invertible(factor, n)) return false;
  double minus[small_lu_max_size];
  for (int i = 0; i < n; ++i) minus[i] = -residual(i);
  dz.resize(n);
  full_piv_lu_solve(factor, n, p, q, minus, dz.data());
  return true;
}

/// dz = -J^-1 residual above small_lu_max_size unknowns, by Eigen's FullPivLU.
bool large_newton_step(const Eigen::MatrixXd& jacobian, const Eigen::VectorXd& residual,
                       Eigen::VectorXd& dz) {
  const Eigen::FullPivLU<Eigen::MatrixXd> lu(jacobian);
  if (!lu.isInvertible()) return false;
  dz = lu.solve(-residual);
  return true;
}

/// The polish's working storage, owned by the caller (one per descent) and reused by its
/// polishes so that repeated ones of the same shape allocate nothing. Every entry is cleared,
/// resized or overwritten before it is read: a polish's result does not depend on it.
struct PolishScratch {
  std::vector<Constraint> active;
  std::vector<double> weight;
  std::vector<Eigen::Index> indices;
  Eigen::VectorXd z, d, d_plus, d_minus, residual, x, e, dz, all;
  Eigen::MatrixXd g, g_plus, g_minus, jacobian;  // jacobian: above small_lu_max_size only
  SmallFactor factor;                             // the Jacobian up to small_lu_max_size
  std::vector<double> hessian;
};

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
/// worse: otherwise the element from the linear programmes stands. `current`, where the caller
/// has them, are the distances of every point at the model's current element (zero step): the
/// objective to beat is taken from them instead of evaluating every point a second time (the
/// same bits: the distances do not depend on whether gradients were asked for). `scratch` is
/// the caller's PolishScratch (above).
bool polish_on_contacts(ZoneModel& model, ZoneObjective objective,
                        const std::vector<Constraint>& contacts,
                        const std::vector<double>& multipliers, double scale,
                        PolishScratch& scratch, const Eigen::VectorXd* current = nullptr) {
  const int p = model.parameter_count();
  const int sides = (uses_upper(objective) ? 1 : 0) + (uses_lower(objective) ? 1 : 0);
  auto side_index = [&](Side side) { return side == Side::upper || sides == 1 ? 0 : 1; };
  auto sign = [](Side side) { return side == Side::upper ? 1.0 : -1.0; };

  // Only contacts that carry weight define the optimum; they are worked on in a model of their
  // own points (column k of it is contact k), so each Newton iteration costs O(contacts).
  std::vector<Constraint>& active = scratch.active;
  std::vector<double>& weight = scratch.weight;
  std::vector<Eigen::Index>& indices = scratch.indices;
  active.clear();
  weight.clear();
  indices.clear();
  // At most one entry a contact: one allocation each on the descent's first polish instead of
  // a growth by doubling (no effect on any value).
  active.reserve(contacts.size());
  weight.reserve(contacts.size());
  indices.reserve(contacts.size());
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
  Eigen::VectorXd& z = scratch.z;
  z.setZero(unknowns);
  Eigen::VectorXd &d = scratch.d, &d_plus = scratch.d_plus, &d_minus = scratch.d_minus;
  Eigen::MatrixXd &g = scratch.g, &g_plus = scratch.g_plus, &g_minus = scratch.g_minus;
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
  // Both set to zero at the top of every iteration before they are filled.
  Eigen::VectorXd& residual = scratch.residual;
  // The Jacobian in the small factor's top left block (column stride small_lu_max_size),
  // factorised where it is assembled; a larger one in a matrix of its own for FullPivLU.
  const bool small = unknowns <= small_lu_max_size;
  Eigen::MatrixXd& jacobian = scratch.jacobian;
  residual.resize(unknowns);
  if (!small) jacobian.resize(unknowns, unknowns);
  const Eigen::Index stride = small ? Eigen::Index(small_lu_max_size) : unknowns;
  // Each contact's p x p Hessian, column-major, one after the other (contact k's at k p p):
  // every entry is written in every iteration before it is read.
  const std::size_t pp = static_cast<std::size_t>(p) * static_cast<std::size_t>(p);
  std::vector<double>& hessian = scratch.hessian;
  hessian.resize(static_cast<std::size_t>(m) * pp);
  bool settled = false;
  // Reused: the loop below runs 2 p + 1 evaluations a pass.
  Eigen::VectorXd &x = scratch.x, &e = scratch.e, &dz = scratch.dz;
  x.resize(p);
  e.resize(p);
  // The system is assembled by plain loops over its entries: the same products and sums, in
  // the same order, as the Eigen block expressions they replaced (J_xx += (s lambda) H_k,
  // r_x += (s lambda) g_k, H_k's column j = (g+ - g-) / (2 h)), without their set-up on
  // blocks of a few entries.
  const Eigen::Index u = unknowns;
  for (int iteration = 0; iteration < 30 && !settled; ++iteration) {
    x = z.head(p);
    for (int j = 0; j < p; ++j) {
      e = x;
      e(j) += h;
      local->evaluate(e, d_plus, &g_plus);
      e(j) -= 2.0 * h;
      local->evaluate(e, d_minus, &g_minus);
      const double two_h = 2.0 * h;
      for (int k = 0; k < m; ++k) {
        double* column = hessian.data() + static_cast<std::size_t>(k) * pp +
                         static_cast<std::size_t>(j) * static_cast<std::size_t>(p);
        for (int i = 0; i < p; ++i) column[i] = (g_plus(k, i) - g_minus(k, i)) / two_h;
      }
    }
    local->evaluate(x, d, &g);
    residual.setZero();
    double* J = small ? scratch.factor.data() : jacobian.data();
    for (Eigen::Index c = 0; c < unknowns; ++c) std::fill(J + c * stride, J + c * stride + u, 0.0);
    for (int s = 0; s < sides; ++s) residual(p + s) = -1.0;
    for (int k = 0; k < m; ++k) {
      const Side side = active[static_cast<std::size_t>(k)].side;
      const double lambda = z(p + sides + k), sg = sign(side);
      const int row = p + sides + k, t = p + side_index(side);
      const double w = sg * lambda;
      for (int i = 0; i < p; ++i) residual(i) += w * g(k, i);
      residual(t) += lambda;
      residual(row) = d(k) - z(t);
      const double* hk = hessian.data() + static_cast<std::size_t>(k) * pp;
      for (int c = 0; c < p; ++c)
        for (int r = 0; r < p; ++r) J[r + c * stride] += w * hk[r + c * p];
      for (int i = 0; i < p; ++i) J[i + row * stride] = sg * g(k, i);
      J[t + row * stride] = 1.0;
      for (int i = 0; i < p; ++i) J[row + i * stride] = g(k, i);
      J[row + t * stride] = -1.0;
    }
    if (!(small ? small_newton_step(scratch.factor, static_cast<int>(unknowns), residual, dz)
                : large_newton_step(jacobian, residual, dz)))
      return false;
    if (!dz.allFinite() || dz.head(p).lpNorm<Eigen::Infinity>() > scale) return false;
    z += dz;
    settled = dz.head(p).lpNorm<Eigen::Infinity>() <= 1e-15 * scale;
  }

  // Keep the refined element only if it is a valid zone at least as good as the current one.
  x = z.head(p);
  if (!settled || (z.tail(m).array() < 0.0).any()) return false;
  // The zone test first: where another point crosses it (the usual end of a start whose
  // contacts changed), the current element's objective is not needed.
  // Every point's distances in a vector of their own (the local model's stay m long).
  Eigen::VectorXd& all = scratch.all;
  model.evaluate(x, all, nullptr);
  const double rounding =
      64.0 * std::numeric_limits<double>::epsilon() * std::max(scale, all.cwiseAbs().maxCoeff());
  if (uses_upper(objective) && all.maxCoeff() > z(p) + rounding) return false;
  if (uses_lower(objective) && all.minCoeff() < z(p + side_index(Side::lower)) - rounding)
    return false;
  const double f_refined = true_objective(objective, all);
  double f_start;
  if (current != nullptr) {
    f_start = true_objective(objective, *current);
  } else {
    e.setZero(p);  // the current element: no step
    model.evaluate(e, all, nullptr);
    f_start = true_objective(objective, all);
  }
  if (f_refined > f_start + rounding) return false;
  model.move(x);
  return true;
}

}  // namespace

// ------------------------------------------------------------------ trust-region iteration

namespace {

/// Whether a programme's binding rows that carry weight (multiplier > 1e-12, the rows
/// polish_on_contacts works on) are, as a set of points and sides, the start's contacts that
/// carry weight. Orders may differ (a programme lists its rows in row order).
bool same_contacts(const std::vector<Constraint>& rows, const std::vector<double>& multipliers,
                   const std::vector<Constraint>& start, const std::vector<double>& weights) {
  std::vector<std::pair<Eigen::Index, int>> a, b;
  a.reserve(rows.size());
  b.reserve(start.size());
  for (std::size_t k = 0; k < rows.size(); ++k)
    if (multipliers[k] > 1e-12) a.push_back({rows[k].point, rows[k].side == Side::upper ? 0 : 1});
  for (std::size_t k = 0; k < start.size(); ++k)
    if (weights[k] > 1e-12) b.push_back({start[k].point, start[k].side == Side::upper ? 0 : 1});
  if (a.size() != b.size()) return false;
  std::sort(a.begin(), a.end());
  std::sort(b.begin(), b.end());
  return a == b;
}

/// One descent of the sequential linear programme from the model's current element to a
/// first-order stationary element (or the iteration limit, or an escape of a maximum-inscribed
/// element from the points' hull), finished by the Newton refinement on its contacts. On return
/// `programme` is the programme solved at the final element and `d` the distances there;
/// `programmes` counts the linear programmes of the iteration, `summary` records the largest
/// one and whether the polish ran.
ZoneStatus descend(ZoneModel& model, ZoneObjective objective, const ZoneOptions& options,
                   ZoneProgramme& programme, Eigen::VectorXd& d, ZoneSummary& summary,
                   int& programmes, bool& polished_at_end) {
  polished_at_end = false;
  const int p = model.parameter_count();
  const double scale = options.scale > 0.0 ? options.scale : 1.0;
  const double length_tolerance = options.step_tolerance * scale;
  const double largest_radius = scale;
  double delta = options.initial_trust_radius > 0.0 ? options.initial_trust_radius : 1e-3 * scale;
  delta = std::min(std::max(delta, 10.0 * length_tolerance), largest_radius);
  const Eigen::VectorXd no_step = Eigen::VectorXd::Zero(p);

  // A start from an earlier fit of nearly the same points: Newton's method on the optimality
  // conditions of its contacts (polish_on_contacts, which keeps the result only where the
  // multipliers stay non-negative, no other point crosses the zone and the objective is no
  // worse). Where they still hold, the element is the optimum already and the first programme
  // certifies it; where they changed, the descent goes on from the earlier element.
  std::vector<Constraint> start;
  std::vector<double> start_weights;
  if (options.from_start && !options.start_contacts.empty()) {
    start.reserve(options.start_contacts.size());
    start_weights.reserve(options.start_contacts.size());
    for (const FitContact& c : options.start_contacts) {
      const Side side = c.outer ? Side::upper : Side::lower;
      if (c.point >= static_cast<std::size_t>(model.point_count()) ||
          (side == Side::upper ? !uses_upper(objective) : !uses_lower(objective))) {
        start.clear();  // not this problem's contacts: start from the element alone
        break;
      }
      start.push_back({static_cast<Eigen::Index>(c.point), side});
      start_weights.push_back(c.multiplier);
    }
  }
  if (!start.empty()) programme.seed(start);

  PolishScratch scratch;  // shared by this descent's polishes
  Eigen::VectorXd trial;
  Eigen::MatrixXd g;
  model.evaluate(no_step, d, &g);
  double f = true_objective(objective, d);
  const bool watch_location = objective == ZoneObjective::maximum_inscribed;
  auto escaped = [&] { return watch_location && model.location_offset() > options.location_limit; };

  // The Newton step is paid for only where the start's contacts may still hold: the first
  // programme, at the earlier element and seeded with them, is solved before it (it is the
  // descent's first programme wherever the step fails, which changes neither the element nor
  // the programme's inputs), and the step is tried where that programme's weighted binding rows
  // are the start's weighted contacts (same_contacts). Otherwise the linearisation at the
  // earlier element already finds other points on the zone, the contacts changed and the
  // descent goes on from the programme's step. Where the step holds, the element moved: the
  // programme is seeded again and solved at the new element, as without the test.
  bool start_polished = false;
  bool have_first = false;  // `first` is this element's programme (the descent's first)
  LinearStep first;
  if (!start.empty()) {
    bool try_step = true;
    if (!escaped() && options.max_iterations > 0) {
      first = programme.solve(d, g, delta);
      have_first = true;
      try_step = same_contacts(programme.binding(), programme.multipliers(), start, start_weights);
      if (!try_step) {
        // A degenerate vertex (e.g. three-lobed data) has other bases of the same optimum: the
        // start's contacts still hold where they are all extreme at the programme's step, to
        // the linearisation's rounding.
        const Eigen::VectorXd moved = d + g * first.step;
        const double tolerance = 1e-9 * scale;
        const double top = moved.maxCoeff(), bottom = moved.minCoeff();
        try_step = true;
        for (std::size_t k = 0; k < start.size() && try_step; ++k)
          if (start_weights[k] > 1e-12)
            try_step = start[k].side == Side::upper ? moved(start[k].point) >= top - tolerance
                                                    : moved(start[k].point) <= bottom + tolerance;
      }
    }
    if (try_step && polish_on_contacts(model, objective, start, start_weights, scale, scratch)) {
      start_polished = true;
      have_first = false;
      programme.seed(start);
      model.evaluate(no_step, d, &g);
      f = true_objective(objective, d);
    }
  }

  ZoneStatus status = ZoneStatus::converged;
  bool programme_is_current = false;  // the last linear programme was set up at this element
  int iterations = 0;
  if (escaped()) {
    status = ZoneStatus::unbounded;
  } else {
    for (;;) {
      if (iterations >= options.max_iterations) {
        status = ZoneStatus::iteration_limit;
        break;
      }
      ++iterations;
      ++programmes;
      const LinearStep s = have_first ? first : programme.solve(d, g, delta);
      have_first = false;
      programme_is_current = true;
      summary.largest_working_set = std::max(summary.largest_working_set, s.rows);
      // No predicted improvement beyond the rounding of the distances themselves: the
      // linearisation at a first-order optimum. (A small prediction alone is no proof: where
      // fewer contacts than unknowns hold the optimum, the prediction is the product of the
      // trust region and the distance to the optimum.)
      const double rounding =
          16.0 * std::numeric_limits<double>::epsilon() * std::max(scale, d.cwiseAbs().maxCoeff());
      if (options.from_start && iterations == 1)
        summary.start = start_polished && s.predicted <= rounding ? StartOutcome::held
                                                                  : StartOutcome::descended;
      if (s.predicted <= rounding) break;
      model.evaluate(s.step, trial, nullptr);
      const double f_trial = true_objective(objective, trial);
      const double step_length = s.step.lpNorm<Eigen::Infinity>();
      const double ratio = (f - f_trial) / s.predicted;
      // Classical trust-region update (e.g. Nocedal & Wright, Numerical Optimization, ch. 4).
      if (ratio >= 0.01) {
        model.move(s.step);
        // From an earlier element whose contacts changed, the first step is short and its
        // programme's binding rows are likely the optimum's: Newton on them (kept only where
        // valid, as above) lets the next programme certify the element instead of stepping
        // again. Only for started fits, so a fit from its own start keeps its path.
        if (options.from_start && iterations == 1 &&
            polish_on_contacts(model, objective, programme.binding(), programme.multipliers(),
                               scale, scratch))
          summary.polished = true;
        model.evaluate(no_step, d, &g);
        f = true_objective(objective, d);
        programme_is_current = false;
        if (escaped()) {
          status = ZoneStatus::unbounded;
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
                               scale, scratch, &d)) {
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

  if (status == ZoneStatus::converged) {
    if (!programme_is_current) programme.solve(d, g, std::max(delta, 10.0 * length_tolerance));
    if (polish_on_contacts(model, objective, programme.binding(), programme.multipliers(),
                           scale, scratch, &d)) {
      model.evaluate(no_step, d, nullptr);
      summary.polished = true;
      polished_at_end = true;
    }
    // The polish keeps the programme's contacts, so its binding rows and multipliers still
    // describe the optimum.
  }
  return status;
}

/// A point's key for ordering equally good elements: its offset from the middle of the zone,
/// d_i - (max d + min d) / 2, in the sense that makes the first offset beyond `resolution` (in
/// the cloud's order) negative. A plane's signed distances then give the same keys whichever
/// way its normal points, and so do the radial distances of circles and cylinders.
Eigen::VectorXd ordering_keys(const Eigen::VectorXd& d, double resolution) {
  Eigen::VectorXd k = d.array() - 0.5 * (d.maxCoeff() + d.minCoeff());
  for (Eigen::Index i = 0; i < k.size(); ++i)
    if (std::abs(k(i)) > resolution) {
      if (k(i) > 0.0) k = -k;
      break;
    }
  return k;
}

/// Of two equally good optima, the one to report: a choice that depends on the points alone,
/// not on their placement (distances are invariant under rigid motion) nor on the start or
/// the sense of its axis or normal. The first point (in the cloud's order) whose key
/// (ordering_keys) differs between them by more than `resolution` decides; the element where
/// it is larger is taken. Mirror images of a symmetric part on which every point is a contact
/// (all keys equal in size) are told apart by the keys' signs.
bool preferred(const Eigen::VectorXd& a, const Eigen::VectorXd& b, double resolution) {
  const Eigen::VectorXd ka = ordering_keys(a, resolution), kb = ordering_keys(b, resolution);
  for (Eigen::Index i = 0; i < ka.size(); ++i)
    if (std::abs(ka(i) - kb(i)) > resolution) return ka(i) > kb(i);
  return false;
}

/// A converged element that is not proven unique may be a stationary point that is not an
/// optimum: where a contact's distance is flat to first order along some motion but convex
/// along it (a bore bent in one plane: shifting the inscribed axis across the plane of the bend
/// moves it away from every contact, to second order), the linear programme predicts no gain
/// and the descent stops, at an element that depends on the start (the sense of its axis, the
/// programme's ties). The walks along the near-optimal set (walk_ends) pass such motions; an
/// end with a better objective starts a new descent. All stationary elements found are kept;
/// the best objective wins, and equally good ones (within the objective tolerance: e.g.
/// mirror-image optima of a symmetric bore) are ordered by `preferred`, so the result does not
/// depend on the start. The ambiguity is the largest displacement of the reported element's
/// reference points to any element found whose objective is within the tolerance of its own:
/// the other optima and the ends of every optimum's walks (docs/chebyshev.md, "Non-unique
/// optima"). Leaves the reported element in `model` and its distances in `d`.
/// The smallest ambiguity reported, as a fraction of the data's size.
constexpr double ambiguity_report_fraction = 1e-8;

void explore_optima(ZoneModel& model, ZoneObjective objective, const ZoneOptions& options,
                    ZoneProgramme& programme, Eigen::VectorXd& d, ZoneSummary& summary,
                    bool polished) {
  // At most this many further descents: each costs a few linear programmes and walks.
  constexpr int most_descents = 16;
  const Eigen::Index n = model.point_count();
  const int p = model.parameter_count();
  const double scale = options.scale > 0.0 ? options.scale : 1.0;
  const double resolution = displacement_resolution(options);
  // How much worse the exploring walks may go: far above the objective tolerance (64 ulp), so
  // that they cross the ridges between local optima whose objectives differ by far less than
  // any measurement could show (1e-10 mm on a bore bent by 10 um), and small enough that the
  // walks stay near the optimum.
  const double allowance = options.exploration_allowance * scale;
  std::vector<Eigen::Index> all(static_cast<std::size_t>(n));
  for (Eigen::Index i = 0; i < n; ++i) all[static_cast<std::size_t>(i)] = i;

  struct Stationary {
    std::unique_ptr<ZoneModel> model;
    Eigen::VectorXd d;
    ZoneProgramme programme;
    bool polished = false;  // the descent ended on a regular Newton refinement of its contacts
  };
  struct Optimum {
    std::unique_ptr<ZoneModel> model;
    Eigen::VectorXd d;
    double f = 0.0;
    std::vector<WalkEnd> ends;
    bool unique = false;  // proven by its contacts (no walks)
    bool polished = false;
  };
  std::vector<Optimum> optima;
  std::vector<Stationary> pending;
  pending.push_back({model.subset(all), d, programme, polished});
  int descents = 0;
  Eigen::VectorXd at;
  // Whether a stationary element is one already found (to well below any figure reported).
  auto known = [&](const ZoneModel& element) {
    for (const Optimum& o : optima) {
      const Eigen::VectorXd x = o.model->step_to(element);
      o.model->evaluate(x, at, nullptr);
      if (largest_displacement(*o.model, x, at, o.d) <= 10.0 * resolution) return true;
    }
    return false;
  };
  auto descend_from = [&](const ZoneModel& from, const Eigen::VectorXd& step) {
    if (descents >= most_descents) return;
    ++descents;
    Stationary next{from.subset(all), {}, ZoneProgramme(objective, options, n, p), false};
    next.model->move(step);
    const ZoneStatus status = descend(*next.model, objective, options, next.programme, next.d,
                                      summary, summary.ambiguity_programmes, next.polished);
    summary.lp_fallbacks += next.programme.fallbacks();
    if (status == ZoneStatus::converged) pending.push_back(std::move(next));
  };
  try {
    while (!pending.empty()) {
      Stationary s = std::move(pending.front());
      pending.erase(pending.begin());
      if (known(*s.model)) continue;
      optima.push_back(
          {std::move(s.model), s.d, true_objective(objective, s.d), {}, false, s.polished});
      Optimum& o = optima.back();
      const ZoneModel& from = *o.model;
      const double tolerance = objective_tolerance(options, o.d);
      double reach = 0.0;
      std::vector<Eigen::VectorXd> starts;
      double best_so_far = o.f;
      for (const Optimum& other : optima) best_so_far = std::min(best_so_far, other.f);
      if (proven_unique(from, objective, options, s.programme, o.d, allowance, reach)) {
        o.unique = true;
      } else if (o.f <= best_so_far + tolerance) {
        // The walks measure the ambiguity of an optimum that may be reported; one already
        // beaten cannot be, and its near-optimal set lies outside the best one's tolerance.
        o.ends = walk_ends(from, objective, options, o.d, 0.0, summary.ambiguity_programmes);
        for (const WalkEnd& e : o.ends)
          if (e.objective < o.f - tolerance) starts.push_back(e.step);
      }
      // A proven optimum whose objective rises past the allowance before a reference point
      // can move by the warning length (to first order) is sharp: explorers stay within that
      // reach of it, where another optimum could not raise the ambiguity to a figure worth a
      // warning, and descents from their ends come back to it. Only flat optima (all those not
      // proven, and proven ones about as flat as the mirror-image pair of a bent bore) are
      // explored; the others pay nothing.
      if (allowance > tolerance && reach > ambiguity_warning_length)
        for (const WalkEnd& e : walk_ends(from, objective, options, o.d, allowance,
                                          summary.ambiguity_programmes))
          starts.push_back(e.step);
      for (const Eigen::VectorXd& step : starts) descend_from(*optima.back().model, step);
    }
  } catch (const FitError& e) {
    // The element itself is valid; only its uniqueness is unknown, and is reported so.
    summary.ambiguity_failure = e.what();
  }
  if (optima.empty()) return;
  if (optima.size() == 1 && optima.front().unique) {
    summary.proven_unique = true;
    return;
  }

  // Displacement of the reference points of `from` to `element`.
  auto displacement = [&](const ZoneModel& from, const Eigen::VectorXd& d_from,
                          const ZoneModel& element) {
    const Eigen::VectorXd x = from.step_to(element);
    from.evaluate(x, at, nullptr);
    return largest_displacement(from, x, at, d_from);
  };
  // The best objective wins; optima within the tolerance of it are equally good.
  const Optimum* best_optimum = &optima.front();
  for (const Optimum& o : optima)
    if (o.f < best_optimum->f) best_optimum = &o;
  const double best = best_optimum->f;
  const double limit = best + objective_tolerance(options, best_optimum->d);
  auto tied = [&](const Optimum& o) { return o.f <= best + objective_tolerance(options, o.d); };
  // How far an optimum's own walks moved it within the tolerance (its flat set's reach).
  auto reach_of = [&](const Optimum& o) {
    double r = 0.0;
    for (const WalkEnd& e : o.ends)
      if (e.objective <= o.f + objective_tolerance(options, o.d))
        r = std::max(r, largest_displacement(*o.model, e.step, e.distances, o.d));
    return r;
  };
  // The ambiguity is reported only above 1e-8 of the data's size (0.5 nm on a 50 mm bore, far
  // below the 0.1 um warning length): below it, the walks' reach is set by the objective
  // tolerance and the conditioning of the programme, not by the part, and the same points
  // placed elsewhere give a different figure of that order (tests/test_invariance.cpp).
  const double reported_from = std::max(resolution, ambiguity_report_fraction * scale);

  // The tie-break (docs/chebyshev.md, "Non-unique optima", 5). Each equally good optimum that
  // is not proven unique is moved to the element of least sum of squared residuals among
  // those within the tolerance of the best objective (settle_in_optimal_set). Optima that
  // settle on one element lie in one flat set (e.g. anywhere across the plane of a bent bore's
  // bend, or at either end of that set): that element, a rule of the points alone, stands for
  // them all. An optimum alone in its set stands for itself where the Newton refinement of its
  // contacts located it (a regular system: an isolated optimum, e.g. the smallest circle on two
  // diametral points, whose near-optimal set is the tolerance's own well about it, up to
  // (2 r delta)^(1/2) wide: a choice at its rim would depend on the tolerance, not on the part)
  // or where its set is no wider than the ambiguity's reporting level.
  // Of the distinct sets, the one whose element the points prefer (`preferred`) is reported.
  struct Candidate {
    const Optimum* origin = nullptr;
    std::unique_ptr<ZoneModel> model;  // the settled element; null where settling failed
    Eigen::VectorXd d;
    std::size_t group = 0;
  };
  std::vector<Candidate> candidates;
  for (const Optimum& o : optima) {
    if (!tied(o)) continue;
    Candidate c;
    c.origin = &o;
    if (!o.unique && summary.ambiguity_failure.empty()) {
      std::unique_ptr<ZoneModel> moved = o.model->subset(all);
      Eigen::VectorXd moved_d = o.d;
      if (settle_in_optimal_set(*moved, objective, options, options.residuals_about_offset, limit,
                                moved_d)) {
        c.model = std::move(moved);
        c.d = std::move(moved_d);
      }
    }
    c.group = candidates.size();
    for (const Candidate& earlier : candidates)
      if (c.model && earlier.model &&
          displacement(*earlier.model, earlier.d, *c.model) <= 10.0 * resolution) {
        c.group = earlier.group;
        break;
      }
    candidates.push_back(std::move(c));
  }
  // A group's element: the settled one when several optima share it or the optimum's own set is
  // wide; otherwise the optimum itself.
  auto members = [&](std::size_t group) {
    return std::count_if(candidates.begin(), candidates.end(),
                         [&](const Candidate& c) { return c.group == group; });
  };
  auto uses_settled = [&](const Candidate& c) {
    return c.model && (members(c.group) > 1 ||
                       (!c.origin->polished && reach_of(*c.origin) > reported_from));
  };
  const Candidate* chosen = nullptr;
  for (const Candidate& c : candidates) {
    // Each group once, at its first member.
    if (c.group != static_cast<std::size_t>(&c - candidates.data())) continue;
    if (!chosen) {
      chosen = &c;
      continue;
    }
    const Eigen::VectorXd& dc = uses_settled(c) ? c.d : c.origin->d;
    const Eigen::VectorXd& dk = uses_settled(*chosen) ? chosen->d : chosen->origin->d;
    if (preferred(dc, dk, resolution)) chosen = &c;
  }
  const bool settled = uses_settled(*chosen);
  const ZoneModel* here = settled ? chosen->model.get() : chosen->origin->model.get();
  const Eigen::VectorXd* here_d = settled ? &chosen->d : &chosen->origin->d;
  // A settled element is measured by new walks from it (the optima's walks started elsewhere);
  // they cover its own set, so the optima of its group are not visited again below.
  std::vector<WalkEnd> settled_ends;
  if (settled) {
    try {
      settled_ends =
          walk_ends(*here, objective, options, *here_d, 0.0, summary.ambiguity_programmes);
    } catch (const FitError& e) {
      summary.ambiguity_failure = e.what();
    }
  }
  auto in_chosen_group = [&](const Optimum& o) {
    for (const Candidate& c : candidates)
      if (c.origin == &o) return c.group == chosen->group;
    return false;
  };
  const double here_limit =
      true_objective(objective, *here_d) + objective_tolerance(options, *here_d);

  // The ambiguity: from the reported element to every element found within the tolerance.
  double worst = 0.0;
  for (const WalkEnd& e : settled_ends)
    if (e.objective <= here_limit)
      worst = std::max(worst, largest_displacement(*here, e.step, e.distances, *here_d));
  for (const Optimum& o : optima) {
    if (!(o.f <= here_limit)) continue;
    if (settled && in_chosen_group(o)) continue;  // the new walks measured that set
    if (here != o.model.get()) worst = std::max(worst, displacement(*here, *here_d, *o.model));
    for (const WalkEnd& e : o.ends) {
      if (!(e.objective <= here_limit)) continue;
      if (here == o.model.get()) {  // its own walks: the step is in its parametrisation
        worst = std::max(worst, largest_displacement(*here, e.step, e.distances, *here_d));
        continue;
      }
      const std::unique_ptr<ZoneModel> moved = o.model->subset(all);
      moved->move(e.step);
      worst = std::max(worst, displacement(*here, *here_d, *moved));
    }
  }
  summary.ambiguity = worst > reported_from ? worst : 0.0;
  summary.proven_unique = chosen->origin->unique && summary.ambiguity == 0.0;
  summary.tie_broken = settled;
  if (here != optima.front().model.get()) {  // the first is the model's own element
    model.move(model.step_to(*here));
    model.evaluate(Eigen::VectorXd::Zero(p), d, nullptr);
  }
}

/// "; 2 linear programmes solved by Clp after the dense solver failed", or nothing.
std::string fallback_note(int fallbacks) {
  if (fallbacks == 0) return "";
  return "; " + std::to_string(fallbacks) + " linear programme" + (fallbacks == 1 ? "" : "s") +
         " solved by Clp after the dense solver failed";
}

}  // namespace

ZoneSummary solve_zone(ZoneModel& model, ZoneObjective objective, const ZoneOptions& options) {
  ZoneSummary summary;
  Eigen::VectorXd d;
  ZoneProgramme programme(objective, options, model.point_count(), model.parameter_count());
  bool polished = false;
  summary.status =
      descend(model, objective, options, programme, d, summary, summary.iterations, polished);
  if (summary.status == ZoneStatus::converged) {
    // The contacts of the descent's element, for a later fit of nearly the same points
    // (FitSummary::contacts); dropped below if the exploration reports another element.
    summary.contacts.reserve(programme.binding().size());
    for (std::size_t k = 0; k < programme.binding().size(); ++k) {
      const Constraint& c = programme.binding()[k];
      summary.contacts.push_back({static_cast<std::size_t>(c.point), c.side == Side::upper,
                                  programme.multipliers()[k]});
    }
  }
  if (options.from_start && summary.start == StartOutcome::none)
    summary.start = StartOutcome::descended;  // stopped before a first programme
  if (summary.status == ZoneStatus::converged && options.assess_ambiguity) {
    const Eigen::VectorXd descended = d;
    explore_optima(model, objective, options, programme, d, summary, polished);
    if (d.size() != descended.size() || d != descended) summary.contacts.clear();
  }
  summary.lp_fallbacks += programme.fallbacks();
  // The polish may have run earlier, but the message reports how the final element was found.

  summary.distances = std::move(d);
  if (!options.message) return summary;  // FitOptions::result_messages off: nobody reads it
  const std::string rows = std::to_string(summary.largest_working_set);
  switch (summary.status) {
    case ZoneStatus::converged:
      summary.message = "converged in " + std::to_string(summary.iterations) +
                        " linear programmes (at most " + rows + " rows)" +
                        (summary.polished ? ", contacts refined by Newton's method" : "") +
                        (summary.tie_broken
                             ? "; least-squares choice among equally good elements"
                             : "") +
                        (summary.ambiguity_programmes > 0 && !summary.proven_unique
                             ? "; not proven unique, " +
                                   std::to_string(summary.ambiguity_programmes) +
                                   " linear programmes measured its ambiguity"
                             : "") +
                        (summary.ambiguity_failure.empty() ? "" : "; ambiguity not assessed") +
                        (options.assess_ambiguity ? "" : "; uniqueness not assessed (off)") +
                        (summary.start == StartOutcome::held
                             ? "; started from an earlier element, whose contacts held"
                         : summary.start == StartOutcome::descended
                             ? "; started from an earlier element"
                             : "");
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
  summary.message += fallback_note(summary.lp_fallbacks);
  return summary;
}

ZoneOptions zone_options(const FitOptions& options, double scale, double start_form) {
  ZoneOptions z;
  z.max_iterations = options.max_iterations;
  z.step_tolerance = options.step_tolerance;
  z.scale = scale;
  z.assess_ambiguity = options.assess_ambiguity;
  z.message = options.result_messages;
  z.lp_solver = options.lp_solver;
  // The Chebyshev element lies within about the least-squares residual span of the start.
  z.initial_trust_radius = start_form > 0.0 ? start_form : 0.0;
  if (options.start) {
    z.from_start = true;
    z.start_contacts = options.start->contacts;
  }
  return z;
}

ZoneOptions started_zone_options(const FitOptions& options, double scale,
                                 Eigen::Index point_count) {
  ZoneOptions z = zone_options(options, scale, options.start->form);
  if (options.start->point_count != static_cast<std::size_t>(point_count)) z.start_contacts.clear();
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
  s.lp_fallbacks = zone.lp_fallbacks;
  s.contacts = zone.contacts;
  s.start = zone.start;
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
