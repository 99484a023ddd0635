#pragma once
/// \file prepare.hpp
/// The prepare stage: between loading a feature's points and fitting them. Every feature
/// (datum or bore) passes through prepare_feature(), which returns the points the fits use and
/// a record of what was done to them. Today it runs the stray-point screen (stray_points.hpp),
/// which REPORTS suspect points and changes none; probe-tip compensation and outlier rejection
/// belong here too, so that they change the points once, before any fit.
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

#include "cylzone/fit/fit_types.hpp"
#include "cylzone/io/point_cloud.hpp"
#include "cylzone/plan/tolerance_types.hpp"
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
  /// a plane unless `residuals` are given.
  std::optional<Eigen::Vector3d> outward;
  /// The caller's residuals, one per point, used as given instead of an element of prepare's
  /// own (required for a slot or a tab, whose faces only its association tells apart).
  Eigen::VectorXd residuals;
};

/// What preparation did to one feature's points, for the report.
struct PrepareRecord {
  /// Suspect points (which, and why: residual and local excess); none is removed.
  StrayPointReport stray_points;
};

struct PreparedFeature {
  PointCloud cloud;  ///< the points the fits use (today every point, unchanged, in file order)
  PrepareRecord record;
};

/// Prepares one feature's `cloud` (3 x n, the coordinates the caller fits in). Deterministic,
/// no IO, no state. Throws FitError when the associated element cannot be fitted, and
/// std::invalid_argument when a plane has no `outward`, a slot or tab no `residuals`, or the
/// residuals' count differs from the points' (and as find_stray_points does for bad options).
/// Too few points to screen (neighbours + 1) need no element: the report stays empty.
PreparedFeature prepare_feature(FeatureKind kind, const PointCloud& cloud,
                                const PrepareOptions& options = {});

}  // namespace cylzone
