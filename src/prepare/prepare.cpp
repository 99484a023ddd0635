// The prepare stage (prepare.hpp): probe-tip compensation, outlier rejection, then the
// stray-point screen on the residuals of the feature's associated element.
#include "cylzone/prepare/prepare.hpp"

#include <stdexcept>
#include <string>
#include <utility>

#include "cylzone/fit/fit_cylinder.hpp"
#include "cylzone/fit/fit_plane.hpp"

namespace cylzone {
namespace {

/// Residuals of the least-squares element prepare associates with a feature of `kind`
/// (prepare.hpp), fitted to `points`; empty for a feature it has no element for (slot, tab,
/// or a plane without its outward direction).
Eigen::VectorXd element_residuals(FeatureKind kind, const Eigen::Matrix3Xd& points,
                                  const PrepareOptions& options) {
  switch (kind) {
    case FeatureKind::bore:
    case FeatureKind::pin:
      return fit_cylinder_least_squares(points, options.fit).residuals.values;
    case FeatureKind::plane: {
      if (!options.outward) return {};
      // The least-squares plane's normal has no side of its own: turn its residuals so that a
      // point standing proud of the surface is positive.
      const PlaneFit plane = fit_plane_least_squares(points, options.fit);
      return plane.normal.dot(*options.outward) < 0.0 ? Eigen::VectorXd(-plane.residuals.values)
                                                     : plane.residuals.values;
    }
    case FeatureKind::slot:
    case FeatureKind::tab:
      break;
  }
  return {};
}

/// Residuals of the feature's own element for the stray-point screen (the caller gave none).
Eigen::VectorXd screening_residuals(FeatureKind kind, const PointCloud& cloud,
                                    const PrepareOptions& options) {
  if (kind == FeatureKind::plane && !options.outward)
    throw std::invalid_argument("prepare_feature: a plane needs its outward direction");
  Eigen::VectorXd r = element_residuals(kind, cloud.points, options);
  if (r.size() == 0)
    throw std::invalid_argument("prepare_feature: a " + std::string(feature_kind_name(kind)) +
                                " needs the caller's residuals");
  return r;
}

/// Step 3, the stray-point screen of the (prepared) points, or an empty report when it is off
/// or the points are too few.
StrayPointReport screen_points(FeatureKind kind, const PointCloud& cloud,
                               const PrepareOptions& options) {
  if (!options.stray_screen || cloud.size() <= options.stray_points.neighbours) return {};
  // The caller's residuals are read where they are: a dense face's are one value a point.
  if (options.residuals.size() > 0) {
    if (options.residuals.size() != cloud.points.cols())
      throw std::invalid_argument("prepare_feature: " + std::to_string(options.residuals.size()) +
                                  " residuals for " + std::to_string(cloud.points.cols()) +
                                  " points");
    return find_stray_points(cloud.points, options.residuals, options.stray_points);
  }
  return find_stray_points(cloud.points, screening_residuals(kind, cloud, options),
                           options.stray_points);
}

/// Where the feature's envelope touches its points (outlier_rejection.hpp): a hole's
/// maximum-inscribed cylinder on the lowest residuals; a pin's minimum-circumscribed cylinder
/// and a tangent plane (on the material side, residuals positive outward) on the highest.
ContactSide contact_side_of(FeatureKind kind) {
  return kind == FeatureKind::bore ? ContactSide::lowest : ContactSide::highest;
}

}  // namespace

PreparedFeature prepare_feature(FeatureKind kind, const PointCloud& cloud,
                                const PrepareOptions& options) {
  return prepare_feature(kind, PointCloud(cloud), options);
}

PreparedFeature prepare_feature(FeatureKind kind, PointCloud&& cloud,
                                const PrepareOptions& options) {
  PreparedFeature prepared;
  prepared.cloud = std::move(cloud);

  // ---- 1. Probe-tip compensation of ball centres.
  if (options.probe_tip) {
    if (options.residuals.size() > 0)
      throw std::invalid_argument(
          "prepare_feature: the caller's residuals belong to uncompensated points");
    ProbeTipOptions tip = *options.probe_tip;
    tip.fit = options.fit;
    tip.outward = options.outward;
    CompensatedPoints compensated = compensate_probe_tip(kind, prepared.cloud, tip);
    prepared.cloud = std::move(compensated.cloud);
    prepared.record.probe_tip = compensated.record;
  }

  // ---- 2. Outlier stages.
  // The neighbour filter applies the screen's own criterion and thread bound.
  OutlierOptions outliers = options.outliers;
  outliers.neighbours = options.stray_points;
  if (outliers.neighbour_filter || outliers.residual_rejection) {
    const bool own_element = options.residuals.size() == 0 &&
                             (kind == FeatureKind::bore || kind == FeatureKind::pin ||
                              (kind == FeatureKind::plane && options.outward));
    if (own_element) {
      OutlierResult kept = reject_outliers(
          prepared.cloud,
          [&](const Eigen::Matrix3Xd& points) { return element_residuals(kind, points, options); },
          contact_side_of(kind), outliers);
      prepared.cloud = std::move(kept.cloud);
      prepared.record.outliers = std::move(kept.record);
      prepared.record.kept = std::move(kept.kept);
    } else {
      const std::string reason =
          kind == FeatureKind::plane && options.residuals.size() == 0
              ? "the plane's material side is not known here"
              : "a " + std::string(feature_kind_name(kind)) +
                    "'s element is its datum simulator's, not refitted here";
      OutlierRecord& record = prepared.record.outliers;
      record.neighbour_filter.enabled = outliers.neighbour_filter;
      record.residual_rejection.enabled = outliers.residual_rejection;
      for (OutlierStageRecord* stage : {&record.neighbour_filter, &record.residual_rejection})
        if (stage->enabled) stage->skipped = reason;
    }
  }
  if (prepared.record.kept.empty()) {
    prepared.record.kept.resize(prepared.cloud.size());
    for (std::size_t i = 0; i < prepared.record.kept.size(); ++i) prepared.record.kept[i] = i;
  }

  // ---- 3. The stray-point screen of the points kept. A bore's or pin's least-squares cylinder
  // on these final points is kept for the evaluation (PreparedFeature::least_squares): the
  // screen reads its residuals, the evaluation the whole fit, of the same call.
  if (options.stray_screen && prepared.cloud.size() > options.stray_points.neighbours &&
      options.residuals.size() == 0 && (kind == FeatureKind::bore || kind == FeatureKind::pin)) {
    CylinderFit fit = fit_cylinder_least_squares(prepared.cloud.points, options.fit);
    prepared.record.stray_points =
        find_stray_points(prepared.cloud.points, fit.residuals.values, options.stray_points);
    prepared.least_squares = PreparedLeastSquares{std::move(fit), options.fit};
  } else {
    prepared.record.stray_points = screen_points(kind, prepared.cloud, options);
  }
  return prepared;
}

StrayPointReport screen_feature(FeatureKind kind, const PointCloud& cloud,
                                const PrepareOptions& options) {
  if (options.probe_tip || options.outliers.neighbour_filter || options.outliers.residual_rejection)
    throw std::invalid_argument(
        "screen_feature: the options change the points (compensation or an outlier stage); "
        "use prepare_feature");
  return screen_points(kind, cloud, options);
}

void apply_probe_settings(const ProbeSettings& settings, PrepareOptions& options) {
  if (settings.ball_centres) {
    ProbeTipOptions tip;
    tip.tip_diameter = settings.tip_diameter;
    options.probe_tip = tip;
  }
  options.outliers.neighbour_filter = settings.neighbour_filter;
  options.outliers.residual_rejection = settings.residual_rejection;
}

std::vector<std::string> preparation_warnings(const PrepareRecord& record) {
  std::vector<std::string> warnings;
  if (record.probe_tip.vectors_reversed)
    warnings.push_back("the point vectors point into the material (the approach sense), not out "
                       "of it as cylzone reads them: compensated along the reversed vectors");
  for (const OutlierStageRecord* stage :
       {&record.outliers.neighbour_filter, &record.outliers.residual_rejection})
    if (stage->enabled && !stage->skipped.empty())
      warnings.push_back(std::string(stage == &record.outliers.neighbour_filter
                                         ? "neighbour filter"
                                         : "residual rejection") +
                         " not run: " + stage->skipped);
  for (const std::string& w : record.outliers.warnings) warnings.push_back(w);
  return warnings;
}

bool changes_points(const ProbeSettings& settings) noexcept {
  return settings.ball_centres || settings.neighbour_filter || settings.residual_rejection;
}

}  // namespace cylzone
