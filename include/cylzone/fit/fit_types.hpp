#pragma once
/// \file fit_types.hpp
/// Vocabulary shared by every fit: the association method, options in, a summary out, residuals.
///
/// Conventions (docs/methods.md explains them with their sources):
///  * All fits work on orthogonal (geometric) distances in double precision, on data centred at
///    its centroid first, so parts several metres from the origin lose no accuracy.
///  * Directions (line and cylinder axes, plane and circle normals) are unit vectors with a
///    defined sign: pointing to the same side as `FitOptions::axis_hint` when one is given,
///    otherwise toward +z (then +y, then +x when perpendicular).
///  * An axis point is the foot of the perpendicular from the points' centroid onto the axis; a
///    plane point is the centroid projected onto the plane; the extent of a line or cylinder is
///    [min, max] of (p - point).direction over the points.
///  * Residuals are signed orthogonal distances: along the normal for a plane; distance from
///    the axis (or centre) minus the radius for circles, cylinders and spheres, so positive
///    means farther from the axis; the plain distance (>= 0) for a line.
///  * form is the span max - min of the residuals, except for a line, where it is the diameter
///    of the cylindrical zone about the fitted line (2 x the largest distance).
///  * Chebyshev fits (minimum zone, mating envelopes) whose optimum is not a single element:
///    the standards define the value (ISO 1101 and ISO 14405-1 the zone's width and the
///    envelope's size; ASME Y14.5.1 recognises non-unique mating envelopes, from memory), not
///    which of the equally good elements is reported, so the choice is cylzone's. Among the
///    elements whose objective is within the tolerance of the optimum's (docs/chebyshev.md,
///    "Non-unique optima"), the one with the least sum of squared residuals is reported (about
///    a free radius or offset; a line's distances themselves): a lexicographic second stage
///    (goal programming by priorities; Nocedal & Wright, Numerical Optimization, 2nd ed., 2006,
///    from memory for the section). Distinct optima (mirror images of a symmetric part) are
///    ordered by the points' offsets from the zone's middle. Both depend on the points alone:
///    the element reported does not depend on the start, the hint's sense or a rigid motion of
///    the points. `ambiguity` still reports how far the element can move among the optima.

#include <Eigen/Core>
#include <cstddef>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "cylzone/core/threads.hpp"

namespace cylzone {

/// How the ideal element is associated with the points.
enum class FitMethod {
  least_squares,         ///< Gaussian: minimise the sum of squared orthogonal distances
  minimum_zone,          ///< Chebyshev: minimise the largest distance / the zone width
  maximum_inscribed,     ///< largest circle/cylinder with every point outside (hole mating envelope)
  minimum_circumscribed  ///< smallest circle/cylinder with every point inside (pin mating envelope)
};

/// "least-squares", "minimum-zone", "max-inscribed", "min-circumscribed".
std::string_view method_name(FitMethod method) noexcept;
/// Inverse of method_name; empty when the text names no method.
std::optional<FitMethod> parse_method(std::string_view text) noexcept;

enum class FitStatus {
  converged,       ///< the step (or the LP's improvement) fell below the tolerance
  iteration_limit  ///< stopped at max_iterations; the element is the best found, not proven optimal
};

/// The solver of the Chebyshev fits' linear programmes (docs/chebyshev.md, "Solvers"). Both solve
/// the same programmes to the same optimum; figures agree to rounding (1e-12 mm), not bit for bit.
enum class LpSolver {
  clp,   ///< COIN-OR Clp's dual simplex: the default, and the reference
  dense  ///< a dense dual simplex for these small programmes, many times cheaper per programme;
         ///< a programme it cannot solve is solved by Clp (FitSummary::lp_fallbacks)
};

/// A straight line in space: a point on it and a unit direction.
struct Axis {
  Eigen::Vector3d point = Eigen::Vector3d::Zero();
  Eigen::Vector3d direction = Eigen::Vector3d::UnitZ();
};

/// A point an optimum rests on: a binding constraint of a Chebyshev fit's final linear
/// programme (docs/chebyshev.md).
struct FitContact {
  std::size_t point = 0;    ///< column of the points
  bool outer = true;        ///< on the largest-distance side of the zone (else the smallest)
  double multiplier = 0.0;  ///< its optimality (Lagrange) multiplier; they sum to 1 per side
};

/// Where a fit starts (FitOptions::start): an earlier fit of the same feature on nearly the
/// same points, e.g. the unperturbed evaluation a Monte Carlo trial perturbs. A start changes
/// the path, never the answer: the fit ends on the same convergence test (least squares) or the
/// same optimality certificate (Chebyshev fits: the linear programme at the element predicts no
/// improvement) as from its own start, and falls back to its own start whenever the earlier
/// element does not lead there (FitSummary::start). Make one with fit_start() of the element.
struct FitStart {
  Axis axis;                  ///< cylinders and lines: the axis; planes: a point and the normal
  double radius = 0.0;        ///< cylinders: the radius (least squares starts from it)
  double form = 0.0;          ///< the residual span: a Chebyshev fit's first trust region
  /// Degrees of arc the points cover about the axis: a maximum-inscribed cylinder from this
  /// start refuses, as from its own, when below 180 (require_enclosing_points).
  double angular_coverage_deg = 360.0;
  std::size_t point_count = 0;  ///< the earlier fit's points: contacts are used only if equal
  /// Chebyshev fits: the earlier optimum's contacts (FitSummary::contacts). Newton's method on
  /// their optimality conditions places the element at once when they still hold.
  std::vector<FitContact> contacts;
};

/// How a fit given FitOptions::start ran (FitSummary::start).
enum class StartOutcome {
  none,        ///< no start was given: the fit's own start
  held,        ///< least squares: converged from the start; Chebyshev: the earlier contacts
               ///< held (Newton on them gave the element the first linear programme certified)
  descended,   ///< Chebyshev: the contacts changed; the linear programmes descended from the
               ///< earlier element to the certified optimum
  restarted    ///< the start did not lead to a certified optimum: solved from the fit's own start
};

struct FitOptions {
  int max_iterations = 100;
  /// Convergence when a parameter step is below this fraction of the data's size (its largest
  /// distance from the centroid).
  double step_tolerance = 1e-13;
  /// Preferred axis / normal direction: used as a starting axis and to fix the sign of the result.
  std::optional<Eigen::Vector3d> axis_hint;
  /// A constraint, not a hint: the cylinder axis (or circle normal) direction is held at this
  /// direction and only location and size are fitted (e.g. a bore perpendicular to datum A).
  std::optional<Eigen::Vector3d> fixed_direction;
  /// Use the points' vectors (when the cloud has them) to propose starting axes for cylinders.
  bool use_point_vectors = true;
  /// A warning is added when the points cover less than this angle around a circle or cylinder.
  double coverage_warning_deg = 180.0;
  /// Report the angular coverage of a Chebyshev cylinder or circle and of a least-squares
  /// circle (their `angular_coverage_deg`, with the warning above) and the covariance of a
  /// least-squares circle or cylinder. Off (a Monte Carlo trial's evaluation:
  /// EvaluationProfile::unread_results), those results are left 0 and empty and no fit gives a
  /// coverage warning: no figure reads them. What rests on coverage is measured either way (a
  /// maximum-inscribed element is refused below 180 degrees from its start's coverage; a
  /// least-squares cylinder always has its own, which a started fit reads through fit_start()).
  bool result_coverage = true;
  /// Write the summary's one-line account (FitSummary::message). Off (a Monte Carlo trial's
  /// evaluation: EvaluationProfile::unread_results), it is left empty: no figure reads it, and a
  /// trial's fits would otherwise compose dozens of strings. Nothing else changes.
  bool result_messages = true;
  /// Chebyshev fits (minimum zone, mating envelopes): when the optimum is not proven unique by
  /// its contacts, walk the near-optimal set to measure how far the element can move, and
  /// explore flat optima for other, equally good or better, local optima (docs/chebyshev.md,
  /// "Non-unique optima"). Off, `ambiguity` stays 0 (not assessed) and the element is the
  /// first optimum the descent reaches, without the tie-break among equally good ones (file
  /// comment): the same as with it on whenever that optimum is proven unique (the sharp optima
  /// of measured bores), possibly another of the equally good ones otherwise, depending on the
  /// start. For repeated trials (Monte Carlo) that need the element only.
  bool assess_ambiguity = true;
  /// Threads a fit may run at once (core/threads.hpp); results do not depend on it.
  std::size_t threads = hardware_threads();
  /// Chebyshev fits: the linear programmes' solver. Repeated trials (Monte Carlo) use `dense`.
  LpSolver lp_solver = LpSolver::clp;
  /// Start from an earlier fit of the same feature (FitStart): the same answer, fewer
  /// iterations. Used whole by cylinders (least squares with a free axis, the Chebyshev
  /// cylinders) and the minimum-zone plane; the other Chebyshev fits (circles, lines) keep
  /// their own start and only try its contacts first; least-squares fits other than the
  /// cylinder ignore it. Empty: the fit's own start.
  std::optional<FitStart> start;
};

/// Ceres-style summary: what happened, in one line, plus warnings a user must see.
struct FitSummary {
  FitMethod method = FitMethod::least_squares;
  FitStatus status = FitStatus::converged;
  int iterations = 0;
  std::size_t point_count = 0;
  /// One line, e.g. "converged in 6 iterations (start 2 of 4)"; empty for the least-squares and
  /// Chebyshev cylinders and circles when FitOptions::result_messages is off.
  std::string message;
  std::vector<std::string> warnings;  ///< e.g. "points cover only 84.0 degrees of arc"
  /// Chebyshev fits with LpSolver::dense: linear programmes the dense solver reported it could
  /// not solve, which Clp then solved (0 otherwise).
  int lp_fallbacks = 0;
  /// Chebyshev fits: the points the optimum rests on (the final linear programme's binding
  /// constraints), when the element is the descent's own (empty after a tie-break among equally
  /// good elements, and for least squares). A later fit of nearly the same points starts from
  /// them (FitStart::contacts).
  std::vector<FitContact> contacts;
  /// How FitOptions::start served, if one was given.
  StartOutcome start = StartOutcome::none;
};

struct Residuals {
  Eigen::VectorXd values;  ///< one per point, in the cloud's order
  double rms = 0.0;
  double form = 0.0;       ///< see file comment
};

/// Parameter covariance of a least-squares fit, sigma^2 (J^T J)^-1 with sigma^2 = SSR / (n - p),
/// expressed in a local frame at the solution. Empty (0x0) for Chebyshev and mating fits.
/// `basis` columns are (u, v, w) with w the element's direction/normal; the parameter order of
/// each element is documented beside its result type.
struct ParameterCovariance {
  Eigen::MatrixXd matrix;
  Eigen::Matrix3d basis = Eigen::Matrix3d::Identity();
};

}  // namespace cylzone
