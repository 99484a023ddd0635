#pragma once
/// \file forecast_comparison.hpp
/// Does a machine perform as forecast? The positional deviations observed on a batch of
/// measured parts (their JSON reports, report_reader.hpp) set beside the machine-capability
/// forecast (machine_capability.hpp). docs/forecast.md ("Comparing with measured parts") states
/// the method with a worked example.
///
/// Method:
///  * Observed: each bore's full-depth position (the characteristic "<bore>/position", the
///    figure `check` decides on, in the fixed frame) and, where the report's depth profile gives
///    it, the deviation (dx, dy) from true position at the mouth (the top of the range). A bore
///    not evaluated is left out and counted.
///  * Forecast: the same quantities under the forecast's model: the mean, standard deviation
///    and 95 % quantile of the full-depth positional diameter D = 2 max(|e_top|, |e_bot|), from
///    its CDF (full_depth_probability): mean = integral of (1 - F), E[D^2] = integral of
///    2 d (1 - F) (both by composite Simpson over [0, the 1 - 1e-9 quantile]; the tail beyond
///    it adds less than 1e-9 of that bound); the share outside the stated zone.
///  * Two counts, each with its Clopper-Pearson interval (Clopper & Pearson, "The use of
///    confidence or fiducial limits illustrated in the case of the binomial", Biometrika 26,
///    1934: the exact interval from the binomial tails, computed here by bisection on p): the
///    bores outside the stated zone against the predicted share, and the bores above the
///    forecast's 95 % quantile against 5 %. A count whose interval lies wholly above its
///    expected share says the machine is worse than forecast; a count above the quantile whose
///    interval lies wholly below 5 % says it is better; otherwise the observations are
///    consistent with the forecast (with few bores the intervals are wide: they say so).
///  * The mouth deviations per axis: observed mean and standard deviation beside the model's
///    systematic part b and random part s (ISO 230-2: s = R / 4). Descriptive only.
///  * Bores whose evaluated range differs from the forecast's depth by more than 1 % are
///    counted: the forecast is for one depth.
/// The forecast is for the stated (RFS) zone: observed figures are compared with the stated
/// tolerance, not with the tolerance plus bonus.

#include <Eigen/Core>
#include <cstddef>
#include <optional>
#include <string>
#include <vector>

#include "cylzone/forecast/machine_capability.hpp"
#include "cylzone/report/report_model.hpp"

namespace cylzone {

/// One measured bore, in mm.
struct ObservedBore {
  std::string source;  ///< the report it came from
  std::string bore;
  double position = 0.0;                 ///< full-depth positional diameter
  std::optional<double> range_length;    ///< the evaluated range's length, when the report has it
  std::optional<Eigen::Vector2d> mouth;  ///< (dx, dy) at the top of the range
};

/// The evaluated bores of `report` with a position characteristic (all, or those named in
/// `only`). `skipped` counts the bores left out because they were not evaluated.
std::vector<ObservedBore> observed_bores(const ReportModel& report, const std::string& source,
                                         const std::vector<std::string>& only,
                                         std::size_t& skipped);

struct BinomialInterval {
  double lower = 0.0;
  double upper = 1.0;
};

/// The Clopper-Pearson interval of `events` in `trials` at `confidence` (two-sided, equal
/// tails): lower = 0 for no event, upper = 1 when every trial is one. trials > 0.
BinomialInterval clopper_pearson(std::size_t events, std::size_t trials, double confidence = 0.95);

/// Moments of the forecast's full-depth positional diameter (mm).
struct ForecastMoments {
  double mean = 0.0;
  double standard_deviation = 0.0;
  double quantile95 = 0.0;
};
ForecastMoments full_depth_moments(const CapabilityOptions& options);

enum class MachinePerformance { as_forecast, better_than_forecast, worse_than_forecast };
std::string_view machine_performance_name(MachinePerformance p) noexcept;

/// One axis at the mouth (mm).
struct MouthAxisComparison {
  double observed_mean = 0.0;
  double observed_sd = 0.0;
  double forecast_systematic = 0.0;  ///< b
  double forecast_sigma = 0.0;       ///< s
};

struct ForecastComparison {
  std::size_t bores = 0;
  double observed_mean = 0.0;
  double observed_sd = 0.0;          ///< 0 for one bore
  double observed_quantile95 = 0.0;  ///< Hyndman & Fan definition 7
  ForecastMoments forecast;
  double tolerance = 0.0;        ///< the forecast's stated position tolerance
  std::size_t outside = 0;       ///< bores with position > tolerance
  double predicted_share = 0.0;  ///< the forecast's share outside
  BinomialInterval outside_interval;
  std::size_t above_quantile = 0;           ///< bores above forecast.quantile95
  BinomialInterval above_interval;          ///< against 0.05
  std::size_t with_mouth = 0;               ///< bores that gave (dx, dy) at the mouth
  std::optional<MouthAxisComparison> x, y;  ///< with at least 2 such bores
  std::size_t depth_mismatches = 0;         ///< bores whose range differs from the depth by > 1 %
  double confidence = 0.95;
  MachinePerformance performance = MachinePerformance::as_forecast;
  std::string finding;  ///< one sentence for people
};

/// Compares `observed` (at least one bore) with the forecast of `options`; throws InputError
/// (key "observed") without a bore.
ForecastComparison compare_with_forecast(const CapabilityOptions& options,
                                         const CapabilityForecast& forecast,
                                         const std::vector<ObservedBore>& observed,
                                         double confidence = 0.95);

}  // namespace cylzone
