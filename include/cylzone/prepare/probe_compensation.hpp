#pragma once
/// \file probe_compensation.hpp
/// Probe-tip (stylus-ball radius) compensation: from the centres of a contacting probe's
/// stylus ball to points on the measured surface (the prepare stage, before any fit).
///
/// Vocabulary of the probing system as in ISO 10360-1 and ISO 10360-5 (stylus tip, probing
/// direction; from memory). The compensation itself is common practice: a ball of radius r
/// touching a surface at c, where the surface's unit normal pointing OUT of the material (into
/// the free space) is n, has its centre at
///
///     b = c + r n,   so   c = b - r n.
///
/// Where n comes from:
///  * the file's vectors, when it has them. cylzone's sense: a point's vector points from the
///    surface into the free space, toward the ball centre (the outward surface normal; the
///    direction the probe came FROM, i.e. the reverse of its approach motion). A file written
///    with the other sense (the approach direction, into the material) is detected by comparing
///    every vector with the fitted element's outward normal (below); it is then used reversed
///    and the record says so. A file with vectors on both sides is refused as ambiguous;
///  * otherwise the fitted element of the ball centres: for a bore, their least-squares
///    cylinder (a hole's ball centres lie on a cylinder of radius R - r), each point moved away
///    from its axis by r; for a pin toward its axis (radius R + r); for a plane, toward the
///    material by r (the caller gives the outward side).
///
/// Exactness. Compensation along the true normal is exact for the ideal element: an ideal
/// cylinder's or plane's ball centres lie on the offset element, whose normals are the same, so
/// every compensated point lies on the surface (to rounding). It is not exact when:
///  * a vector is off the true normal by an angle t: the point lands r (1 - cos t) short of the
///    surface (the cosine error) and r sin t aside along it;
///  * the tip is large relative to the bore: on a real (non-ideal) bore the ball touches where
///    the surface curves most, not under its centre, and a ball larger than a lobe or a groove
///    cannot reach its bottom; r near R also makes the offset cylinder small and ill-conditioned;
///  * the form error is at the scale of the tip: the ball filters the surface (a morphological
///    closing by a ball of radius r), so compensated points follow the envelope the ball can
///    reach, not the surface itself. No compensation recovers what the ball never touched.
///
/// Slots and tabs have two facing faces whose outward normals only the file's vectors give:
/// their ball centres need vectors.

#include <Eigen/Core>
#include <cstddef>
#include <optional>
#include <string>
#include <string_view>

#include "cylzone/fit/fit_types.hpp"
#include "cylzone/io/point_cloud.hpp"
#include "cylzone/plan/tolerance_types.hpp"

namespace cylzone {

struct ProbeTipOptions {
  double tip_diameter = 0.0;  ///< stylus ball diameter, mm (> 0)
  /// Compensate along the file's vectors when the cloud has them (after the sense check);
  /// false: along the fitted element's normal even when vectors are present.
  bool use_vectors = true;
  /// A vector more than this angle (degrees) from the fitted element's outward normal, after
  /// the sense is settled, is refused: compensating along it would misplace the point by up to
  /// r (1 - cos t) + r sin t.
  double max_vector_angle_deg = 45.0;
  /// Plane: the direction out of the material (measurement coordinates of the cloud). Required
  /// for a plane.
  std::optional<Eigen::Vector3d> outward;
  /// Least-squares element of the ball centres (axis hint or held direction, threads).
  FitOptions fit;
};

enum class CompensationMode {
  none,               ///< surface points: nothing done
  along_vectors,      ///< along each point's own vector
  along_fitted_normal ///< along the normal of the element fitted to the ball centres
};

/// "none", "along-vectors", "along-fitted-normal".
std::string_view compensation_mode_name(CompensationMode mode) noexcept;

/// What compensation did, for the record.
struct ProbeTipRecord {
  CompensationMode mode = CompensationMode::none;
  double tip_diameter = 0.0;     ///< mm
  std::size_t points = 0;        ///< points moved
  /// The file's vectors pointed into the material (the approach sense) and were used reversed.
  bool vectors_reversed = false;
  /// Largest angle (degrees) between a vector (sense settled) and the fitted element's outward
  /// normal; 0 when compensated along the fitted normal. Its cosine error is r (1 - cos t).
  double largest_vector_angle_deg = 0.0;
};

struct CompensatedPoints {
  PointCloud cloud;  ///< surface points; same order, vectors and lines as the input
  ProbeTipRecord record;
};

/// Compensates the ball centres of one feature (`kind`) by the method above. Deterministic, no
/// IO, no state. Throws InputError (the cloud's source; the file line of the first offending
/// point when known) when vectors are ambiguous in sense or too far from the fitted normal, or
/// a slot or tab has no vectors; FitError when the element cannot be fitted;
/// std::invalid_argument when the tip diameter is not positive and finite or a plane has no
/// `outward`.
CompensatedPoints compensate_probe_tip(FeatureKind kind, const PointCloud& ball_centres,
                                       const ProbeTipOptions& options);

}  // namespace cylzone
