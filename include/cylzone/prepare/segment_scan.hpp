#pragma once
/// \file segment_scan.hpp
/// Segmenting one cloud of the whole part into its features: each nominal surface (a bore's or
/// pin's cylinder, a datum plane) takes the points that lie within a band about it.
///
/// Method (docs/methods.md, "Segmenting a whole-part scan"). The cloud is first mapped into the
/// part's nominal coordinates by a rough placement p' = R p + t (a rigid motion): the plan's,
/// refined by register_to_nominal, or found from nothing by find_placement. A point is a
/// candidate of a surface when
///  * cylinder (axis through `origin` along unit `direction`, radius R, axial parameter
///    s = direction . (p' - origin) in [s_low - margin, s_high + margin]):
///    | |p' - axis| - R | <= band;
///  * plane (through `origin`, unit `direction` its normal, in-plane coordinates u, v along
///    `u_axis`, `v_axis` within [u_low, u_high] x [v_low, v_high]): |n . (p' - origin)| <= band;
///  * and, where the cloud has vectors, the point's vector (rotated by R) makes an angle of at
///    most `normal_agreement` with the surface normal there (the radial direction of a cylinder,
///    the plane's normal), taken without sense: a file's vectors may point either way.
/// A point that is a candidate of several surfaces goes to the one it is nearest to (its
/// distance from the surface, |r - R| or |n . (p' - o)|); an exact tie goes to the surface
/// listed first, so the result never depends on the order of the points. This is the band
/// classification common in scan inspection (common practice): a point's surface is decided by
/// its distance from the nominal geometry, never by the data fitted later. The cost is one pass
/// over the points, each tested against the surfaces whose bounding box holds it: linear in
/// points.
///
/// The indices taken keep the cloud's order, so a feature's points are exactly the cloud's
/// points in the same order (same points, same answer as a per-feature file of them). Pure: no
/// IO, no state; the pass over the points and split_cloud's copies run on the `threads` option
/// in chunks fixed by the cloud alone, so the result is the same bits for any thread count.

#include <Eigen/Core>
#include <cstddef>
#include <limits>
#include <optional>
#include <string>
#include <vector>

#include "cylzone/io/point_cloud.hpp"

namespace cylzone {

/// A rigid placement p' = rotation * p + translation (mm): the scanned cloud into the part's
/// nominal coordinates (the datum reference frame as the drawing defines it).
struct RigidPlacement {
  Eigen::Matrix3d rotation = Eigen::Matrix3d::Identity();
  Eigen::Vector3d translation = Eigen::Vector3d::Zero();
};

/// One nominal surface a feature takes its points from; all in the part's nominal coordinates.
struct NominalSurface {
  enum class Kind { cylinder, plane };
  Kind kind = Kind::cylinder;
  std::string name;  ///< for messages and reports, e.g. "bore P3", "datum A"
  Eigen::Vector3d origin = Eigen::Vector3d::Zero();      ///< a point of the axis / the plane
  Eigen::Vector3d direction = Eigen::Vector3d::UnitZ();  ///< unit axis / unit normal
  /// Cylinder: radius (mm) and the axial range [low, high] of s = direction . (p - origin).
  double radius = 0.0;
  double low = 0.0;
  double high = 0.0;
  /// Plane: in-plane unit axes (orthogonal to direction) and the extent along them.
  Eigen::Vector3d u_axis = Eigen::Vector3d::UnitX();
  Eigen::Vector3d v_axis = Eigen::Vector3d::UnitY();
  double u_low = 0.0, u_high = 0.0, v_low = 0.0, v_high = 0.0;
};

struct SegmentOptions {
  double band = 0.1;  ///< mm: half-width of the band about each nominal surface, > 0
  /// mm: a cylinder's axial range and a plane's extent are widened by this much; empty: `band`.
  std::optional<double> margin;
  /// Degrees, (0, 90]: the largest angle between a point's vector and the surface normal, used
  /// when the cloud has vectors.
  double normal_agreement_deg = 30.0;
  /// Threads for the pass over the points (the one `threads` option); any count gives the
  /// same result. Not part of the method: reports leave it out.
  std::size_t threads = 1;
};

/// What one surface took.
struct SurfaceSegment {
  std::vector<std::size_t> indices;  ///< into the cloud, ascending
  /// The smallest distance of any cloud point from the bounded nominal surface (radial and
  /// axial overshoot combined for a cylinder, normal and in-plane overshoot for a plane), mm:
  /// what a surface that took nothing reports. Infinity for an empty cloud.
  double nearest_distance = std::numeric_limits<double>::infinity();
  /// Cylinders with points: 360 degrees minus the largest angular gap between the points'
  /// azimuths about the nominal axis (exact for a cloud of up to 2^15 points, else for any gap
  /// of 0.014 degrees or more: the fits' maximum-gap bucketing); the probed axial span (max s - min s) and the nominal one
  /// (high - low). Planes: angular coverage empty, spans 0.
  std::optional<double> angular_coverage_deg;
  double probed_span = 0.0;
  double nominal_span = 0.0;
};

struct SegmentationResult {
  std::vector<SurfaceSegment> surfaces;  ///< one per surface, in the order given
  std::size_t unassigned = 0;            ///< points within no band
  bool used_vectors = false;             ///< the normal agreement was applied
};

/// Segments `cloud` (its points and, when present, its vectors) among `surfaces` after
/// `placement` (the method above). Throws std::invalid_argument for options out of range.
SegmentationResult segment_scan(const PointCloud& cloud, const RigidPlacement& placement,
                                const std::vector<NominalSurface>& surfaces,
                                const SegmentOptions& options = {});

/// The cloud's point `index` mapped by `placement`.
inline Eigen::Vector3d placed_point(const PointCloud& cloud, const RigidPlacement& placement,
                                    std::size_t index) {
  return placement.rotation * cloud.points.col(static_cast<Eigen::Index>(index)) +
         placement.translation;
}

// ---- Refining a rough placement (plan key [scan] register = true).

struct RegistrationOptions {
  SegmentOptions segment;        ///< the band that picks each iteration's correspondences
  std::size_t max_iterations = 50;
  /// Converged when an iteration moves every point within `reach` of the origin by less than
  /// this (mm): |rotation step| * reach + |translation step|.
  double tolerance = 1e-9;
  double reach = 1000.0;         ///< mm
  /// At most this many points take part (every k-th point of the cloud, in its order).
  std::size_t max_points = 200000;
  /// The first stage takes its correspondences from bands this many times wider than
  /// `segment.band` (the capture range of a rough placement); the second from `segment.band`.
  double capture_factor = 4.0;
};

struct RegistrationResult {
  RigidPlacement placement;      ///< the refined placement
  std::size_t iterations = 0;
  bool converged = false;
  std::size_t points = 0;        ///< correspondences of the last iteration
  double rms = 0.0;              ///< mm: rms distance of those points from their surfaces
  /// Degrees of freedom the surfaces cannot fix (e.g. the rotation about a lone bore's axis),
  /// left as the rough placement had them.
  std::size_t free_directions = 0;
};

/// Refines `rough` so that the cloud's points in the bands of `surfaces` (normally the datum
/// features) lie on them in the least-squares sense: iterative closest point (Besl & McKay,
/// IEEE PAMI 14(2), 1992) with the point-to-plane error of Chen & Medioni (Image and Vision
/// Computing 10(3), 1992). The nominal surfaces are analytic, so each point's closest point is
/// its foot on its surface (no search structure). Each iteration segments the points with the
/// current placement, linearises the rotation (small-angle) and solves the 6x6 normal equations
/// by a rank-revealing decomposition: directions the surfaces do not fix are left unchanged.
/// Two stages: bands widened by `capture_factor` until converged (to reach a placement off by
/// more than the band), then the band itself (so that the final correspondences are the
/// segmentation's). `iterations` counts both.
/// Throws std::invalid_argument when no point lies in any band.
RegistrationResult register_to_nominal(const PointCloud& cloud, const RigidPlacement& rough,
                                       const std::vector<NominalSurface>& surfaces,
                                       const RegistrationOptions& options = {});

// ---- Finding a placement from nothing (plan key [scan] placement = "find", or none).

struct PlacementSearchOptions {
  /// The band of the final correspondences, the margin and the normal agreement: the plan's.
  SegmentOptions segment;
  /// Points that vote for the hypotheses (chosen by their rank of distance from the cloud's
  /// centroid, so that the choice depends on neither the pose nor the order of the points).
  std::size_t sample_points = 2000;
  /// Points of the final refinement (chosen the same way; register_to_nominal on them).
  std::size_t refine_points = 200000;
  /// Distinct planes tried as datum A, and circles tried as datum B's axis on each.
  std::size_t plane_candidates = 6;
  std::size_t centre_candidates = 3;
  /// A second placement that puts the part elsewhere and holds at least this share of the
  /// best one's points within the band makes the result ambiguous (the datums' symmetry).
  double ambiguity_share = 0.95;
  /// The found placement is accepted when every datum surface takes points and the rms
  /// distance of the points in the datums' bands is at most this share of the band.
  double acceptance_rms_share = 1.0 / 3.0;
  /// ... and holds at least this many points, a cylinder covering at least this arc about
  /// its axis (degrees).
  std::size_t min_points = 8;
  double min_coverage_deg = 90.0;
};

struct PlacementSearchResult {
  enum class Status {
    found,            ///< one placement fits clearly best
    ambiguous,        ///< two placements putting the part differently fit (almost) equally
    underdetermined,  ///< the datum features leave a direction of motion free
    no_match          ///< no hypothesis fits: `best_rms` says how far the best one is
  };
  Status status = Status::no_match;
  std::string message;  ///< one line: what was found, or why nothing was
  RegistrationResult registration;  ///< the best placement, refined (status found)
  std::size_t hypotheses = 0;  ///< placements tried (plane x side x circle x clocking)
  std::size_t inliers = 0;     ///< sample points within the band of a datum surface, best
  double best_rms = std::numeric_limits<double>::infinity();  ///< mm, best hypothesis
  /// The runner-up that put the part elsewhere: its sample points in the bands, and how far it
  /// moves the corners of the datums' nominal box from the best (mm).
  std::size_t runner_up_inliers = 0;
  double runner_up_distance = 0.0;
};

/// Finds the placement of `cloud` in the part's nominal coordinates from the cloud and the
/// nominal datum features alone: `datums` as scan_surfaces gives them, datum A (the plane
/// z = 0), datum B (a cylinder about the z axis), then datum C's surface(s). A plane-and-axis
/// correspondence search (the hypothesise-and-verify scheme of RANSAC, Fischler & Bolles,
/// Commun. ACM 24(6), 1981, made exhaustive and deterministic; the circle votes of the Hough
/// transform, Duda & Hart, Commun. ACM 15(1), 1972):
///  1. oriented sample points: the cloud's vectors, or the normal of the least-squares plane
///     through each point's 12 nearest neighbours (NeighbourIndex);
///  2. datum A: every sample point's tangent plane is a hypothesis, supported by the sample
///     points on it with agreeing normals; the best distinct planes are refitted by least
///     squares to their support; each is tried with either side out of the material;
///  3. datum B: the points on walls perpendicular to the plane, within B's depth, vote for the
///     centre of a circle of B's nominal radius (each point at the radius along its normal,
///     both senses); the densest distinct centres are B's axis;
///  4. the rotation about B's axis: datum C's surfaces turned through a full circle in steps
///     of a fraction of the capture band, scored by the wall points near them with agreeing
///     normals; the distinct peaks are candidates;
///  5. each candidate refined by iterative closest point on the sample (register_to_nominal,
///     bands from the capture band down to the plan's), scored by the sample points within the
///     band of a datum surface, then its rms; the best refined on up to `refine_points`.
/// Everything is decided by the data: the samples by rank of distance from the centroid, ties
/// by that rank, never by the cloud's pose or the order of its points. Pure: no IO, no state.
/// Throws std::invalid_argument for options out of range or fewer than 3 datum surfaces.
PlacementSearchResult find_placement(const PointCloud& cloud,
                                     const std::vector<NominalSurface>& datums,
                                     const PlacementSearchOptions& options = {});

/// Each surface's points as a cloud of their own (with their vectors and file lines, when
/// present), in the cloud's own coordinates and order: the feature's points exactly as a file
/// of them would give. One forward pass over the cloud per surface, reading only its points;
/// nothing cloud-sized is allocated besides the copies.
std::vector<PointCloud> split_cloud(const PointCloud& cloud, const SegmentationResult& segments,
                                    std::size_t threads = 1);

/// As above, consuming `segments`: each surface's indices are released as soon as its points
/// are copied, so the peak holds the cloud, its copy and the indices not yet copied (a whole-
/// part scan's load stage). The surfaces' other fields are left as they were.
/// Each surface's copy runs on `threads` in blocks of indices fixed by the data (pure copies:
/// the same result for any count).
std::vector<PointCloud> split_cloud(const PointCloud& cloud, SegmentationResult&& segments,
                                    std::size_t threads = 1);

}  // namespace cylzone
