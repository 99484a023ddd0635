// The load stage (part_inputs.hpp): the only part of a check that reads files.
#include "cylzone/check/part_inputs.hpp"

#include <algorithm>
#include <cmath>
#include <iterator>
#include <cstdio>
#include <stdexcept>
#include <utility>

#include <Eigen/Geometry>

#include "cylzone/core/errors.hpp"
#include "cylzone/io/load.hpp"
#include "detail/parallel.hpp"
#include "io/detail/file_digest.hpp"

namespace cylzone {
namespace {

/// Reads `file` once; returns the cloud and the digest of the very bytes parsed. The bytes are
/// released before returning, so a large scan is not held twice while it is segmented. The
/// digest (SHA-256 is sequential by construction) and the parse read the same bytes and
/// nothing else, so with two threads they run side by side as two fixed chunks: the hash
/// first, so an error is the one a serial run meets first (detail/parallel.hpp).
std::pair<PointCloud, std::string> load_hashed(const std::filesystem::path& file,
                                               const ReadOptions& read, std::size_t threads) {
  const LoadedFile loaded = load(file);
  std::string digest;
  PointCloud cloud;
  detail::parallel_for(2, threads, [&](std::size_t chunk, std::size_t) {
    if (chunk == 0)
      digest = detail::sha256_of_bytes(loaded.bytes());
    else
      cloud = parse_points(loaded.bytes(), file.string(),
                           read.format.value_or(format_from_extension(file)), read);
  });
  return {std::move(cloud), std::move(digest)};
}

/// Reads `file` once; the digest is of the very bytes parsed.
PointCloud load_and_record(const std::filesystem::path& file, const std::string& role,
                           const ReadOptions& read, std::size_t threads,
                           std::vector<InputRecord>& records) {
  auto [cloud, digest] = load_hashed(file, read, threads);
  records.push_back({role, file, std::move(digest), cloud.size(), cloud.lines});
  return std::move(cloud);
}

double nominal_size(const std::optional<double>& given, const std::optional<SizeLimits>& size) {
  return given ? *given : 0.5 * (size->lower + size->upper);
}

NominalSurface nominal_cylinder(std::string role, const Eigen::Vector2d& basic,
                                const Eigen::Vector3d& direction, double size, double top,
                                double bottom) {
  NominalSurface s;
  s.kind = NominalSurface::Kind::cylinder;
  s.name = std::move(role);
  s.origin = Eigen::Vector3d(basic.x(), basic.y(), 0.0);
  s.direction = direction;
  s.radius = 0.5 * size;
  // The plan's depth ends are heights z in the frame; along an inclined axis through the basic
  // location on A (z = 0) they lie at s = z / d_z.
  s.low = bottom / direction.z();
  s.high = top / direction.z();
  return s;
}

/// A length for a message, in the plan's unit.
std::string length_text(double mm, LengthUnit unit) {
  char text[64];
  std::snprintf(text, sizeof text, "%.4g %s", mm / millimetres_per(unit),
                std::string(unit_name(unit)).c_str());
  return text;
}

}  // namespace

namespace {

/// A plane face in the frame: through `origin`, unit normal `normal`, spanning `along` in
/// [span low, span high] (from `origin`) and z in [bottom, top].
NominalSurface nominal_face(std::string role, const Eigen::Vector3d& origin,
                            const Eigen::Vector3d& normal, const Eigen::Vector3d& along,
                            const Eigen::Vector2d& span, double top, double bottom) {
  NominalSurface s;
  s.kind = NominalSurface::Kind::plane;
  s.name = std::move(role);
  s.origin = origin;
  s.direction = normal;
  s.u_axis = along;
  s.v_axis = Eigen::Vector3d::UnitZ();
  s.u_low = span[0];
  s.u_high = span[1];
  s.v_low = bottom;
  s.v_high = top;
  return s;
}

/// One feature that takes its points from the scan: its role, where the plan gives it, and its
/// nominal surfaces (one, or a slot's or tab's two faces).
struct ScanFeature {
  std::string role;
  const PlanLocation* where = nullptr;
  std::vector<NominalSurface> surfaces;
};

std::vector<ScanFeature> scan_features(const PartPlan& plan) {
  std::vector<ScanFeature> features;
  for (const PlanDatum& d : plan.datums) {
    if (!d.from_scan()) continue;
    ScanFeature f{std::string("datum ") + d.label, &d.where, {}};
    const double top = d.depth_top.value_or(0.0), bottom = d.depth_bottom.value_or(0.0);
    const Eigen::Vector2d span = d.span.value_or(Eigen::Vector2d::Zero());
    if (d.kind == FeatureKind::plane && d.label == 'A') {
      // Datum A: the plane z = 0 of the frame, its normal out of the material.
      NominalSurface s;
      s.kind = NominalSurface::Kind::plane;
      s.name = f.role;
      s.u_low = d.extent_x ? (*d.extent_x)[0] : 0.0;
      s.u_high = d.extent_x ? (*d.extent_x)[1] : 0.0;
      s.v_low = d.extent_y ? (*d.extent_y)[0] : 0.0;
      s.v_high = d.extent_y ? (*d.extent_y)[1] : 0.0;
      f.surfaces.push_back(s);
    } else if (d.kind == FeatureKind::plane) {
      // A plane C: n . p = offset, perpendicular to A; `span` along z x n from the foot of the
      // origin on the face.
      const Eigen::Vector2d o = d.outward_normal.value_or(Eigen::Vector2d::UnitX()).normalized();
      const Eigen::Vector3d n(o.x(), o.y(), 0.0);
      f.surfaces.push_back(nominal_face(f.role, d.offset.value_or(0.0) * n, n,
                                        Eigen::Vector3d::UnitZ().cross(n), span, top, bottom));
    } else if (d.kind == FeatureKind::slot || d.kind == FeatureKind::tab) {
      // A width feature: two faces at +-width/2 from the centre plane, which runs from B's axis
      // toward `basic`; the left face (seen from outside the material, looking from B toward
      // C) lies along z x b, the direction the datum frame calls left.
      const Eigen::Vector2d b2 = d.basic_location.value_or(Eigen::Vector2d::UnitX()).normalized();
      const Eigen::Vector3d b(b2.x(), b2.y(), 0.0);
      const Eigen::Vector3d left = Eigen::Vector3d::UnitZ().cross(b);
      const double half = 0.5 * nominal_size(d.nominal_size, d.size);
      f.surfaces.push_back(
          nominal_face(f.role + " left face", half * left, left, b, span, top, bottom));
      f.surfaces.push_back(
          nominal_face(f.role + " right face", -half * left, left, b, span, top, bottom));
    } else {
      f.surfaces.push_back(nominal_cylinder(
          f.role, d.basic_location.value_or(Eigen::Vector2d::Zero()), Eigen::Vector3d::UnitZ(),
          nominal_size(d.nominal_size, d.size), top, bottom));
    }
    features.push_back(std::move(f));
  }
  for (const PlanBore& b : plan.bores)
    if (b.from_scan()) {
      ScanFeature f{"bore " + b.id, &b.where, {}};
      f.surfaces.push_back(nominal_cylinder(f.role, b.basic_location, b.nominal_direction,
                                            nominal_size(b.nominal_size, b.size),
                                            b.depth_top.value_or(0.0),
                                            b.depth_bottom.value_or(0.0)));
      features.push_back(std::move(f));
    }
  return features;
}

/// The features' surfaces in order, one list.
std::vector<NominalSurface> surfaces_of(const std::vector<ScanFeature>& features) {
  std::vector<NominalSurface> surfaces;
  for (const ScanFeature& f : features)
    surfaces.insert(surfaces.end(), f.surfaces.begin(), f.surfaces.end());
  return surfaces;
}

/// The datum features' surfaces (A, B, then C's), which the placement is found or refined on.
std::vector<NominalSurface> datum_surfaces(const std::vector<NominalSurface>& surfaces) {
  std::vector<NominalSurface> datums;
  for (const NominalSurface& s : surfaces)
    if (s.name.rfind("datum ", 0) == 0) datums.push_back(s);
  return datums;
}

}  // namespace

std::vector<NominalSurface> scan_surfaces(const PartPlan& plan) {
  return surfaces_of(scan_features(plan));
}

SegmentedScan segment_part_scan(const PartPlan& plan, const PointCloud& cloud,
                                const std::string& sha256, std::size_t threads) {
  const PlanScan& scan = *plan.scan;
  const std::vector<ScanFeature> features = scan_features(plan);
  const std::vector<NominalSurface> surfaces = surfaces_of(features);
  SegmentOptions options = scan.segment;
  options.margin = options.margin.value_or(options.band);
  options.threads = std::max<std::size_t>(1, threads);
  SegmentedScan out;
  ScanSegmentation& record = out.record;
  record.placement = scan.placement;
  if (scan.find_placement) {
    // No placement given: found from the cloud and the nominal datum features alone, then
    // refined as `register` does (find_placement).
    const std::vector<NominalSurface> datums = datum_surfaces(surfaces);
    PlacementSearchOptions search;
    search.segment = options;
    PlacementSearchResult found = find_placement(cloud, datums, search);
    const PlanLocation at = scan.where.at("placement");
    if (found.status != PlacementSearchResult::Status::found)
      throw InputError(plan.file.string(), at.line,
                       "the scan cannot be placed by the nominal datums alone: " +
                           found.message + "; give a rough placement (a 4x4 matrix)",
                       at.key);
    record.registration = found.registration;
    record.placement = found.registration.placement;
    record.search = PlacementSearchSummary{found.hypotheses, found.inliers,
                                           found.runner_up_inliers, found.runner_up_distance};
  } else if (scan.register_placement) {
    // The rough placement refined on the datum features alone (they define the frame the
    // nominal geometry is given in); then every feature is segmented with it.
    const std::vector<NominalSurface> datums = datum_surfaces(surfaces);
    RegistrationOptions registration;
    registration.segment = options;
    try {
      record.registration = register_to_nominal(cloud, scan.placement, datums, registration);
    } catch (const std::invalid_argument&) {
      throw InputError(plan.file.string(), scan.where.at("register").line,
                       "no point of the scan lies within the band of " +
                           length_text(options.band, plan.unit) +
                           " about a datum feature's nominal surface with the rough placement: "
                           "the registration has nothing to start from; check the placement",
                       scan.where.at("register").key);
    }
    record.placement = record.registration->placement;
  }
  SegmentationResult result = segment_scan(cloud, record.placement, surfaces, options);

  record.path = scan.points;
  record.sha256 = sha256;
  record.points = cloud.size();
  record.unassigned = result.unassigned;
  record.options = options;
  record.used_vectors = result.used_vectors;

  // Each feature's points: its surfaces' indices merged in the cloud's order (a slot's or
  // tab's two faces make one cloud, as a file of its points would).
  SegmentationResult merged;
  std::size_t k = 0;  // the next surface, in scan_surfaces' order
  for (const ScanFeature& feature : features) {
    FeatureSegmentation f;
    f.role = feature.role;
    SurfaceSegment together;
    for (std::size_t j = 0; j < feature.surfaces.size(); ++j, ++k) {
      SurfaceSegment& segment = result.surfaces[k];
      if (segment.indices.empty()) {
        std::string nearest =
            std::isfinite(segment.nearest_distance)
                ? "its nearest points are " + length_text(segment.nearest_distance, plan.unit) +
                      " from it"
                : "the cloud has no points";
        // Points inside the band that were all refused by their vectors, or by the margin.
        if (segment.nearest_distance <= options.band)
          nearest += result.used_vectors
                         ? ", but their vectors are more than " +
                               std::to_string(static_cast<int>(options.normal_agreement_deg)) +
                               " degrees from its surface normal, or they lie beyond its depth "
                               "or extent by more than the margin"
                         : ", but they lie beyond its depth or extent by more than the margin";
        throw InputError(plan.file.string(), feature.where->line,
                         surfaces[k].name + " takes no point of the scan " +
                             quoted_for_message(scan.points.string()) +
                             ": none lies within the band of " +
                             length_text(options.band, plan.unit) +
                             " about its nominal surface (" + nearest +
                             "); check the scan's placement, the band and the feature's "
                             "nominal location, size and depth",
                         feature.where->key);
      }
      if (feature.surfaces.size() > 1) f.face_points.push_back(segment.indices.size());
      if (j == 0) {
        f.angular_coverage_deg = segment.angular_coverage_deg;
        f.probed_span = segment.probed_span;
        f.nominal_span = segment.nominal_span;
        together.indices = std::move(segment.indices);
      } else {
        std::vector<std::size_t> both;
        both.reserve(together.indices.size() + segment.indices.size());
        std::merge(together.indices.begin(), together.indices.end(), segment.indices.begin(),
                   segment.indices.end(), std::back_inserter(both));
        together.indices = std::move(both);
      }
      std::vector<std::size_t>().swap(segment.indices);
    }
    f.points = together.indices.size();
    record.features.push_back(std::move(f));
    merged.surfaces.push_back(std::move(together));
  }
  // Consumed: each feature's indices are released once its points are copied.
  out.clouds = split_cloud(cloud, std::move(merged), options.threads);
  return out;
}

PartInputs load_part_inputs(const PartPlan& plan, const LoadOptions& options) {
  const std::size_t threads = std::max<std::size_t>(1, options.threads);
  PartInputs inputs;
  inputs.records.push_back({"plan", plan.file, plan.sha256, 0, {}});
  ReadOptions read;
  read.unit = plan.unit;
  SegmentedScan scanned;
  if (plan.scan) {
    // The whole-part cloud: read and hashed once, segmented, then released.
    auto [cloud, digest] = load_hashed(plan.scan->points, read, threads);
    scanned = segment_part_scan(plan, cloud, digest, threads);
  }
  std::size_t next = 0;  // the next feature taking scan points, datums then bores
  const auto take = [&](const std::string& role) {
    PointCloud cloud = std::move(scanned.clouds[next++]);
    inputs.records.push_back(
        {role, scanned.record.path, scanned.record.sha256, cloud.size(), cloud.lines});
    return cloud;
  };
  for (const PlanDatum& datum : plan.datums) {
    const std::string role = std::string("datum ") + datum.label;
    inputs.datums.push_back(datum.from_scan()
                                ? take(role)
                                : load_and_record(datum.points, role, read, threads, inputs.records));
  }
  for (const PlanBore& bore : plan.bores) {
    const std::string role = "bore " + bore.id;
    inputs.bores.push_back(bore.from_scan()
                               ? take(role)
                               : load_and_record(bore.points, role, read, threads, inputs.records));
  }
  if (plan.scan) inputs.scan = std::move(scanned.record);
  return inputs;
}

}  // namespace cylzone
