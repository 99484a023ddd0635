#pragma once
/// \file part_inputs.hpp
/// The load stage of a part check: every input file read once, its digest taken from exactly
/// the bytes parsed, its points held in memory. Everything after it (evaluate_part.hpp) works
/// on these inputs without touching a file, so a study can re-run the evaluation many times on
/// perturbed copies.

#include <filesystem>
#include <optional>
#include <string>
#include <vector>

#include "cylzone/io/point_cloud.hpp"
#include "cylzone/plan/plan.hpp"
#include "cylzone/prepare/segment_scan.hpp"

namespace cylzone {

/// One input file, identified for the record.
struct InputRecord {
  std::string role;  ///< "plan", "datum A", "bore P3"
  std::filesystem::path path;
  std::string sha256;  ///< hex digest (FIPS 180-4) of the bytes parsed
  std::size_t points = 0;
  /// 1-based file line of each point (PointCloud::lines); empty when the format has no lines.
  std::vector<std::size_t> point_lines;
};

/// What one feature took from the plan's [scan] (prepare/segment_scan.hpp). Lengths in mm.
struct FeatureSegmentation {
  std::string role;  ///< "datum A", "bore P3"
  std::size_t points = 0;
  /// Cylinders: 360 degrees minus the largest gap of the points' azimuths about the nominal
  /// axis; empty for a plane.
  std::optional<double> angular_coverage_deg;
  double probed_span = 0.0;   ///< cylinders: axial span of the points taken
  double nominal_span = 0.0;  ///< cylinders: the nominal depth (plan `depth`, along the axis)
  /// A slot or tab: the points of its left and right face (seen from outside the material,
  /// looking from B toward C); `points` is their sum. Empty for other features.
  std::vector<std::size_t> face_points;
  bool is_cylinder() const noexcept { return angular_coverage_deg.has_value(); }
};

/// How a placement was found from nothing (plan [scan] without a placement; find_placement).
struct PlacementSearchSummary {
  std::size_t hypotheses = 0;         ///< placements tried
  std::size_t inliers = 0;            ///< the best one's sample points within the band
  std::size_t runner_up_inliers = 0;  ///< the best placement elsewhere: its points
  double runner_up_distance = 0.0;    ///< mm: how far that one puts the part (0: none)
};

/// The record of a whole-part scan and how it was segmented.
struct ScanSegmentation {
  std::filesystem::path path;
  std::string sha256;  ///< of the bytes parsed
  std::size_t points = 0;      ///< in the cloud
  std::size_t unassigned = 0;  ///< within no feature's band
  SegmentOptions options;      ///< band, margin (settled), normal agreement
  bool used_vectors = false;   ///< the cloud had vectors: the normal agreement was applied
  std::vector<FeatureSegmentation> features;  ///< datums then bores taking scan points
  /// The placement the segmentation used: the plan's, or the registered one.
  RigidPlacement placement;
  /// With the plan's `register = true`, or a placement found: how the placement was refined.
  std::optional<RegistrationResult> registration;
  /// The placement found from the cloud and the nominal datums (no placement in the plan).
  std::optional<PlacementSearchSummary> search;
};

/// A part's measured inputs, in the plan's order.
struct PartInputs {
  /// The plan first (its own digest, PartPlan::sha256), then each datum, then each bore. A
  /// feature segmented from the plan's [scan] names the scan's file and digest, and the file
  /// lines of the points it took.
  std::vector<InputRecord> records;
  std::vector<PointCloud> datums;  ///< one per plan.datums entry, measurement coordinates
  std::vector<PointCloud> bores;   ///< one per plan.bores entry, measurement coordinates
  std::optional<ScanSegmentation> scan;  ///< when the plan has a [scan]
};

/// The nominal surfaces of the plan's features that take their points from its [scan], datums
/// then bores, in the part's nominal coordinates (the frame as drawn): datum A the rectangle
/// `extent` on z = 0 (normal +z); a bore or pin B or C the cylinder of its nominal size
/// (`nominal_size`, else the middle of `size`) about the axis through the origin (B) or its
/// basic location (C), perpendicular to A, over its `depth`; a bore that of its nominal size
/// about its true-position axis along `direction`, over its `depth` (z converted to the length
/// along the axis); a plane C the rectangle of its face n . p = `offset` (n its outward normal)
/// over `span` and `depth`; a slot or tab C its two faces at +-width/2 (`nominal_size`, else the
/// middle of `size`) from the centre plane through B's axis toward `basic`, over `span` and
/// `depth`. Each surface is named by its role ("datum A", "bore P3"; a slot's faces "datum C
/// left face", "datum C right face").
std::vector<NominalSurface> scan_surfaces(const PartPlan& plan);

/// A scan segmented among the plan's features.
struct SegmentedScan {
  ScanSegmentation record;
  /// Each feature's points, datums then bores (split_cloud: the same points, vectors and file
  /// lines as the cloud, in the cloud's order); a slot's or tab's two faces make one cloud.
  std::vector<PointCloud> clouds;
};

/// Segments `cloud` (the plan's scan, in its own coordinates; `sha256` its digest) among the
/// features that take their points from it, by the plan's placement, band and normal agreement.
/// Throws InputError naming the plan file, the feature's line and key when a feature takes no
/// point: the message gives the distance from its nominal surface to the nearest points of the
/// cloud. Pure: no file is read.
/// The band pass and the copies run on `threads` (SegmentOptions::threads): the same result
/// for any count.
SegmentedScan segment_part_scan(const PartPlan& plan, const PointCloud& cloud,
                                const std::string& sha256, std::size_t threads = 1);

/// How the load stage runs. Nothing here changes what is read or any figure.
struct LoadOptions {
  /// The one `threads` option: a file's digest beside its parse, and a scan's segmentation
  /// (segment_part_scan). Any count gives the same inputs, bit for bit.
  std::size_t threads = 1;
};

/// Loads every datum's and bore's points (with vectors where the file has them) in the plan's
/// unit: each file is read once and hashed from the same buffer it is parsed from. With a
/// [scan], its cloud is read once too and segmented (segment_part_scan) among the features
/// without a point file of their own. Throws InputError naming the file for a missing or
/// unreadable file or bad data, and as segment_part_scan does.
PartInputs load_part_inputs(const PartPlan& plan, const LoadOptions& options = {});

}  // namespace cylzone
