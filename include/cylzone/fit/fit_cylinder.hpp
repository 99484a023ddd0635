#pragma once
/// \file fit_cylinder.hpp
/// Cylinders. Least squares follows Forbes (NPL DITC 140/89) and Shakarji (J. Res. NIST 103,
/// 1998): translate to the centroid, rotate so the trial axis is z, solve for five parameters
/// (two shifts, two tilts, radius) by Gauss-Newton with analytic Jacobian, re-centre and repeat;
/// several starting axes are tried and the lowest sum of squares is kept. Minimum zone
/// (cylindricity), maximum inscribed and minimum circumscribed start from the least-squares
/// cylinder and are solved as described in docs/methods.md.
///
/// With FitOptions::fixed_direction the axis direction is held and only its location and the
/// radius are fitted: the problem is then the corresponding circle fit of the points projected
/// along that direction.

#include "cylzone/fit/fit_types.hpp"

namespace cylzone {

/// Covariance parameters (least squares only) in basis (u, v, w = axis direction), origin at
/// axis.point: [shift_u, shift_v, tilt_u, tilt_v, radius]; with a fixed direction only
/// [shift_u, shift_v, radius].
struct CylinderFit {
  Axis axis;
  double radius = 0.0;
  double extent_min = 0.0;  ///< axial extent of the points measured from axis.point
  double extent_max = 0.0;
  double angular_coverage_deg = 0.0;
  Residuals residuals;  ///< distance from the axis minus radius (cylindricity for minimum zone)
  ParameterCovariance covariance;
  /// Chebyshev and mating fits: how far the optimum can actually move. The largest
  /// displacement of the axis at either end of the extent, from the reported axis to any axis
  /// found whose objective is within the tolerance of the optimum's (64 ulp of the data's
  /// size): the ends of the walks along its near-optimal set and the other, distinct optima
  /// the exploration found (e.g. the mirror image of the maximum-inscribed axis of a bore bent
  /// in one plane). 0 when the optimum is proven unique and for least squares. Which of several
  /// distinct equally good axes is reported depends on the points alone, not on the start or
  /// the part's placement (docs/chebyshev.md, "Non-unique optima"). A warning is added above
  /// 1e-4 mm.
  double ambiguity = 0.0;
  FitSummary summary;

  double diameter() const noexcept { return 2.0 * radius; }
};

/// Needs at least 5 points (6 with a free axis is the practical minimum) spread along the axis.
/// Throws FitError when the points lie in one cross-section (the message gives the axial span
/// found) or otherwise cannot fix the cylinder.
CylinderFit fit_cylinder_least_squares(const Eigen::Matrix3Xd& points,
                                       const FitOptions& options = {});
/// Same, seeding starting axes from per-point vectors when the cloud has them.
CylinderFit fit_cylinder_least_squares(const Eigen::Matrix3Xd& points,
                                       const Eigen::Matrix3Xd& vectors,
                                       const FitOptions& options = {});

/// The axis of fit_cylinder_least_squares(points[, vectors], options), the same bits, and the
/// same FitError where the fit throws, without the pass at the solution that measures the
/// residuals, axial extent and angular coverage (nor the covariance, message or warnings): for
/// a caller that reads only the axis, e.g. a datum feature's orientation to A.
Axis fit_cylinder_least_squares_axis(const Eigen::Matrix3Xd& points,
                                     const FitOptions& options = {});
Axis fit_cylinder_least_squares_axis(const Eigen::Matrix3Xd& points,
                                     const Eigen::Matrix3Xd& vectors,
                                     const FitOptions& options = {});

/// Cylindricity: two coaxial cylinders of least radial separation; radius = mean of the two.
CylinderFit fit_cylinder_minimum_zone(const Eigen::Matrix3Xd& points,
                                      const FitOptions& options = {});
/// Largest cylinder with no point inside: the actual mating envelope of a hole (ASME Y14.5).
/// Throws FitError when it is unbounded.
CylinderFit fit_cylinder_maximum_inscribed(const Eigen::Matrix3Xd& points,
                                           const FitOptions& options = {});
/// Smallest cylinder containing every point: the actual mating envelope of a pin.
CylinderFit fit_cylinder_minimum_circumscribed(const Eigen::Matrix3Xd& points,
                                               const FitOptions& options = {});

/// The start a later fit of the same feature on nearly the same points takes from `fit`
/// (FitOptions::start): its axis, radius, residual span, point count and contacts. With a
/// start, the least-squares cylinder (free axis) iterates from it alone instead of screening
/// several starting axes, and a Chebyshev cylinder (free or held direction) skips its
/// least-squares start and first tries Newton's method on the earlier contacts; both end on
/// their usual convergence test or optimality certificate and fall back to their own start
/// otherwise (FitSummary::start says which happened).
FitStart fit_start(const CylinderFit& fit);

}  // namespace cylzone
