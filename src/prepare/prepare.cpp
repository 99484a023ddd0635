// The prepare stage (prepare.hpp): the associated element of each kind of feature, then the
// stray-point screen on its residuals.
#include "cylzone/prepare/prepare.hpp"

#include <stdexcept>
#include <string>

#include "cylzone/fit/fit_cylinder.hpp"
#include "cylzone/fit/fit_plane.hpp"

namespace cylzone {
namespace {

/// Residuals of the element prepare associates with a feature of `kind` (prepare.hpp).
Eigen::VectorXd screening_residuals(FeatureKind kind, const PointCloud& cloud,
                                    const PrepareOptions& options) {
  if (options.residuals.size() > 0) {
    if (options.residuals.size() != cloud.points.cols())
      throw std::invalid_argument("prepare_feature: " + std::to_string(options.residuals.size()) +
                                  " residuals for " + std::to_string(cloud.points.cols()) +
                                  " points");
    return options.residuals;
  }
  switch (kind) {
    case FeatureKind::bore:
    case FeatureKind::pin:
      return fit_cylinder_least_squares(cloud.points, options.fit).residuals.values;
    case FeatureKind::plane: {
      if (!options.outward)
        throw std::invalid_argument("prepare_feature: a plane needs its outward direction");
      // The least-squares plane's normal has no side of its own: turn its residuals so that a
      // point standing proud of the surface is positive.
      const PlaneFit plane = fit_plane_least_squares(cloud.points, options.fit);
      return plane.normal.dot(*options.outward) < 0.0 ? Eigen::VectorXd(-plane.residuals.values)
                                                     : plane.residuals.values;
    }
    case FeatureKind::slot:
    case FeatureKind::tab:
      break;
  }
  throw std::invalid_argument("prepare_feature: a " + std::string(feature_kind_name(kind)) +
                              " needs the caller's residuals");
}

}  // namespace

PreparedFeature prepare_feature(FeatureKind kind, const PointCloud& cloud,
                                const PrepareOptions& options) {
  PreparedFeature prepared;
  prepared.cloud = cloud;
  if (!options.stray_screen || cloud.size() <= options.stray_points.neighbours) return prepared;
  prepared.record.stray_points = find_stray_points(
      cloud.points, screening_residuals(kind, cloud, options), options.stray_points);
  return prepared;
}

}  // namespace cylzone
