#pragma once
/// \file stray_points.hpp
/// Stray-point screen (the "prepare" stage). The mating envelopes and the tangent datum planes
/// rest on extreme points, so one stray point (a chip, a coolant drop, a probe trigger error, a
/// floating scanner point) can move a size, an axis or a datum. The screen REPORTS suspect
/// points; it never removes or changes one, and every fit and verdict still uses all points.
///
/// Criterion. Each point carries its residual from an associated element (for a bore, the
/// signed deviation from its least-squares cylinder). A point's local reference is the median
/// of the residuals of its k nearest spatial neighbours (3D Euclidean distance, the point
/// itself excluded; ties in distance go to the lower index). Its local excess is
///
///     excess_i = residual_i - median{ residual_j : j among the k nearest neighbours of i }.
///
/// A form feature (lobing, taper, bell-mouth, waviness longer than the neighbourhood) is shared
/// by neighbours and cancels in the excess; a lone spike does not. The spread of the excesses is
/// measured by the normal-consistent median absolute deviation,
///
///     robust_scale = 1.4826 median_i | excess_i - median_j excess_j |,
///
/// which estimates the standard deviation of normally distributed excesses and is unaffected by
/// up to half of them being outliers (Rousseeuw & Croux, J. Amer. Statist. Assoc. 88 (1993)
/// 1273-1283, from memory; the factor 1.4826 = 1 / Phi^-1(3/4) is common practice). A point is
/// flagged when |excess| > threshold x robust_scale AND |excess| > floor: the absolute floor
/// keeps rounding-level scatter of perfect (or synthetic) data from flagging anything. It is a
/// variant of the Hampel identifier (a local median reference, a MAD scale; common practice)
/// with the scale taken over all points, so a smooth, spike-free surface sets it.
///
/// The neighbours are found by all_nearest (neighbour_index.hpp): a uniform grid of cells
/// (Bentley, Stanat & Williams, Inf. Process. Lett. 6 (1977) 209-212) answers the points whose
/// k nearest it can certify exact, the KD-tree (Bentley, Commun. ACM 18 (1975) 509-517) the
/// rest, built only when some point needs it: the same neighbours either way. The neighbours
/// and the two medians of the scale are found on the `threads` option; the report does not
/// depend on the thread count.

#include <Eigen/Core>
#include <cstddef>
#include <vector>

#include "cylzone/core/threads.hpp"

namespace cylzone {

struct StrayPointOptions {
  std::size_t neighbours = 8;  ///< k nearest neighbours (3D) forming a point's local reference
  double threshold = 6.0;      ///< flag when |excess| > threshold x robust scale ...
  double floor = 0.0005;       ///< ... and > this absolute value, mm (so perfect data flags nothing)
  /// Threads the screen may run at once (core/threads.hpp); the report does not depend on it.
  std::size_t threads = hardware_threads();
};

/// One flagged point.
struct StrayPoint {
  std::size_t index = 0;  ///< 0-based column in the screened matrix (the file's data order)
  double residual = 0.0;  ///< its residual as given, mm
  double excess = 0.0;    ///< residual minus the median residual of its neighbours, mm
};

struct StrayPointReport {
  std::vector<StrayPoint> points;  ///< flagged, by decreasing |excess| (ties: lower index first)
  double robust_scale = 0.0;       ///< 1.4826 x median absolute deviation of the excesses, mm
  std::size_t screened = 0;        ///< points screened; 0 when there were too few to screen
};

/// Screens `points` (3 x n) with their `residuals` (n signed deviations from an associated
/// element, e.g. the least-squares cylinder) by the criterion above. With fewer than
/// neighbours + 1 points nothing can be screened: the report is empty and `screened` is 0.
/// Deterministic: the result depends only on the data and the options.
/// Throws std::invalid_argument when residuals.size() != points.cols() or the options are not
/// usable (neighbours 0, threshold or floor negative or not finite), and FitError when a
/// coordinate or a residual is not finite.
StrayPointReport find_stray_points(const Eigen::Matrix3Xd& points, const Eigen::VectorXd& residuals,
                                   const StrayPointOptions& options = {});

/// Which extreme of an associated element's residuals its contact points lie at: `lowest` for
/// a maximum-inscribed envelope (every residual >= 0, contacts at 0), `highest` for a
/// minimum-circumscribed envelope or a tangent plane (every residual <= 0, contacts at 0).
enum class ContactSide { lowest, highest };

/// The flagged points of `report` (in its order) that are contacts of an associated element:
/// their residual in `element_residuals` (one per screened point) lies within `within` mm of
/// that element's extreme on `side`. The element then rests on a suspect point. Throws
/// std::invalid_argument when a flagged index is outside `element_residuals` or `within` is
/// negative or not finite.
std::vector<std::size_t> suspect_contacts(const StrayPointReport& report,
                                          const Eigen::VectorXd& element_residuals,
                                          ContactSide side, double within = 1e-6);

}  // namespace cylzone
