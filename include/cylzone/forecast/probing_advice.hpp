#pragma once
/// \file probing_advice.hpp
/// Probing advice: how uncertain will a bore's position and perpendicularity be when it is
/// probed with a given pattern on a CMM of a given probing scatter, and which is the smallest
/// pattern that keeps that uncertainty under a share of the tolerance? docs/probing-advice.md
/// states the model with its sources; this header states every assumption.
///
/// Model (docs/probing-advice.md, "Model"):
///  1. A perfect bore at true position: a right circular cylinder of the nominal diameter whose
///     axis is the zone's axis (origin at the true position on datum A, w the nominal
///     direction; heights negative into the material, as everywhere in cylzone). The datum
///     reference frame is taken as exact: only the bore's own probing is simulated.
///  2. The pattern: sections at given heights, each with `points_per_section` points evenly
///     spread over an arc (the full circle: n equal steps; a partial arc: its two ends included,
///     n - 1 equal steps), the same angles in every section.
///  3. Probing scatter: every point is moved by an independent isotropic normal error in 3-D,
///     N(0, sigma^2 I). In 3-D rather than along the surface normal because a CMM's probing
///     error is a scatter of the indicated point in space (ISO 10360-5:2020, the probing form
///     and size errors of a sphere, from memory for the clause); the normal component is what
///     moves a fit to first order, the tangential one is kept at no cost and shows its
///     second-order effect. Systematic errors (probe lobing, scale, temperature) and the
///     uncertainty of the datum frame are not modelled: the prediction is a floor.
///  4. Every trial fits the bore with the project's own fits (fit_cylinder.hpp: least squares or
///     the maximum inscribed cylinder, the plan's axis methods) and evaluates the fitted axis
///     as the evaluate stage does (axis_zone.hpp: StraightAxis::from_axis, position_over_range,
///     perpendicularity_over_range) over the evaluated range [range_bottom, range_top].
///  5. Monte Carlo (JCGM 101:2008, propagation of distributions), a fixed number of trials or
///     adaptive: batches until the mean, the standard deviation and both ends of the shortest
///     95 % interval of every simulated quantity (the offsets and positional diameters at both
///     ends, the slopes, the full-depth position, the perpendicularity) are stable within the
///     numerical tolerance of section 7.9, by the Monte Carlo study's own procedure
///     (uncertainty/monte_carlo.hpp, propagate_indexed). Trial t draws from its own generator, seeded
///     by splitmix64 of (seed, t) (Steele, Lea & Flood, "Fast splittable pseudorandom number
///     generators", OOPSLA 2014), normal deviates by the Box-Muller transform (Box & Muller,
///     Ann. Math. Stat. 29, 1958): the result is the same bits for any thread count and any
///     compiler's standard library. Trials run in fixed chunks through the library's one
///     parallel loop (the `threads` option).
///
/// Figures (mm; "positional diameter" = 2 x the radial deviation of the axis from the zone's
/// axis, the measured position of the perfect bore):
///  * u_x, u_y at the top and the bottom of the range: the standard deviations of the fitted
///    axis's offset there (the linear-propagation reference: a least-squares circle of n points
///    evenly spread over the full circle has centre covariance (2 sigma^2 / n) I, and a straight
///    axis through two sections h apart has u(z) = u_c sqrt((1 - s)^2 + s^2), s = (z - z1) / h;
///    docs/probing-advice.md derives both);
///  * the positional diameter at the top, at the bottom and over the full depth (the figure
///    `check` decides on): its mean, standard deviation and 95 % quantile. A radial figure near
///    zero is skewed (for isotropic u it is Rayleigh: mean 2 u sqrt(pi / 2), 95 % quantile
///    2 u sqrt(-2 ln 0.05) = 4.895 u), so the quantile, not mean + 2 sd, is what a perfect bore
///    shows 95 % of the time;
///  * the expanded uncertainty (k = 2) of position: the larger of that quantile (a bore near
///    true position) and 2 x 2 max(u_x, u_y) at the worse end (a bore far from true position,
///    whose positional diameter moves with its radial component: linear propagation, GUM
///    JCGM 100:2008 clause 5, k = 2 for about 95 %, common practice);
///  * perpendicularity likewise: the 95 % quantile of L |tilt| of the perfect bore and
///    2 L u(tilt), the larger being its expanded uncertainty (L = the range's length);
///  * the tilt magnification of the pattern: sampling_coverage.hpp's (range joined with the
///    probed span) / span, from the ideal points.
/// Verdict: the pattern meets the target when each expanded uncertainty is at most
/// `target_share` x its tolerance (default 0.1: the 10:1 rule of thumb of gauging, common
/// practice).
///
/// Search (docs/probing-advice.md, "Search order"): candidates of k = 2, 3, ...,
/// `max_sections` sections placed evenly over the usable depth, the first two at its ends (a
/// tilt is best fixed by the farthest sections), times points per section from a ladder (4, 6,
/// 8, 12, 16, 24, 36); ordered by total points, then fewer sections; the arc of the candidate
/// pattern is kept. The first candidate that meets the target is returned, with the one before
/// it in the order (which does not).
///
/// Functions are pure apart from the threads they run: no IO, no state. Invalid options throw
/// InputError whose key names the option (e.g. "pattern.points_per_section") and whose file is
/// empty.

#include <cstddef>
#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "cylzone/core/threads.hpp"
#include "cylzone/evaluate/bore_evaluation.hpp"
#include "cylzone/plan/plan.hpp"
#include "cylzone/uncertainty/monte_carlo.hpp"

namespace cylzone {

/// How a bore is probed: sections and their points.
struct ProbingPattern {
  /// Heights of the sections along the nominal direction from datum A, mm (negative into the
  /// material); at least 2 distinct heights.
  std::vector<double> section_heights;
  std::size_t points_per_section = 8;  ///< >= 3
  double arc_deg = 360.0;              ///< arc each section's points span, (0, 360]
  double arc_centre_deg = 0.0;         ///< direction of the arc's middle, from the zone's u axis

  std::size_t total_points() const noexcept { return section_heights.size() * points_per_section; }
};

struct ProbingAdviceOptions {
  double diameter = 0.0;  ///< nominal bore diameter, mm, > 0
  /// The range the zone applies over (the full depth), heights from A, top > bottom.
  double range_top = 0.0;
  double range_bottom = 0.0;
  /// Where the probe can reach (the search places sections here); empty: the range itself.
  std::optional<double> usable_top;
  std::optional<double> usable_bottom;
  double position_tolerance = 0.0;                   ///< diameter zone, mm, > 0
  std::optional<double> perpendicularity_tolerance;  ///< diameter zone, mm, > 0 when given
  /// The toleranced axis: least_squares or mating_envelope (the maximum inscribed cylinder).
  BoreAxisMethod axis_method = BoreAxisMethod::least_squares;
  double probing_sigma = 0.0;  ///< standard deviation of each coordinate of a probed point, mm
  ProbingPattern pattern;      ///< the candidate pattern
  std::size_t trials = 2000;   ///< Monte Carlo trials, >= 100 (fixed count)
  /// Adaptive trial count (JCGM 101:2008 7.9, the study's rule: monte_carlo.hpp) instead of
  /// `trials`; its batch must be at least 100 when given (0: J = 2000).
  std::optional<AdaptiveTrials> adaptive;
  std::uint64_t seed = 1;
  std::size_t threads = hardware_threads();
  double target_share = 0.1;  ///< the expanded uncertainty's largest share of a tolerance
  std::vector<std::size_t> points_ladder = {4, 6, 8, 12, 16, 24, 36};  ///< for the search
  std::size_t max_sections = 9;                                        ///< for the search, >= 2
};

/// One simulated figure (mm): a positional diameter or a perpendicularity.
struct SimulatedFigure {
  double mean = 0.0;
  double standard_deviation = 0.0;
  double quantile95 = 0.0;
};

/// The fitted axis at one end of the range.
struct EndPrediction {
  double height = 0.0;
  double u_x = 0.0;          ///< standard uncertainty of the offset along the zone's u (x) axis, mm
  double u_y = 0.0;          ///< along v (y), mm
  SimulatedFigure position;  ///< the single-plane positional diameter at this height
};

struct FigureUncertainty {
  double tolerance = 0.0;  ///< mm
  double expanded = 0.0;   ///< U (about 95 %), mm: see the file comment
  double share = 0.0;      ///< expanded / tolerance
  bool meets_target = false;
};

enum class PredictionStatus {
  predicted,    ///< every trial was fitted
  undetermined  ///< the pattern cannot determine the bore (a fit failed): see `message`
};

struct ProbingPrediction {
  ProbingPattern pattern;
  PredictionStatus status = PredictionStatus::predicted;
  std::string message;         ///< why undetermined; empty otherwise
  double probing_sigma = 0.0;  ///< mm, as given
  std::size_t trials = 0;      ///< trials run (fixed, or where the adaptive rule stopped)
  bool adaptive = false;       ///< the trial count was adaptive (JCGM 101 7.9)
  std::size_t batches = 0;     ///< adaptive: batches run
  /// Adaptive: the stopping rule was met before AdaptiveTrials::max_trials (always true for a
  /// fixed count).
  bool converged = true;
  EndPrediction top;
  EndPrediction bottom;
  SimulatedFigure full_depth;           ///< positional diameter over the full depth
  SimulatedFigure perpendicularity;     ///< L |tilt|
  double u_tilt = 0.0;                  ///< standard uncertainty of the tilt per direction, rad
  std::optional<double> magnification;  ///< sampling_coverage.hpp's; empty for one level
  FigureUncertainty position;
  std::optional<FigureUncertainty> perpendicularity_uncertainty;
  bool meets_target = false;  ///< every figure within target_share of its tolerance
};

struct ProbingSearch {
  /// The first candidate in the search order that meets the target; empty when none does.
  std::optional<ProbingPrediction> smallest;
  /// The candidate just before it in the order (it does not meet the target); empty when the
  /// first candidate already meets it.
  std::optional<ProbingPrediction> previous;
  std::size_t candidates_tried = 0;
};

struct ProbingAdvice {
  ProbingPrediction candidate;  ///< the given pattern
  std::optional<ProbingSearch> search;
};

/// The adaptive rule's settings for a prediction (the command line's `--trials adaptive`):
/// batches of J = 2000, at most 200,000 trials, and the numerical tolerance of the standard
/// deviation stated to ONE significant digit (JCGM 101 7.9.2 names 1 or 2 as usual). A pattern is
/// chosen by comparing U with a share of the tolerance, which one digit decides; two digits ask
/// the mean offset of a perfect bore (zero) for a tolerance of u / 20 to u / 200, tens of
/// thousands of trials to 10^5 and more per pattern.
AdaptiveTrials probing_adaptive_trials();

/// Checks the options; throws InputError naming the option as its key.
void validate_probing_options(const ProbingAdviceOptions& options);

/// The prediction for options.pattern (model items 1-5). Validates first.
ProbingPrediction predict_probing(const ProbingAdviceOptions& options);

/// The search order: every candidate pattern (sections over the usable depth, points from the
/// ladder, the candidate's arc), in the order the search tries them.
std::vector<ProbingPattern> probing_search_order(const ProbingAdviceOptions& options);

/// The search for the smallest pattern meeting the target (file comment, "Search").
ProbingSearch search_probing_pattern(const ProbingAdviceOptions& options);

/// The candidate's prediction and, when `search`, the search.
ProbingAdvice advise_probing(const ProbingAdviceOptions& options, bool search);

/// `k` heights evenly spread over [bottom, top], top first; k >= 2.
std::vector<double> evenly_spread_sections(double top, double bottom, std::size_t k);

/// The prediction's options for a measured bore (`check --predict-probing`): the pattern actually
/// probed, as the bore's sampling record found it (sampling_coverage.hpp): the sections'
/// heights (the evaluation reports them along the zone's nominal direction from A), the median
/// points per section, and the arc: the full circle when the worst section's largest gap is at
/// most 1.5 times the even step 360 / n, else that section's coverage, centred on the bore's zone u
/// axis (the figures do not depend on where a full arc starts; a partial arc's direction is
/// not recorded and is taken as u). The diameter is the least-squares cylinder's, the range
/// and tolerances the position's (and the perpendicularity's tolerance when it has one); a
/// derived median line is predicted as the least-squares axis (the line through the sections'
/// least-squares centres, the same to first order for full sections). Empty when the bore was
/// not evaluated, has no position tolerance or no sampling record, or fewer than 2 sections.
std::optional<ProbingAdviceOptions> measured_bore_probing(const BoreResult& bore,
                                                          double probing_sigma,
                                                          const ProbingAdviceOptions& base = {});

/// The prediction for a measured bore's pattern (measured_bore_probing); empty where that is.
/// A pattern the prediction refuses (e.g. sections far outside a projected zone's range) gives
/// an undetermined prediction with the reason, not an exception.
std::optional<ProbingPrediction> predict_measured_bore(const BoreResult& bore, double probing_sigma,
                                                       const ProbingAdviceOptions& base = {});

}  // namespace cylzone
