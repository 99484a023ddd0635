#pragma once
/// \file prepare.hpp
/// The prepare stage: between loading a feature's points and fitting them. Every feature
/// (datum or bore) passes through prepare_feature(), which returns the points the fits use and
/// a record of what was done to them, in this order:
///  1. probe-tip compensation of ball centres (probe_compensation.hpp), when asked for;
///  2. outlier rejection (outlier_rejection.hpp): the neighbour filter and the residual
///     rejection, each when asked for; the removed points are recorded with their file lines;
///  3. the stray-point screen (stray_points.hpp) of the points kept, which REPORTS suspect
///     points and changes none.
/// Steps 1 and 2 change the points once, before any fit; with neither asked for, the points
/// come out unchanged, in file order.
///
/// The screen judges each point by its residual from an associated element of the feature,
/// the one its fits are compared with (docs/methods.md, "Stray-point screen"):
///  * bore, pin: the least-squares cylinder (Forbes 1989), its axis free (started from and
///    signed by FitOptions::axis_hint) or held (FitOptions::fixed_direction: a datum feature of
///    size held perpendicular to A), residuals positive away from the axis;
///  * plane: the least-squares plane, residuals positive along `outward` (out of the material);
///  * slot, tab, or any feature whose element the caller knows better: the caller's residuals.

#include <Eigen/Core>
#include <optional>
#include <string>
#include <vector>

#include "cylzone/fit/fit_cylinder.hpp"
#include "cylzone/fit/fit_types.hpp"
#include "cylzone/io/point_cloud.hpp"
#include "cylzone/plan/plan.hpp"
#include "cylzone/plan/tolerance_types.hpp"
#include "cylzone/prepare/outlier_rejection.hpp"
#include "cylzone/prepare/probe_compensation.hpp"
#include "cylzone/prepare/stray_points.hpp"

namespace cylzone {

struct PrepareOptions {
  /// Run the stray-point screen. Off (e.g. in Monte Carlo trials that only need the figures),
  /// the record's report stays empty with `screened` 0.
  bool stray_screen = true;
  StrayPointOptions stray_points;
  /// Options of the least-squares element of a bore or pin (axis hint, held direction) and of
  /// a plane; `threads` is the one thread option the preparation obeys.
  FitOptions fit;
  /// Plane: the direction out of the material along which residuals are positive. Required for
  /// a plane's screen unless `residuals` are given; without it a plane's outlier stages are
  /// skipped (recorded) and its ball centres need vectors.
  std::optional<Eigen::Vector3d> outward;
  /// The caller's residuals, one per point, used as given instead of an element of prepare's
  /// own (required for a slot or a tab, whose faces only its association tells apart). They
  /// belong to the points as given: compensation is then refused, and outlier stages (which
  /// refit the element) are skipped with the reason recorded.
  Eigen::VectorXd residuals;
  /// The points are stylus-ball centres: compensate them first (probe_compensation.hpp). Its
  /// `fit` and `outward` are taken from this struct's own.
  std::optional<ProbeTipOptions> probe_tip;
  /// Outlier stages (outlier_rejection.hpp); both off by default. Their `neighbours` are
  /// replaced by `stray_points` (the screen's criterion and threads): the filter is the screen.
  OutlierOptions outliers;
};

/// What preparation did to one feature's points, for the report.
struct PrepareRecord {
  /// Probe-tip compensation (mode none for surface points).
  ProbeTipRecord probe_tip;
  /// Points removed by each outlier stage, with their file lines, and the warnings.
  OutlierRecord outliers;
  /// Column of the given cloud of each prepared point (identity when nothing was removed):
  /// the stray points' indices below refer to the prepared cloud, this maps them back.
  std::vector<std::size_t> kept;
  /// Suspect points (which, and why: residual and local excess); none is removed.
  StrayPointReport stray_points;
};

/// A least-squares cylinder fitted by the preparation, and the options it was fitted with.
struct PreparedLeastSquares {
  CylinderFit fit;
  FitOptions options;
};

struct PreparedFeature {
  /// The points the fits use: compensated when they were ball centres, without the removed
  /// outliers, in file order; `lines` follow the points.
  PointCloud cloud;
  PrepareRecord record;
  /// A bore's or pin's least-squares cylinder on exactly `cloud.points` (no vectors), as the
  /// stray-point screen fitted it with PrepareOptions::fit: a later fit of the same points with
  /// the same options (evaluate_bore) takes it instead of fitting it again, the same bits.
  /// Empty when the screen did not fit one (off, too few points, the caller's residuals).
  std::optional<PreparedLeastSquares> least_squares;
};

/// Prepares one feature's `cloud` (3 x n, the coordinates the caller fits in). Deterministic,
/// no IO, no state. Throws InputError as compensate_probe_tip does, FitError when the
/// associated element cannot be fitted, and
/// std::invalid_argument when a plane has no `outward`, a slot or tab no `residuals`, or the
/// residuals' count differs from the points' (and as find_stray_points does for bad options).
/// Too few points to screen (neighbours + 1) need no element: the report stays empty.
PreparedFeature prepare_feature(FeatureKind kind, const PointCloud& cloud,
                                const PrepareOptions& options = {});

/// As above, taking `cloud` over: the prepared cloud is built in its storage instead of a copy
/// (a large scan's feature is then held once, not twice, while it is prepared).
PreparedFeature prepare_feature(FeatureKind kind, PointCloud&& cloud,
                                const PrepareOptions& options = {});

/// Step 3 of prepare_feature alone, on the caller's points: the stray-point report that
/// prepare_feature(kind, cloud, options).record.stray_points gives when `options` ask for no
/// compensation and no outlier stage (the points are then prepared unchanged), without the
/// prepared copy of the points and its kept-column map (a datum frame screens a dense scan's
/// face of 1,500,000 points, and only reads the report). Empty when the screen is off or the
/// points are too few. Throws std::invalid_argument when `options` ask for compensation or an
/// outlier stage, and as prepare_feature.
StrayPointReport screen_feature(FeatureKind kind, const PointCloud& cloud,
                                const PrepareOptions& options = {});

/// Writes one feature's raw-point settings (plan.hpp: resolved_probe) into `options`:
/// compensation by half the tip diameter when its points are ball centres, and the outlier
/// stages it turns on (with their default constants).
void apply_probe_settings(const ProbeSettings& settings, PrepareOptions& options);

/// The warnings a user must see from `record`: the outlier stages' (share removed, removed
/// envelope contacts, stages skipped) and vectors written in the approach sense.
std::vector<std::string> preparation_warnings(const PrepareRecord& record);

/// True when the settings ask prepare_feature to change the points (compensate or remove).
bool changes_points(const ProbeSettings& settings) noexcept;

}  // namespace cylzone
