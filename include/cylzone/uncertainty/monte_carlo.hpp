#pragma once
/// \file monte_carlo.hpp
/// The uncertainty stage: task-specific measurement uncertainty of every characteristic of a
/// part by propagation of distributions, the Monte Carlo method of JCGM 101:2008 (GUM
/// Supplement 1), in the simulation style of ISO/TS 15530-4. docs/uncertainty.md explains it.
///
/// Model (JCGM 101:2008 section 7, propagation; section numbers from memory). Every raw point of
/// every feature, datums included, is perturbed before the prepare stage, so probe compensation,
/// outlier stages, every fit, the datum frame, the toleranced axis, the bonus, the datum
/// mobility, position, perpendicularity, size and form run again per trial (evaluate_part with
/// a lean EvaluationProfile). The perturbation of one trial:
///  * probing error: independent normal errors of standard deviation sigma in each of the three
///    coordinates (isotropic), sigma either given (`ProbingModel::sigma`) or estimated per
///    feature (`ProbingModel::estimated`) as the RMS of the residuals of the feature's own
///    least-squares fit on its prepared points (plane: least-squares plane; bore or pin:
///    least-squares cylinder; slot or tab: the least-squares planes of its two faces, pooled).
///    The errors are drawn in the unperturbed datum frame's axes, so a rigid motion of all the
///    points moves the errors with the part and leaves every figure unchanged.
///  * optionally the CMM's length-measuring error in the form of ISO 10360-2 (from memory),
///    E(L) = A + L/K with L in mm and L/K in micrometres, as datasheets state it, treated as a
///    systematic scale error of the trial: one factor s drawn from the rectangular distribution
///    on [-E(L)/L, +E(L)/L] (JCGM 101 section 6.4.2, a rectangular distribution for a quantity
///    known only by its bounds; from memory), L the largest extent of all the points (the
///    diagonal of their bounding box in the datum frame), applied as p -> c + (1 + s)(p - c)
///    about the centroid c of all the points.
///
/// Output per characteristic id (decide/bore_characteristics.hpp): the unperturbed value, the
/// trials' mean and standard deviation (the standard uncertainty, JCGM 101 7.6), and two 95 %
/// coverage intervals from the sorted trial values (JCGM 101 7.7): probabilistically symmetric
/// (the (1-p)/2 and (1+p)/2 quantiles) and shortest (7.7.2). The reported interval is the
/// shortest, because radial figures (position near zero) are skewed (Rice distributed), then
/// widened by the fit's ambiguity where the figure rests on a Chebyshev axis (below).
///
/// Trials: a fixed count, or adaptive (JCGM 101 section 7.9): batches of M trials until twice
/// the standard deviation of the batch results of the mean, the standard uncertainty and both
/// interval ends is within the numerical tolerance delta of the standard uncertainty stated to
/// `significant_digits` digits (7.9.2: u = c x 10^l with c of ndig digits, delta = 10^l / 2).
///
/// Random numbers: trial t of seed S uses std::mt19937_64 seeded with splitmix64(S, t)
/// (trial_seed below), its normal deviates by the polar method (standard_normals), so a
/// trial's draws do not depend on which thread runs it: the results are bit-identical for any
/// `threads` (src/detail/parallel.hpp).
///
/// Weak determination. A figure whose toleranced axis is a Chebyshev element (the actual mating
/// envelope of a bore) inherits the fit's ambiguity (fit_types.hpp, CylinderFit::ambiguity: how
/// far the axis can move at its ends among equally good optima). The trials do not walk the
/// near-optimal set (that is the lean profile), so where the optimum is not unique their spread
/// measures the solver's tie-breaking. The unperturbed fit's ambiguity is reported beside the
/// uncertainty, the reported interval is widened by the range the figure can take over the
/// equally good axes, and `tie_breaking` says when that range is comparable to u.

#include <Eigen/Core>
#include <cstddef>
#include <cstdint>
#include <functional>
#include <optional>
#include <random>
#include <string>
#include <string_view>
#include <vector>

#include "cylzone/check/evaluate_part.hpp"
#include "cylzone/check/part_inputs.hpp"
#include "cylzone/core/threads.hpp"
#include "cylzone/decide/characteristic.hpp"
#include "cylzone/plan/plan.hpp"

namespace cylzone {

/// Where the probing error's sigma comes from.
enum class ProbingModel {
  sigma,     ///< one isotropic sigma for every point (MonteCarloOptions::probing_sigma)
  estimated  ///< per feature: RMS residual of the feature's own least-squares fit
};
/// "sigma", "estimated".
std::string_view probing_model_name(ProbingModel model) noexcept;

/// The CMM's maximum permissible length-measuring error, E(L) = A + L/K (ISO 10360-2 form,
/// from memory): `a` in mm, L in mm and the term L/K in micrometres (E = 1.5 um + L/333 is
/// a = 0.0015, k = 333).
struct LengthError {
  double a = 0.0;  ///< mm
  double k = 0.0;  ///< dimensionless, > 0
  /// E(L) in mm.
  double at(double length_mm) const noexcept { return a + length_mm / k * 1e-3; }
};

/// Adaptive trial count of JCGM 101:2008 section 7.9.
struct AdaptiveTrials {
  /// Significant decimal digits of the standard uncertainty the tolerance is taken from
  /// (JCGM 101 7.9.2: ndig, 1 or 2 usually).
  int significant_digits = 2;
  /// Trials per batch, M. JCGM 101 7.9.4 uses M = max(J, 10^4), J = ceil(100 / (1 - p))
  /// (from memory); 0 here means J (2000 for p = 0.95), which keeps a whole-part study in
  /// seconds; set 10000 to follow the text.
  std::size_t batch = 0;
  /// Stop (status not_converged) after this many trials in all.
  std::size_t max_trials = 200000;
};

struct MonteCarloOptions {
  ProbingModel probing = ProbingModel::sigma;
  double probing_sigma = 0.001;  ///< mm, per coordinate (ProbingModel::sigma)
  std::optional<LengthError> length_error;
  /// Fixed number of trials; empty: adaptive.
  std::optional<std::size_t> trials = std::size_t{2000};
  AdaptiveTrials adaptive;
  std::uint64_t seed = 1;
  double coverage = 0.95;  ///< p of the coverage intervals
  /// Ambiguity (range the figure can take over equally good axes) at or above this fraction of
  /// the standard uncertainty counts as comparable (the same order of magnitude): the spread
  /// then measures tie-breaking as much as the part.
  double tie_breaking_ratio = 0.2;
  /// The objective tolerance of the weak-determination probe, mm: how far the actual mating
  /// envelope's axis can move while its diameter changes by at most this much (1e-8 mm: the
  /// level at which independent solvers agree on an envelope's size while their axes may
  /// differ by micrometres on a weakly determined bore).
  double near_optimal_tolerance = 1e-8;
  /// The evaluation's options for the unperturbed run; the trials use them with the lean
  /// profile (lean_profile). Its `threads` is ignored: `threads` below bounds everything.
  EvaluationOptions evaluation;
  std::size_t threads = hardware_threads();
  /// Each trial's bore fits start from the unperturbed evaluation's (EvaluationOptions::start):
  /// the same figures to the fits' tolerance (about 1e-12 mm), fewer iterations
  /// (docs/uncertainty.md, "Speed"). Off: every fit from its own start.
  bool warm_start = true;
};

/// The profile a trial runs with: no ambiguity walks (the element is the first optimum reached,
/// the same as with them whenever it is unique; the unperturbed fit's ambiguity is reported
/// instead), no stray-point screen (it reports suspect points and changes no figure), two-point
/// sizes kept (the upper size limit is decided on them), no result that no characteristic reads
/// (EvaluationProfile::unread_results: e.g. the minimum-zone cylinder of a bore without a
/// cylindricity tolerance, the sampling record; every characteristic's value is the same bits).
/// The sensitivity study and plausibility checks are not part of evaluate_part and are not run.
EvaluationProfile lean_profile();

/// A coverage interval [low, high], mm.
struct CoverageInterval {
  double low = 0.0;
  double high = 0.0;
};

enum class IntervalKind { probabilistically_symmetric, shortest };
/// "probabilistically symmetric", "shortest".
std::string_view interval_kind_name(IntervalKind kind) noexcept;

/// The statistics of one output quantity over the trials (JCGM 101 7.5-7.7).
struct OutputStatistics {
  double mean = 0.0;
  double standard_uncertainty = 0.0;  ///< sample standard deviation (divisor M - 1)
  CoverageInterval symmetric;         ///< probabilistically symmetric
  CoverageInterval shortest;
  std::size_t trials = 0;             ///< values the statistics are taken over
};

/// Statistics of `values` (not sorted; copied) at coverage probability `p`. Symmetric interval:
/// the values of rank round((1-p)/2 M) and round((1+p)/2 M) (1-based, clamped to [1, M]);
/// shortest: the q = round(p M) consecutive order statistics of least width (JCGM 101
/// 7.7.1, 7.7.2, from memory). Throws std::invalid_argument for fewer than 2 values.
OutputStatistics output_statistics(std::vector<double> values, double p);

/// One characteristic's uncertainty.
struct CharacteristicUncertainty {
  std::string id;       ///< "P2/position", as bore_characteristics gives it
  double value = 0.0;   ///< unperturbed (the check's figure)
  OutputStatistics statistics;
  /// The reported interval: the shortest, widened by `ambiguity_range` at both ends.
  CoverageInterval interval;
  IntervalKind kind = IntervalKind::shortest;
  /// How far the axis the figure rests on can move at its ends among near-optimal axes, mm:
  /// the larger of the unperturbed actual mating envelope's CylinderFit::ambiguity and
  /// `axis_range`, plus the moves datum B's and C's envelopes give the frame (position only,
  /// C's scaled by the bore's distance from B over C's). 0 for least-squares or median line
  /// axes and for figures that are a fit's objective (size, cylindricity).
  double ambiguity = 0.0;
  /// The weak-determination probe: how far the actual mating envelope's axis can move at either
  /// end while its diameter changes by at most MonteCarloOptions::near_optimal_tolerance; set
  /// on every characteristic of a bore whose toleranced axis is that envelope.
  double axis_range = 0.0;
  /// How far the figure can move over the equally good axes, mm: 2 x ambiguity for a figure
  /// that is a diameter about the axis (position, perpendicularity, virtual-condition
  /// clearance), 0 otherwise.
  double ambiguity_range = 0.0;
  /// ambiguity_range >= tie_breaking_ratio x u: the spread measures the solver's tie-breaking
  /// among equally good axes as much as the part.
  bool tie_breaking = false;
  std::size_t failed_trials = 0;  ///< trials in which it could not be evaluated
  std::string note;               ///< one line, e.g. why the interval is widened
};

enum class MonteCarloStatus {
  converged,      ///< fixed trials done, or the adaptive criterion met
  not_converged,  ///< adaptive: max_trials reached before the criterion was met
  failed          ///< nothing could be evaluated (message says why)
};
/// "converged", "not converged", "failed".
std::string_view monte_carlo_status_name(MonteCarloStatus status) noexcept;

struct MonteCarloSummary {
  MonteCarloStatus status = MonteCarloStatus::converged;
  std::string message;  ///< one line
  std::uint64_t seed = 0;
  std::size_t trials = 0;   ///< trials run
  bool adaptive = false;
  std::size_t batches = 0;  ///< adaptive: batches run
  double coverage = 0.95;
  ProbingModel probing = ProbingModel::sigma;
  /// The sigma used per feature, in the inputs' order (datums, then bores), mm.
  std::vector<double> feature_sigma;
  std::optional<LengthError> length_error;
  double length = 0.0;      ///< L of the length error, mm (0 without one)
  std::size_t failed_trials = 0;  ///< trials whose evaluation threw (a datum could not be built)
  /// The trials' Chebyshev fits (bores' envelopes and minimum zones, datum features'), which
  /// run on the dense linear-programme solver (docs/chebyshev.md, "Solvers"), and the
  /// programmes of those fits the dense solver could not solve, solved by Clp instead.
  std::size_t chebyshev_fits = 0;
  std::size_t lp_fallbacks = 0;
  /// With MonteCarloOptions::warm_start, the trials' fits started from the unperturbed ones
  /// (FitSummary::start): `warm_fits` in all; `warm_descents` Chebyshev fits whose contacts
  /// changed, so that their linear programmes descended from the unperturbed element;
  /// `warm_restarts` fits solved again from their own start because the unperturbed element
  /// did not lead to a certified optimum (the full solve).
  std::size_t warm_fits = 0;
  std::size_t warm_descents = 0;
  std::size_t warm_restarts = 0;
  std::vector<CharacteristicUncertainty> characteristics;  ///< in the check's order
  std::vector<std::string> warnings;
};
/// One line on how the trials' fits were started (MonteCarloSummary::warm_fits, ...), for the
/// reports: "3200 fits started from the unperturbed ones: 1800 Chebyshev fits descended from
/// there (their contacts changed), 0 solved again from their own start", or that none was.
std::string warm_start_text(const MonteCarloSummary& summary);

/// The whole-chain Monte Carlo study of a part: the unperturbed evaluation (options.evaluation,
/// full profile) gives the values and the ambiguities, then each trial perturbs `inputs`,
/// evaluates with lean_profile() and records every characteristic's value. Not evaluated
/// characteristics (in the unperturbed run) get no entry. Deterministic for a seed, whatever
/// `threads`. No IO. Throws as evaluate_part does for the unperturbed run, and
/// std::invalid_argument for bad options (sigma <= 0 with the sigma model, coverage outside
/// (0, 1), fewer than 2 trials, a length error with k <= 0 or a < 0).
MonteCarloSummary monte_carlo_uncertainty(const PartPlan& plan, const PartInputs& inputs,
                                          const MonteCarloOptions& options = {});

/// The same study on an unperturbed evaluation the caller has already made:
/// `nominal` must be evaluate_part(plan, inputs, options.evaluation) (any `threads`: the result
/// does not depend on it), as a check computes it for its own report. The study then does not
/// evaluate the part a second time; every figure is the same as the overload above gives.
MonteCarloSummary monte_carlo_uncertainty(const PartPlan& plan, const PartInputs& inputs,
                                          const PartEvaluation& nominal,
                                          const MonteCarloOptions& options = {});

/// The generic engine behind monte_carlo_uncertainty, for any model: `trial(rng, out)` fills
/// `out` (one value per output, NaN when not evaluated in that trial) from the random stream
/// of that trial. Runs the trials as `options` say (fixed or adaptive, seed, threads, coverage;
/// the probing and evaluation options are not used). Returns one OutputStatistics per output
/// and sets `summary`'s status, message, seed, trials, batches, failed_trials (trials with no
/// output evaluated). `failed`, when given, receives each output's count of trials without a
/// value; `samples` each output's values by trial (NaN where not evaluated). Deterministic for a
/// seed whatever `threads`: `trial` must depend only on its random stream.
using TrialModel = std::function<void(std::mt19937_64& rng, std::vector<double>& out)>;
std::vector<OutputStatistics> propagate(std::size_t outputs, const TrialModel& trial,
                                        const MonteCarloOptions& options,
                                        MonteCarloSummary& summary,
                                        std::vector<std::size_t>* failed = nullptr,
                                        std::vector<std::vector<double>>* samples = nullptr);

/// The engine under propagate, for a model that keeps per-worker scratch or draws from its own
/// generator: `trial(t, worker, out)` fills `out` for trial t (0-based over the whole run) on
/// worker `worker` (below max(1, options.threads); one trial at a time per worker, so a buffer
/// per worker needs no lock). Everything else as propagate; deterministic for a seed whatever
/// `threads` when `trial`'s values depend only on t (not on the worker or on earlier trials).
/// The adaptive procedure (JCGM 101 7.9) is this function's: every adaptive simulation of the
/// library (the part study, the probing prediction) stops by it.
using IndexedTrialModel =
    std::function<void(std::size_t trial, std::size_t worker, std::vector<double>& out)>;
std::vector<OutputStatistics> propagate_indexed(std::size_t outputs,
                                                const IndexedTrialModel& trial,
                                                const MonteCarloOptions& options,
                                                MonteCarloSummary& summary,
                                                std::vector<std::size_t>* failed = nullptr,
                                                std::vector<std::vector<double>>* samples = nullptr);

/// The seed of trial `trial` of a study seeded `seed`: splitmix64 (Steele, Lea & Flood, OOPSLA
/// 2014) of the seed mixed with splitmix64 of the trial index.
std::uint64_t trial_seed(std::uint64_t seed, std::uint64_t trial) noexcept;

/// A standard normal deviate by the Box-Muller transform (Box & Muller 1958) from two 53-bit
/// uniforms of `rng`: the same bits with any standard library (std::normal_distribution's
/// algorithm is the library's choice).
double standard_normal(std::mt19937_64& rng) noexcept;

/// Fills out[0..count) with standard normal deviates by Marsaglia's polar method (Marsaglia &
/// Bray 1964), both deviates of each accepted pair used (the last one dropped when `count` is
/// odd): exact, the same bits with any standard library, about twice as fast per deviate as
/// standard_normal. The study's perturbations draw from it, one call per feature and trial.
void standard_normals(std::mt19937_64& rng, double* out, std::size_t count) noexcept;

/// The expanded uncertainty U = k u of the characteristic `id` (JCGM 100:2008 section 6), for
/// a decision rule (ISO 14253-1); empty when the study has no such id.
std::optional<double> expanded_uncertainty(const MonteCarloSummary& summary, std::string_view id,
                                           double k = 2.0);

/// Decides `characteristics` again with the uncertainty `summary` evaluated for this part
/// (ISO 14253-1 through decide/characteristic.hpp's one decision function). Each characteristic
/// the study has a figure of (at least 2 trials) gets U = k u + `ambiguity_range`, k =
/// `rule.coverage_factor`: the expanded uncertainty of JCGM 100:2008 section 6 plus the spread
/// over equally good axes, which a tie-break hides from the trials (docs/uncertainty.md,
/// "Decisions"). It replaces a stated budget's U for that characteristic (this part's own
/// evaluation is the better knowledge); the others keep theirs. The caller combines the
/// verdicts again (combine()).
void decide_with_study(std::vector<Characteristic>& characteristics,
                       const MonteCarloSummary& summary, const DecisionRule& rule);

/// The entry of `id`, or nullptr.
const CharacteristicUncertainty* find_uncertainty(const MonteCarloSummary& summary,
                                                  std::string_view id) noexcept;

}  // namespace cylzone
