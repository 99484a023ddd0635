#pragma once
/// \file outlier_rejection.hpp
/// Outlier rejection (the prepare stage, after probe-tip compensation and before every fit):
/// two stages, each off unless asked for, that REMOVE points, and a record of every point
/// removed, so that nothing is dropped silently.
///
/// Stage 1, the neighbour filter: the points the stray-point screen flags (stray_points.hpp:
/// each point's residual from the feature's least-squares element minus the median residual of
/// its k nearest spatial neighbours, found with NeighbourIndex, judged against the
/// normal-consistent MAD of all such excesses; a local Hampel identifier) are removed, once.
/// Form shared by neighbours cancels in the excess, so lobing or taper is kept; a lone spike or
/// a double hit (a second trigger at the same spot, off the surface) is not.
///
/// Stage 2, residual rejection after the fit: with r the residuals from the least-squares
/// element of the points still kept, m their median and s = 1.4826 median|r - m| (the MAD scale,
/// consistent for the normal distribution: Rousseeuw & Croux 1993, from memory; common
/// practice), every point with |r - m| > max(c s, floor) is removed (Hampel's identifier:
/// Hampel, J. Amer. Statist. Assoc. 69 (1974) 383-393, from memory), the element refitted and
/// the test repeated until no point is removed, at most `max_iterations` times. Removal is
/// cumulative (a removed point is not readmitted). Form guard: a point beyond the limit is
/// removed only when it also stands out from its k nearest spatial neighbours (NeighbourIndex,
/// k as in stage 1): |r - median of the neighbours' r| > limit / 2. A shared excursion is form
/// (a bell-mouth, a groove, a step), which residual rejection must not remove: without the
/// guard a 5 um bell-mouth on a bore with 0.5 um probing noise loses its mouth and its
/// cylindricity is understated (the demo's bore P6). A spike or a double hit is alone among
/// its neighbours and is removed. It never removes more than half of the points (the MAD's
/// breakdown point): it stops and warns instead.
///
/// False rejection. For normally distributed residuals |r - m| > c sigma has probability
/// 2 (1 - Phi(c)): 5.7e-7 per point at the default c = 5 (common practice: normal tables), so a
/// clean cloud of 10 000 points loses a point with probability below 0.6 % per pass (the form
/// guard's second condition only lowers it). A
/// sinusoidal form error of amplitude A (lobing) has s = 1.4826 x 0.707 A = 1.05 A, so c = 5
/// never removes form: |r| <= A < 5.2 A.
///
/// Warnings. More than `warn_share` of the points removed by the two stages together; and a
/// removed point that lay beyond the kept points' extreme on the side where the feature's
/// mating envelope or tangent plane makes contact (a hole's maximum-inscribed cylinder rests on
/// its lowest residuals, a pin's minimum-circumscribed one and a tangent datum plane on the
/// highest): that envelope would have touched it, so a size, an axis or a datum (and a verdict)
/// rests on its removal. The test uses the least-squares residuals of the pass that removed it:
/// a screen, not the envelope itself.

#include <Eigen/Core>
#include <cstddef>
#include <functional>
#include <string>
#include <vector>

#include "cylzone/io/point_cloud.hpp"
#include "cylzone/prepare/stray_points.hpp"

namespace cylzone {

struct OutlierOptions {
  bool neighbour_filter = false;    ///< stage 1 (off: behaviour unchanged)
  StrayPointOptions neighbours;     ///< stage 1's criterion: the screen's defaults
  bool residual_rejection = false;  ///< stage 2 (off: behaviour unchanged)
  double residual_threshold = 5.0;  ///< c: remove when |r - median| > c x MAD scale ...
  double residual_floor = 0.0005;   ///< ... and > this, mm (perfect data loses nothing)
  int max_iterations = 10;          ///< refits of stage 2 at most
  double warn_share = 0.05;         ///< warn when more than this share of points is removed
};

/// One removed point.
struct RemovedPoint {
  std::size_t index = 0;  ///< 0-based column of the cloud given (its data order)
  std::size_t line = 0;   ///< its file line (PointCloud::lines); 0 when the format has none
  double residual = 0.0;  ///< from the least-squares element of the pass that removed it, mm
  /// It lay beyond the kept points on the envelope's contact side (file comment).
  bool contact = false;
};

struct OutlierStageRecord {
  bool enabled = false;
  std::size_t examined = 0;   ///< points the stage started from (0: not run)
  int iterations = 0;         ///< passes (stage 1: 1)
  double robust_scale = 0.0;  ///< the last pass's MAD scale, mm
  /// Stage 2, last pass: points beyond the limit kept by the form guard (their neighbours
  /// follow them).
  std::size_t kept_as_form = 0;
  std::vector<RemovedPoint> removed;  ///< in removal order, then data order
  std::string skipped;        ///< why an enabled stage did not run (empty when it ran)
};

struct OutlierRecord {
  OutlierStageRecord neighbour_filter;
  OutlierStageRecord residual_rejection;
  std::vector<std::string> warnings;
  std::size_t removed_count() const noexcept {
    return neighbour_filter.removed.size() + residual_rejection.removed.size();
  }
};

/// The least-squares residuals of an element fitted to the given points (3 x n), one per point,
/// signed: positive out of the material for a plane, away from the axis for a bore or pin.
using ElementResiduals = std::function<Eigen::VectorXd(const Eigen::Matrix3Xd&)>;

struct OutlierResult {
  PointCloud cloud;               ///< the kept points (vectors and lines kept alongside)
  std::vector<std::size_t> kept;  ///< column of the given cloud of each kept point
  OutlierRecord record;
};

/// Runs the enabled stages on `cloud`. `residuals` fits the feature's element; `contact_side`
/// is where its envelope touches (stray_points.hpp). With both stages off it returns the cloud
/// unchanged and calls nothing. Throws FitError when the element cannot be fitted and
/// std::invalid_argument for unusable options.
OutlierResult reject_outliers(const PointCloud& cloud, const ElementResiduals& residuals,
                              ContactSide contact_side, const OutlierOptions& options);

}  // namespace cylzone
