// Segmenting a whole-part scan (prepare/segment_scan.hpp) and the plan's [scan] (plan.hpp,
// check/part_inputs.hpp). References:
//  * synthetic clouds built from the nominal geometry with known labels: every point is made
//    at a chosen distance from its surface, so the band rule's answer is known by construction;
//  * closed forms for the nearest distance (a point 3 mm off a cylinder's wall is 3 mm from it);
//  * the demo part: its scan (point-clouds/valve-manifold/scan) holds the rows of the
//    per-feature point files (the same text, so the same numbers) with a column naming each
//    row's feature; segmentation must reproduce that column exactly, and the check on the scan
//    must give the per-feature plan's figures to 1e-9 mm (same points, same answer).
#include <catch2/catch.hpp>

#include <Eigen/Geometry>
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <limits>
#include <map>
#include <random>
#include <sstream>
#include <string>

#include "cylzone/check/part_check.hpp"
#include "cylzone/check/part_inputs.hpp"
#include "cylzone/core/errors.hpp"
#include "cylzone/io/read_points.hpp"
#include "cylzone/plan/plan.hpp"
#include "cylzone/prepare/segment_scan.hpp"

#include <nlohmann/json.hpp>

using namespace cylzone;

namespace {

constexpr double kPi = 3.14159265358979323846;

/// A tilted bore off the origin and a plane, in the part's nominal coordinates.
std::vector<NominalSurface> two_surfaces() {
  NominalSurface bore;
  bore.kind = NominalSurface::Kind::cylinder;
  bore.name = "bore X";
  bore.origin = Eigen::Vector3d(37.0, -12.5, 0.0);
  bore.direction = Eigen::Vector3d(0.1, -0.05, 1.0).normalized();
  bore.radius = 6.0;
  bore.low = -40.0;
  bore.high = 0.0;
  NominalSurface face;
  face.kind = NominalSurface::Kind::plane;
  face.name = "datum A";
  face.u_low = -50.0;
  face.u_high = 120.0;
  face.v_low = -60.0;
  face.v_high = 40.0;
  return {bore, face};
}

/// Unit vectors u, v perpendicular to d (any pair: the test's own construction).
std::pair<Eigen::Vector3d, Eigen::Vector3d> basis(const Eigen::Vector3d& d) {
  const Eigen::Vector3d u = d.unitOrthogonal();
  return {u, d.cross(u)};
}

/// The cloud given in the scanner's coordinates: p_scan = M^-1 p_part, so that the placement
/// p_part = M p_scan maps it back.
PointCloud in_scanner(const std::vector<Eigen::Vector3d>& part_points,
                      const std::vector<Eigen::Vector3d>& part_normals,
                      const RigidPlacement& placement) {
  PointCloud cloud;
  cloud.points.resize(3, static_cast<Eigen::Index>(part_points.size()));
  if (!part_normals.empty()) cloud.vectors.resize(3, cloud.points.cols());
  for (std::size_t i = 0; i < part_points.size(); ++i) {
    const auto k = static_cast<Eigen::Index>(i);
    cloud.points.col(k) =
        placement.rotation.transpose() * (part_points[i] - placement.translation);
    if (!part_normals.empty()) cloud.vectors.col(k) = placement.rotation.transpose() * part_normals[i];
    cloud.lines.push_back(i + 2);
  }
  return cloud;
}

RigidPlacement some_placement() {
  RigidPlacement p;
  p.rotation = (Eigen::AngleAxisd(1.1, Eigen::Vector3d(0.3, -0.5, 0.8).normalized()))
                   .toRotationMatrix();
  p.translation = Eigen::Vector3d(-412.3, 88.1, 1250.7);
  return p;
}

}  // namespace

TEST_CASE("segment_scan: each point goes to the band it was built in, after the placement") {
  const std::vector<NominalSurface> surfaces = two_surfaces();
  const NominalSurface& bore = surfaces[0];
  const auto [u, v] = basis(bore.direction);
  std::vector<Eigen::Vector3d> pts;
  std::vector<int> label;  // 0 bore, 1 plane, -1 none
  // Bore wall: 24 azimuths x 9 levels, radial offsets within +-0.15 (band 0.2).
  for (int level = 0; level < 9; ++level)
    for (int k = 0; k < 24; ++k) {
      const double t = -38.0 + 4.5 * level, phi = 2 * kPi * k / 24;
      const double off = 0.15 * std::sin(3.0 * k + level);
      pts.push_back(bore.origin + t * bore.direction +
                    (bore.radius + off) * (std::cos(phi) * u + std::sin(phi) * v));
      label.push_back(0);
    }
  // Plane: a grid clear of the hole, normal offsets within +-0.1.
  for (int i = 0; i < 12; ++i)
    for (int j = 0; j < 8; ++j) {
      const Eigen::Vector3d q(-45.0 + 14.0 * i, -55.0 + 12.0 * j, 0.1 * std::cos(i + 2.0 * j));
      if ((q - bore.origin).head<2>().norm() < bore.radius + 2.0) continue;
      pts.push_back(q);
      label.push_back(1);
    }
  // Outside every band: 0.3 off the wall, below the bore's range beyond the margin, beside the
  // plane's extent, 0.25 above the plane.
  pts.push_back(bore.origin - 20.0 * bore.direction + (bore.radius + 0.3) * u);
  pts.push_back(bore.origin - 40.5 * bore.direction + bore.radius * v);
  pts.push_back(Eigen::Vector3d(121.0, 0.0, 0.0));
  pts.push_back(Eigen::Vector3d(60.0, 20.0, 0.25));
  label.insert(label.end(), 4, -1);

  const RigidPlacement placement = some_placement();
  const PointCloud cloud = in_scanner(pts, {}, placement);
  SegmentOptions options;
  options.band = 0.2;
  options.margin = 0.2;
  const SegmentationResult r = segment_scan(cloud, placement, surfaces, options);
  REQUIRE(r.surfaces.size() == 2);
  std::vector<int> got(pts.size(), -1);
  for (int s = 0; s < 2; ++s)
    for (std::size_t i : r.surfaces[static_cast<std::size_t>(s)].indices) got[i] = s;
  CHECK(got == label);
  CHECK(r.unassigned == 4);
  CHECK_FALSE(r.used_vectors);
  // Every azimuth probed at 15 degree steps: the largest gap is one step.
  REQUIRE(r.surfaces[0].angular_coverage_deg);
  CHECK(*r.surfaces[0].angular_coverage_deg == Approx(345.0).margin(1e-9));
  CHECK(r.surfaces[0].probed_span == Approx(36.0).margin(1e-9));
  CHECK(r.surfaces[0].nominal_span == Approx(40.0));
  CHECK_FALSE(r.surfaces[1].angular_coverage_deg);

  // The same cloud in another order: the same points for each surface.
  std::vector<std::size_t> order(pts.size());
  for (std::size_t i = 0; i < order.size(); ++i) order[i] = (i * 37) % order.size();
  REQUIRE(std::is_permutation(order.begin(), order.end(),
                              [&] {
                                std::vector<std::size_t> id(order.size());
                                for (std::size_t i = 0; i < id.size(); ++i) id[i] = i;
                                return id;
                              }().begin()));
  std::vector<Eigen::Vector3d> shuffled;
  for (std::size_t i : order) shuffled.push_back(pts[i]);
  const SegmentationResult r2 =
      segment_scan(in_scanner(shuffled, {}, placement), placement, surfaces, options);
  for (int s = 0; s < 2; ++s) {
    std::vector<std::size_t> back;
    for (std::size_t k : r2.surfaces[static_cast<std::size_t>(s)].indices) back.push_back(order[k]);
    std::sort(back.begin(), back.end());
    CHECK(back == r.surfaces[static_cast<std::size_t>(s)].indices);
  }
}

TEST_CASE("split_cloud: each piece is the cloud's own points, vectors and lines, in order") {
  // Reference: the definition (a feature's points exactly as a file of them would give), checked
  // column by column against the indices the segmentation took; the consuming form must give
  // the same bits and release the indices.
  const std::vector<NominalSurface> surfaces = two_surfaces();
  const NominalSurface& bore = surfaces[0];
  const auto [u, v] = basis(bore.direction);
  std::vector<Eigen::Vector3d> pts, normals;
  for (int i = 0; i < 300; ++i) {
    // Interleaved: wall, plane, a stray point, in turn.
    const double phi = 0.37 * i, t = -35.0 + 0.1 * i;
    const Eigen::Vector3d radial = std::cos(phi) * u + std::sin(phi) * v;
    if (i % 3 == 0) {
      pts.push_back(bore.origin + t * bore.direction + (bore.radius + 0.01 * std::sin(i)) * radial);
      normals.push_back(radial);
    } else if (i % 3 == 1) {
      pts.push_back(Eigen::Vector3d(-40.0 + 0.5 * i, 30.0, 0.02 * std::cos(i)));
      normals.push_back(Eigen::Vector3d::UnitZ());
    } else {
      pts.push_back(Eigen::Vector3d(500.0 + i, 0.0, 0.0));
      normals.push_back(Eigen::Vector3d::UnitX());
    }
  }
  const RigidPlacement placement = some_placement();
  const PointCloud cloud = in_scanner(pts, normals, placement);
  SegmentationResult r = segment_scan(cloud, placement, surfaces, {});
  REQUIRE(r.surfaces[0].indices.size() == 100);
  REQUIRE(r.surfaces[1].indices.size() == 100);
  const std::vector<PointCloud> pieces = split_cloud(cloud, r);
  REQUIRE(pieces.size() == 2);
  for (std::size_t s = 0; s < 2; ++s) {
    const std::vector<std::size_t>& idx = r.surfaces[s].indices;
    REQUIRE(pieces[s].size() == idx.size());
    REQUIRE(pieces[s].has_vectors());
    REQUIRE(pieces[s].lines.size() == idx.size());
    for (std::size_t k = 0; k < idx.size(); ++k) {
      const auto at = static_cast<Eigen::Index>(k), from = static_cast<Eigen::Index>(idx[k]);
      CHECK(pieces[s].points.col(at) == cloud.points.col(from));
      CHECK(pieces[s].vectors.col(at) == cloud.vectors.col(from));
      CHECK(pieces[s].lines[k] == cloud.lines[idx[k]]);
    }
  }
  const std::vector<PointCloud> consumed = split_cloud(cloud, std::move(r));
  REQUIRE(consumed.size() == 2);
  for (std::size_t s = 0; s < 2; ++s) {
    CHECK(consumed[s].points == pieces[s].points);
    CHECK(consumed[s].vectors == pieces[s].vectors);
    CHECK(consumed[s].lines == pieces[s].lines);
    CHECK(r.surfaces[s].indices.empty());  // released once copied  // NOLINT(bugprone-use-after-move)
  }
}

TEST_CASE("segment_scan and split_cloud on threads: a point-by-point classification, any count") {
  // Reference: the band rule of segment_scan.hpp applied point by point here, written from the
  // header's statement (nearest surface within its band and range, exact ties to the first
  // listed, vectors within the normal agreement). The cloud spans several of the pass's chunks
  // (200,003 points, chunks of 65,536 fixed by the data), so the chunked pass, its merged
  // azimuth buckets and axial ranges, and the chunked copies must give the same bits on 1, 2
  // and 3 threads.
  std::vector<NominalSurface> surfaces = two_surfaces();
  NominalSurface twin = surfaces[0];  // overlapping bands: the nearest wins
  twin.name = "bore Y";
  twin.origin += Eigen::Vector3d(12.1, 0.0, 0.0);
  surfaces.push_back(twin);
  const NominalSurface& bore = surfaces[0];
  const auto [u, v] = basis(bore.direction);
  std::mt19937_64 rng(77);
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  std::vector<Eigen::Vector3d> pts, normals;
  const std::size_t n = 200003;
  for (std::size_t i = 0; i < n; ++i) {
    const double pick = unit(rng);
    const NominalSurface& c = pick < 0.3 ? surfaces[0] : surfaces[2];
    if (pick < 0.6) {
      const double phi = 2 * kPi * unit(rng), t = -42.0 + 44.0 * unit(rng);
      const Eigen::Vector3d radial = std::cos(phi) * u + std::sin(phi) * v;
      pts.push_back(c.origin + t * c.direction + (c.radius - 0.3 + 0.6 * unit(rng)) * radial);
      normals.push_back((radial + 0.8 * (unit(rng) - 0.5) * c.direction).normalized());
    } else {
      pts.push_back(Eigen::Vector3d(-55.0 + 180.0 * unit(rng), -65.0 + 110.0 * unit(rng),
                                    -0.3 + 0.6 * unit(rng)));
      normals.push_back(Eigen::Vector3d(0.6 * (unit(rng) - 0.5), 0.0, 1.0).normalized());
    }
  }
  const RigidPlacement placement = some_placement();
  SegmentOptions options;
  options.band = 0.2;
  options.margin = 0.5;
  options.normal_agreement_deg = 12.0;
  for (const bool with_vectors : {false, true}) {
    const PointCloud cloud = in_scanner(pts, with_vectors ? normals : std::vector<Eigen::Vector3d>{},
                                        placement);
    // The reference, point by point.
    std::vector<std::vector<std::size_t>> expected(surfaces.size());
    std::size_t none = 0;
    const double min_cos = std::cos(12.0 * kPi / 180.0);
    for (std::size_t i = 0; i < n; ++i) {
      const Eigen::Vector3d q = placement.rotation * cloud.points.col(static_cast<Eigen::Index>(i)) +
                                placement.translation;
      std::size_t best = surfaces.size();
      double best_distance = 0.0;
      for (std::size_t k = 0; k < surfaces.size(); ++k) {
        const NominalSurface& s = surfaces[k];
        const Eigen::Vector3d rel = q - s.origin;
        double distance = 0.0;
        Eigen::Vector3d normal = s.direction;
        if (s.kind == NominalSurface::Kind::cylinder) {
          const double axial = s.direction.dot(rel);
          if (axial < s.low - 0.5 || axial > s.high + 0.5) continue;
          const Eigen::Vector3d radial = rel - axial * s.direction;
          distance = std::abs(radial.norm() - s.radius);
          normal = radial.normalized();
        } else {
          distance = std::abs(s.direction.dot(rel));
          const double a = s.u_axis.dot(rel), b = s.v_axis.dot(rel);
          if (a < s.u_low - 0.5 || a > s.u_high + 0.5 || b < s.v_low - 0.5 || b > s.v_high + 0.5)
            continue;
        }
        if (distance > 0.2) continue;
        if (with_vectors) {
          const Eigen::Vector3d w =
              placement.rotation * cloud.vectors.col(static_cast<Eigen::Index>(i));
          if (std::abs(w.dot(normal)) < min_cos * w.norm()) continue;
        }
        if (best == surfaces.size() || distance < best_distance) {
          best = k;
          best_distance = distance;
        }
      }
      if (best == surfaces.size())
        ++none;
      else
        expected[best].push_back(i);
    }
    SegmentOptions one = options;
    one.threads = 1;
    const SegmentationResult serial = segment_scan(cloud, placement, surfaces, one);
    CHECK(serial.unassigned == none);
    CHECK(serial.used_vectors == with_vectors);
    for (std::size_t k = 0; k < surfaces.size(); ++k) {
      CHECK(serial.surfaces[k].indices == expected[k]);
      CHECK_FALSE(serial.surfaces[k].indices.empty());
    }
    const std::vector<PointCloud> serial_pieces = split_cloud(cloud, serial, 1);
    for (const std::size_t threads : {2, 3}) {
      SegmentOptions many = options;
      many.threads = threads;
      SegmentationResult r = segment_scan(cloud, placement, surfaces, many);
      CHECK(r.unassigned == serial.unassigned);
      for (std::size_t k = 0; k < surfaces.size(); ++k) {
        CHECK(r.surfaces[k].indices == serial.surfaces[k].indices);
        CHECK(r.surfaces[k].angular_coverage_deg == serial.surfaces[k].angular_coverage_deg);
        CHECK(r.surfaces[k].probed_span == serial.surfaces[k].probed_span);
        CHECK(r.surfaces[k].nominal_span == serial.surfaces[k].nominal_span);
        CHECK(r.surfaces[k].nearest_distance == serial.surfaces[k].nearest_distance);
      }
      const std::vector<PointCloud> pieces = split_cloud(cloud, std::move(r), threads);
      REQUIRE(pieces.size() == serial_pieces.size());
      for (std::size_t k = 0; k < pieces.size(); ++k) {
        CHECK(pieces[k].points == serial_pieces[k].points);
        CHECK(pieces[k].vectors == serial_pieces[k].vectors);
        CHECK(pieces[k].lines == serial_pieces[k].lines);
      }
    }
    // The chunks' axial ranges merged: the extremes of the points taken (cylinders).
    for (std::size_t k : {std::size_t{0}, std::size_t{2}}) {
      double low = std::numeric_limits<double>::infinity(), high = -low;
      for (std::size_t i : expected[k]) {
        const Eigen::Vector3d q =
            placement.rotation * cloud.points.col(static_cast<Eigen::Index>(i)) +
            placement.translation;
        const double axial = surfaces[k].direction.dot(q - surfaces[k].origin);
        low = std::min(low, axial);
        high = std::max(high, axial);
      }
      CHECK(serial.surfaces[k].probed_span == Approx(high - low).margin(1e-9));
      REQUIRE(serial.surfaces[k].angular_coverage_deg);
      CHECK(*serial.surfaces[k].angular_coverage_deg > 359.0);  // probed all round
    }
  }
}

TEST_CASE("segment_scan: nearest surface wins, exact ties go to the first, normals must agree") {
  // Two coaxial-free cylinders whose bands overlap: radius 5 about x = 0 and radius 5 about
  // x = 10.3; a point at x = 5.15 on the line between the axes is 0.15 from both (a tie).
  NominalSurface a;
  a.name = "first";
  a.radius = 5.0;
  a.low = -10.0;
  a.high = 0.0;
  NominalSurface b = a;
  b.name = "second";
  b.origin = Eigen::Vector3d(10.3, 0.0, 0.0);
  std::vector<Eigen::Vector3d> pts = {{5.15, 0.0, -5.0},   // tie: first
                                      {5.10, 0.0, -5.0},   // 0.10 from a, 0.20 from b: a
                                      {5.20, 0.0, -5.0}};  // 0.20 from a, 0.10 from b: b
  SegmentOptions options;
  options.band = 0.25;
  const RigidPlacement identity;
  PointCloud cloud = in_scanner(pts, {}, identity);
  SegmentationResult r = segment_scan(cloud, identity, {a, b}, options);
  CHECK(r.surfaces[0].indices == std::vector<std::size_t>{0, 1});
  CHECK(r.surfaces[1].indices == std::vector<std::size_t>{2});
  // Listed the other way round, the tie goes to the other surface.
  r = segment_scan(cloud, identity, {b, a}, options);
  CHECK(r.surfaces[0].indices == std::vector<std::size_t>{0, 2});

  // With vectors: a radial vector (either sense) agrees, one 30 degrees off does not at 20.
  const double tilt = 30.0 * kPi / 180.0;
  cloud = in_scanner({{5.0, 0.0, -5.0}, {-5.0, 0.0, -5.0}, {0.0, 5.0, -5.0}},
                     {{1.0, 0.0, 0.0}, {1.0, 0.0, 0.0}, {0.0, std::cos(tilt), std::sin(tilt)}},
                     identity);
  options.normal_agreement_deg = 20.0;
  r = segment_scan(cloud, identity, {a}, options);
  CHECK(r.used_vectors);
  CHECK(r.surfaces[0].indices == std::vector<std::size_t>{0, 1});
  options.normal_agreement_deg = 31.0;
  r = segment_scan(cloud, identity, {a}, options);
  CHECK(r.surfaces[0].indices == std::vector<std::size_t>{0, 1, 2});
}

TEST_CASE("segment_scan: an empty band reports the distance to the nearest points") {
  NominalSurface a;
  a.name = "bore";
  a.origin = Eigen::Vector3d(20.0, 30.0, 0.0);
  a.radius = 4.0;
  a.low = -10.0;
  a.high = 0.0;
  // 3 mm outside the wall at mid-depth (closed form: 3), and 5 mm above the top on the wall
  // (axial overshoot 5): the nearest is 3.
  const RigidPlacement identity;
  const PointCloud cloud =
      in_scanner({{27.0, 30.0, -5.0}, {24.0, 30.0, 5.0}}, {}, identity);
  const SegmentationResult r = segment_scan(cloud, identity, {a}, {});
  CHECK(r.surfaces[0].indices.empty());
  CHECK(r.surfaces[0].nearest_distance == Approx(3.0).margin(1e-12));
  SegmentOptions bad;
  bad.band = 0.0;
  CHECK_THROWS_AS(segment_scan(cloud, identity, {a}, bad), std::invalid_argument);
  bad.band = 0.1;
  bad.normal_agreement_deg = 91.0;
  CHECK_THROWS_AS(segment_scan(cloud, identity, {a}, bad), std::invalid_argument);
}

namespace {

const std::string demo_dir = std::string(CYLZONE_SOURCE_DIR) + "/point-clouds/valve-manifold/";

/// The scan's `feature` column: each feature's file lines (the generator's truth).
std::map<std::string, std::vector<std::size_t>> demo_scan_truth() {
  std::ifstream in(demo_dir + "scan/manifold-scan.csv");
  std::string row;
  std::getline(in, row);
  std::map<std::string, std::vector<std::size_t>> truth;
  for (std::size_t line = 2; std::getline(in, row); ++line)
    truth[row.substr(row.rfind(',') + 1)].push_back(line);
  return truth;
}

std::string plan_head() {
  return "format = \"cylzone-plan-1\"\nname = \"scan test\"\nunits = \"mm\"\n";
}

std::string problem_of(const std::string& text) {
  try {
    parse_plan(text, "/tmp/scan-plan.toml", false);
  } catch (const InputError& e) {
    return std::string(e.what());
  }
  return "no error";
}

}  // namespace

TEST_CASE("[scan] plan: reading, and every rule names its key") {
  const std::string scan =
      "[scan]\npoints = \"cloud.csv\"\nband = 0.2\nnormal_agreement = 25\n"
      "placement = { rotation = [[0, -1, 0], [1, 0, 0], [0, 0, 1]], translation = [1, 2, 3] }\n";
  const std::string a = "[datum.A]\nfeature = \"plane\"\nextent = { x = [-10, 90], y = [-5, 50] }\n";
  const std::string bore =
      "[[bore]]\nid = \"P1\"\nbasic = [20, 20]\nsize = { lower = 10, upper = 10.02 }\n"
      "depth = { top = 0, bottom = -30 }\nposition = { tolerance = 0.03, datums = \"A\" }\n";
  const PartPlan plan = parse_plan(plan_head() + scan + a + bore, "/tmp/scan-plan.toml", false);
  REQUIRE(plan.scan);
  CHECK(plan.scan->points == std::filesystem::path("/tmp/cloud.csv"));
  CHECK(plan.scan->segment.band == 0.2);
  CHECK(plan.scan->segment.normal_agreement_deg == 25.0);
  CHECK(plan.scan->placement.rotation(0, 1) == -1.0);
  CHECK(plan.scan->placement.translation == Eigen::Vector3d(1, 2, 3));
  CHECK(plan.datums[0].from_scan());
  CHECK(plan.bores[0].from_scan());
  // The nominal surfaces: A's rectangle, the bore's cylinder of the middle of its size.
  const std::vector<NominalSurface> surfaces = scan_surfaces(plan);
  REQUIRE(surfaces.size() == 2);
  CHECK(surfaces[0].kind == NominalSurface::Kind::plane);
  CHECK(surfaces[0].u_high == 90.0);
  CHECK(surfaces[1].radius == Approx(5.005));
  CHECK(surfaces[1].low == -30.0);
  CHECK(surfaces[1].origin == Eigen::Vector3d(20, 20, 0));

  // The same placement as a 4x4 matrix.
  const std::string matrix =
      "[scan]\npoints = \"cloud.csv\"\nband = 0.2\n"
      "placement = [[0, -1, 0, 1], [1, 0, 0, 2], [0, 0, 1, 3], [0, 0, 0, 1]]\n";
  const PartPlan plan4 = parse_plan(plan_head() + matrix + a + bore, "/tmp/scan-plan.toml", false);
  CHECK(plan4.scan->placement.rotation == plan.scan->placement.rotation);
  CHECK(plan4.scan->placement.translation == plan.scan->placement.translation);

  // Rules (docs/plan.md, "[scan]"): the key and the problem.
  CHECK_THAT(problem_of(plan_head() + a + bore),
             Catch::Contains("key 'datum.A.points': required key is missing"));
  CHECK_THAT(problem_of(plan_head() + "[scan]\npoints = \"c.csv\"\nplacement = " +
                        "[[1,0,0,0],[0,1,0,0],[0,0,1,0],[0,0,0,1]]\n" + a + bore),
             Catch::Contains("key 'scan.band': required key is missing"));
  CHECK_THAT(problem_of(plan_head() +
                        "[scan]\npoints = \"c.csv\"\nband = -1\nplacement = "
                        "[[1,0,0,0],[0,1,0,0],[0,0,1,0],[0,0,0,1]]\n" + a + bore),
             Catch::Contains("scan.band': the band's half-width must be greater than zero"));
  CHECK_THAT(problem_of(plan_head() +
                        "[scan]\npoints = \"c.csv\"\nband = 0.1\nplacement = "
                        "[[1,0,0,0],[0,1,0,0],[0,0,1,0],[0,0,0,2]]\n" + a + bore),
             Catch::Contains("the last row of a rigid placement must be [0, 0, 0, 1]"));
  CHECK_THAT(problem_of(plan_head() +
                        "[scan]\npoints = \"c.csv\"\nband = 0.1\nplacement = "
                        "[[1,0,0,0],[0,1.1,0,0],[0,0,1,0],[0,0,0,1]]\n" + a + bore),
             Catch::Contains("scan.placement': the placement's rotation is not orthonormal"));
  CHECK_THAT(problem_of(plan_head() +
                        "[scan]\npoints = \"c.csv\"\nband = 0.1\nplacement = "
                        "[[1,0,0,0],[0,1,0,0],[0,0,-1,0],[0,0,0,1]]\n" + a + bore),
             Catch::Contains("a reflection"));
  CHECK_THAT(problem_of(plan_head() +
                        "[scan]\npoints = \"c.csv\"\nband = 0.1\nnormal_agreement = 120\n"
                        "placement = [[1,0,0,0],[0,1,0,0],[0,0,1,0],[0,0,0,1]]\n" + a + bore),
             Catch::Contains("scan.normal_agreement'"));
  CHECK_THAT(problem_of(plan_head() + scan + "[datum.A]\nfeature = \"plane\"\n" + bore),
             Catch::Contains("key 'datum.A.extent': datum A takes its points from [scan]"));
  CHECK_THAT(problem_of(plan_head() + scan + a +
                        "[[bore]]\nid = \"P1\"\nbasic = [20, 20]\ndepth = { top = 0, bottom = "
                        "-30 }\nposition = { tolerance = 0.03, datums = \"A\" }\n"),
             Catch::Contains("key 'bore[P1].nominal_size': bore P1 takes its points from [scan] "
                             "and needs its nominal size"));
  CHECK_THAT(problem_of(plan_head() + scan + a +
                        "[[bore]]\nid = \"P1\"\nbasic = [20, 20]\nnominal_size = 10\n"
                        "depth = { top = 0 }\nposition = { tolerance = 0.03, datums = \"A\" }\n"),
             Catch::Contains("key 'bore[P1].depth': a feature that takes its points from [scan] "
                             "needs its nominal z range"));
  CHECK_THAT(problem_of(plan_head() + scan + a +
                        "[datum.B]\nfeature = \"bore\"\npoints = \"b.csv\"\n"
                        "[datum.C]\nfeature = \"slot\"\nbasic = [50, 0]\n" + bore),
             Catch::Contains("key 'datum.C.nominal_size': datum C takes its points from [scan] "
                             "and needs its nominal width"));
  // A plane, slot or tab C from the scan: its nominal face (docs/plan.md, rules 31 and 38).
  const std::string b_file = "[datum.B]\nfeature = \"bore\"\npoints = \"b.csv\"\n";
  CHECK_THAT(problem_of(plan_head() + scan + a + b_file +
                        "[datum.C]\nfeature = \"slot\"\nbasic = [50, 0]\nnominal_size = 6\n"
                        "depth = { top = 0, bottom = -8 }\n" + bore),
             Catch::Contains("key 'datum.C.span': datum C as a slot takes its points from [scan] "
                             "and needs the nominal length of its face"));
  CHECK_THAT(problem_of(plan_head() + scan + a + b_file +
                        "[datum.C]\nfeature = \"tab\"\nbasic = [50, 0]\nnominal_size = 6\n"
                        "span = [40, 60]\n" + bore),
             Catch::Contains("key 'datum.C.depth': a feature that takes its points from [scan] "
                             "needs its nominal z range"));
  // A plane C with the given keys besides its feature and outward normal.
  const auto plane_c = [&](const std::string& keys) {
    return problem_of(plan_head() + scan + a + b_file +
                      "[datum.C]\nfeature = \"plane\"\noutward_normal = [1, 0]\n" + keys + bore);
  };
  CHECK_THAT(plane_c("span = [-10, 10]\ndepth = { top = -1, bottom = -9 }\n"),
             Catch::Contains("key 'datum.C.offset': datum C as a plane takes its points from "
                             "[scan] and needs its nominal face"));
  CHECK_THAT(plane_c("offset = 60\nspan = [10, -10]\ndepth = { top = -1, bottom = -9 }\n"),
             Catch::Contains("key 'datum.C.span': the span of C's face must be [low, high]"));
  CHECK_THAT(plane_c("offset = 2e5\nspan = [-10, 10]\ndepth = { top = -1, bottom = -9 }\n"),
             Catch::Contains("key 'datum.C.offset'"));
  CHECK_THAT(plane_c("offset = \"far\"\nspan = [-10, 10]\ndepth = { top = -1, bottom = -9 }\n"),
             Catch::Contains("key 'datum.C.offset'"));
  CHECK_THAT(plane_c("offset = 60\nspan = [-10, 10]\n"),
             Catch::Contains("key 'datum.C.depth': a feature that takes its points from [scan] "
                             "needs its nominal z range"));
  CHECK_THAT(problem_of(plan_head() + scan + a + b_file +
                        "[datum.C]\nfeature = \"bore\"\nbasic = [50, 0]\nnominal_size = 6\n"
                        "span = [40, 60]\ndepth = { top = 0, bottom = -8 }\n" + bore),
             Catch::Contains("key 'datum.C.span': unknown key for datum C as a bore"));
  {
    const PartPlan slot = parse_plan(
        plan_head() + scan + a + b_file +
            "[datum.C]\nfeature = \"slot\"\nbasic = [0, -45]\nsize = { lower = 6, upper = 6.03 }\n"
            "span = [35, 55]\ndepth = { top = 0, bottom = -8 }\n" + bore,
        "/tmp/scan-plan.toml", false);
    // The faces at +-3.0075 (the middle of the width's limits, halved) from the centre plane
    // x = 0 (basic toward -y): left of the centre line looking from B toward C is +x.
    const std::vector<NominalSurface> faces = scan_surfaces(slot);
    REQUIRE(faces.size() == 4);
    CHECK(faces[1].name == "datum C left face");
    CHECK(faces[1].origin.isApprox(Eigen::Vector3d(3.0075, 0, 0)));
    CHECK(faces[2].origin.isApprox(Eigen::Vector3d(-3.0075, 0, 0)));
    CHECK(std::abs(faces[1].direction.x()) == Approx(1.0));
    CHECK(faces[1].u_axis.isApprox(Eigen::Vector3d(0, -1, 0)));
    CHECK(faces[1].u_low == 35.0);
    CHECK(faces[1].v_low == -8.0);
  }
  CHECK_THAT(problem_of(plan_head() + scan + "[datum.A]\nfeature = \"plane\"\npoints = \"a.csv\"\n" +
                        "[[bore]]\nid = \"P1\"\npoints = \"p.csv\"\nbasic = [20, 20]\n"
                        "position = { tolerance = 0.03, datums = \"A\" }\n"),
             Catch::Contains("key 'scan': no feature takes its points from [scan]"));
  CHECK_THAT(problem_of(plan_head() + scan +
                        "[datum.A]\nfeature = \"plane\"\nextent = { x = [5, -5], y = [0, 1] }\n" +
                        bore),
             Catch::Contains("key 'datum.A.extent.x': the extent in x must be [low, high]"));
  CHECK_THAT(problem_of(plan_head() + scan + a + "[[bore]]\nid = \"P1\"\nbasic = [20, 20]\n"
                        "nominal_size = 10\nsize_typo = 1\n"),
             Catch::Contains("key 'bore[P1].size_typo': unknown key"));
}

TEST_CASE("demo scan: segmentation reproduces each row's feature, figures equal the files'") {
  const PartPlan scan_plan = read_plan(demo_dir + "plan-scan.toml");
  const PartInputs inputs = load_part_inputs(scan_plan);
  REQUIRE(inputs.scan);
  // The truth: the last column of the scan names the feature each row came from.
  std::ifstream in(demo_dir + "scan/manifold-scan.csv");
  std::string row;
  std::getline(in, row);
  std::map<std::string, std::vector<std::size_t>> truth;
  std::size_t line = 1, none = 0;
  while (std::getline(in, row)) {
    ++line;
    const std::string label = row.substr(row.rfind(',') + 1);
    if (label == "none")
      ++none;
    else
      truth[label].push_back(line);
  }
  CHECK(inputs.scan->unassigned == none);
  CHECK(inputs.scan->points == line - 1);
  std::size_t checked = 0;
  for (const InputRecord& record : inputs.records) {
    if (record.role == "plan") continue;
    INFO(record.role);
    CHECK(record.path == scan_plan.scan->points);
    CHECK(record.point_lines == truth.at(record.role));
    ++checked;
  }
  CHECK(checked == 10);

  // Same points, same answer: every figure of the per-feature plan, to 1e-9 mm.
  const PartCheckResult by_scan = check_part(scan_plan, inputs);
  const PartCheckResult by_files = check_part(read_plan(demo_dir + "plan.toml"));
  REQUIRE(by_scan.characteristics.size() == by_files.characteristics.size());
  for (std::size_t i = 0; i < by_scan.characteristics.size(); ++i) {
    const Characteristic& s = by_scan.characteristics[i];
    const Characteristic& f = by_files.characteristics[i];
    INFO(f.id);
    CHECK(s.id == f.id);
    CHECK(s.value == Approx(f.value).margin(1e-9));
    CHECK(s.bonus == Approx(f.bonus).margin(1e-9));
    CHECK(s.allowed == Approx(f.allowed).margin(1e-9));
    CHECK(s.verdict == f.verdict);
  }
  CHECK(by_scan.verdict == by_files.verdict);
  REQUIRE(by_scan.scan);
  CHECK(by_scan.scan->features.size() == 10);
}

TEST_CASE("demo scan: a feature with no point in its band is an error naming it and the distance") {
  // P3's basic location moved to (85, 40), between P3 and P7: its band holds no point whose
  // vector agrees with its surface normal.
  std::ifstream in(demo_dir + "plan-scan.toml");
  std::stringstream text;
  text << in.rdbuf();
  std::string plan = text.str();
  const std::string from = "basic = [85.0, 25.0]";
  REQUIRE(plan.find(from) != std::string::npos);
  plan.replace(plan.find(from), from.size(), "basic = [85.0, 40.0]");
  const PartPlan moved = parse_plan(plan, demo_dir + "plan-scan-moved.toml");
  // The distance by brute force over the scan's points (the test's own computation): the
  // moved nominal wall, radius 6.0045 (half the middle of 12.000 and 12.018) about the axis
  // through (85, 40) along z, z in [-56, 0].
  const PointCloud cloud = read_points(moved.scan->points);
  double nearest = std::numeric_limits<double>::infinity();
  for (Eigen::Index i = 0; i < cloud.points.cols(); ++i) {
    const Eigen::Vector3d q =
        moved.scan->placement.rotation * cloud.points.col(i) + moved.scan->placement.translation;
    const double radial = std::hypot(q.x() - 85.0, q.y() - 40.0) - 6.0045;
    const double beyond = std::max({0.0, q.z(), -56.0 - q.z()});
    nearest = std::min(nearest, std::hypot(radial, beyond));
  }
  // 0.16 mm: within the band, on P3's real wall, whose normals point elsewhere.
  REQUIRE(nearest < 0.2);
  try {
    load_part_inputs(moved);
    FAIL("no error");
  } catch (const InputError& e) {
    const std::string what = e.what();
    CHECK_THAT(what, Catch::Contains("key 'bore[P3]': bore P3 takes no point of the scan"));
    CHECK_THAT(what, Catch::Contains("band of 0.2 mm"));
    const std::string mark = "its nearest points are ";
    REQUIRE(what.find(mark) != std::string::npos);
    const double shown = std::stod(what.substr(what.find(mark) + mark.size()));
    CHECK(shown == Approx(nearest).epsilon(1e-3));
    CHECK_THAT(what, Catch::Contains("but their vectors are more than 20 degrees from its "
                                     "surface normal"));
  }
}

TEST_CASE("demo scan: cloud and placement moved together change no point taken, no figure") {
  // Results never depend on how the part sat on the machine: the scan moved by a rigid motion
  // M (points and vectors), the placement composed with M^-1 and the measurement-coordinate
  // material side turned by M, every feature takes the same rows and every figure agrees with
  // the unmoved scan's to 1e-9 mm (rigid-motion invariance, docs/evaluation.md).
  const PartPlan plan = read_plan(demo_dir + "plan-scan.toml");
  const PointCloud cloud = read_points(plan.scan->points);
  const Eigen::Matrix3d R =
      Eigen::AngleAxisd(2.1, Eigen::Vector3d(1.0, 2.0, -0.5).normalized()).toRotationMatrix();
  const Eigen::Vector3d t(-1500.25, 700.5, 2300.125);
  PointCloud moved = cloud;
  moved.points = (R * cloud.points).colwise() + t;
  moved.vectors = R * cloud.vectors;
  PartPlan moved_plan = plan;
  RigidPlacement& p = moved_plan.scan->placement;
  p.rotation = plan.scan->placement.rotation * R.transpose();
  p.translation = plan.scan->placement.translation - p.rotation * t;
  for (PlanDatum& d : moved_plan.datums)
    if (d.material_side) d.material_side = R * *d.material_side;

  const SegmentedScan before = segment_part_scan(plan, cloud, "");
  const SegmentedScan after = segment_part_scan(moved_plan, moved, "");
  REQUIRE(before.clouds.size() == after.clouds.size());
  PartInputs inputs;
  inputs.records.push_back({"plan", moved_plan.file, "", 0, {}});
  for (std::size_t k = 0; k < after.clouds.size(); ++k) {
    INFO(before.record.features[k].role);
    CHECK(after.clouds[k].lines == before.clouds[k].lines);
    CHECK(after.record.features[k].angular_coverage_deg.value_or(-1.0) ==
          Approx(before.record.features[k].angular_coverage_deg.value_or(-1.0)).margin(1e-9));
    (k < moved_plan.datums.size() ? inputs.datums : inputs.bores).push_back(after.clouds[k]);
  }
  inputs.scan = after.record;
  const PartCheckResult by_moved = check_part(moved_plan, inputs);
  const PartCheckResult by_scan = check_part(plan);
  REQUIRE(by_moved.characteristics.size() == by_scan.characteristics.size());
  for (std::size_t i = 0; i < by_scan.characteristics.size(); ++i) {
    INFO(by_scan.characteristics[i].id);
    CHECK(by_moved.characteristics[i].value ==
          Approx(by_scan.characteristics[i].value).margin(1e-9));
    CHECK(by_moved.characteristics[i].verdict == by_scan.characteristics[i].verdict);
  }
}

TEST_CASE("demo scan: a placement off by more than the band, registered, takes every row again") {
  // The demo's rough placement spoilt by 3 mrad about a skew axis and 0.34 mm: at 150 mm
  // from the origin the bands miss by more than their 0.2 mm. Registration to the nominal datum
  // features (point-to-plane ICP: Besl & McKay 1992; Chen & Medioni 1992) must recover it:
  // every feature takes exactly the rows the generator wrote for it (the scan's `feature`
  // column), and the registered placement lies close to the generator's true one
  // (ground-truth.json: p_meas = R p_frame + T), within what the datum features' form and
  // probing noise allow.
  PartPlan plan = read_plan(demo_dir + "plan-scan.toml");
  const Eigen::Matrix3d E =
      Eigen::AngleAxisd(3e-3, Eigen::Vector3d(0.6, 0.2, 0.77).normalized()).toRotationMatrix();
  RigidPlacement& p = plan.scan->placement;
  p.rotation = E * p.rotation;
  p.translation = E * p.translation + Eigen::Vector3d(0.25, -0.2, 0.1);

  const std::map<std::string, std::vector<std::size_t>> truth = demo_scan_truth();
  const auto all_rows_taken = [&](const PartInputs& inputs) {
    for (const InputRecord& record : inputs.records)
      if (record.role != "plan" && record.point_lines != truth.at(record.role)) return false;
    return true;
  };
  bool spoilt = false;
  try {
    spoilt = !all_rows_taken(load_part_inputs(plan));
  } catch (const InputError&) {
    spoilt = true;  // a feature took nothing
  }
  CHECK(spoilt);

  plan.scan->register_placement = true;
  const PartInputs inputs = load_part_inputs(plan);
  CHECK(all_rows_taken(inputs));
  REQUIRE(inputs.scan->registration);
  const RegistrationResult& r = *inputs.scan->registration;
  CHECK(r.converged);
  CHECK(r.free_directions == 0);
  // The generator's placement (ground-truth.json "placement") inverted: frame = R^T (meas - T).
  std::ifstream truth_file(demo_dir + "ground-truth.json");
  const nlohmann::json g = nlohmann::json::parse(truth_file);
  Eigen::Matrix3d R;
  Eigen::Vector3d T;
  for (int i = 0; i < 3; ++i) {
    T[i] = g["placement"]["translation"][i].get<double>();
    for (int j = 0; j < 3; ++j) R(i, j) = g["placement"]["rotation"][i][j].get<double>();
  }
  const Eigen::Matrix3d off = r.placement.rotation * R;  // identity when exact
  const double angle = Eigen::AngleAxisd(off).angle();
  // A point of the part (the middle of the block, 30 mm deep) mapped both ways.
  const Eigen::Vector3d middle(60.0, 25.0, -30.0);
  const Eigen::Vector3d back = r.placement.rotation * (R * middle + T) + r.placement.translation;
  INFO("angle " << angle << " rad, offset " << (back - middle).norm() << " mm");
  // The registration fits datum A by least squares; face A is crowned, and its least-squares
  // plane is tilted from the true (tangent) plane by the ground truth's
  // least_squares_plane_tilt_rad: the registered rotation differs from the true one by that
  // tilt, to the probing noise (2 urad). The crown and the lobes of B and C are micrometres:
  // a point of the part moves by less than 5 um.
  const double ls_tilt = g["datums"]["A"]["least_squares_plane_tilt_rad"].get<double>();
  CHECK(angle == Approx(ls_tilt).margin(2e-6));
  CHECK((back - middle).norm() < 0.005);
}

namespace {

/// A generated part (the test's own construction, in the part's nominal frame): face A (z = 0,
/// a 2 um crown below it) over [-30, 110] x [-60, 70] without its holes; bore B (20 mm, lobed 2
/// um, z in [-28, -2]) at the origin; bore P1 (10 mm) at (40, 30), its axis tilted by 0.1 mrad
/// and off by 3 um; datum C either a side face x = 110 (a plane, outward normal +x) or a
/// keyway 6.02 mm wide from B toward -y (a slot, faces at x = +-3.01, y in [-53, -37]); and
/// points of faces no feature names (the block's other sides), which must be left over. The
/// cloud is moved into "machine" coordinates by a rigid motion M; the plan's placement is M^-1.
struct GeneratedPart {
  std::vector<std::pair<std::string, Eigen::Vector3d>> rows;  // feature (or "none"), point
};

GeneratedPart generated_part(bool slot) {
  GeneratedPart part;
  const auto add = [&](const std::string& feature, const Eigen::Vector3d& p) {
    part.rows.emplace_back(feature, p);
  };
  const auto in_hole = [&](double x, double y) {
    return std::hypot(x, y) < 12.0 || std::hypot(x - 40.0, y - 30.0) < 7.0 ||
           (slot && std::abs(x) < 5.0 && y < -33.0);
  };
  for (double x = -30.0; x <= 110.0; x += 5.0)
    for (double y = -60.0; y <= 70.0; y += 5.0)
      if (!in_hole(x, y))
        add("datum A", {x, y, -2e-3 * (1.0 - std::cos(0.05 * x) * std::cos(0.07 * y))});
  for (int level = 0; level < 6; ++level)
    for (int k = 0; k < 16; ++k) {
      const double t = 2.0 * kPi * k / 16.0 + 0.1 * level, z = -2.0 - 5.2 * level;
      const double r = 10.004 + 0.002 * std::cos(3.0 * t);
      add("datum B", {r * std::cos(t), r * std::sin(t), z});
      const double z1 = -2.0 - 7.0 * level;
      const double r1 = 5.006 + 0.001 * std::sin(2.0 * t);
      add("bore P1", {40.003 + 1e-4 * z1 + r1 * std::cos(t), 30.0 + r1 * std::sin(t), z1});
    }
  for (int i = 0; i < 9; ++i)
    for (int j = 0; j < 4; ++j) {
      const double u = slot ? 37.0 + 2.0 * i : -20.0 + 10.0 * i, z = -2.0 - (slot ? 2.0 : 5.0) * j;
      const double form = 1.5e-3 * std::sin(0.7 * i + 1.3 * j);
      if (slot) {
        add("datum C", {3.01 + form, -u, z});
        add("datum C", {-3.01 - form, -u - 0.5, z});
      } else {
        add("datum C", {110.0 + form, u, z});
      }
    }
  for (int i = 0; i < 20; ++i)  // the other sides of the block: nobody's points
    add("none", {-30.0 + 7.0 * i, 75.0, -3.0 - 2.0 * (i % 5)});
  // A fixed shuffle (the test's own), so that each feature's rows are spread over the cloud.
  std::mt19937 random(20261203);
  for (std::size_t i = part.rows.size() - 1; i > 0; --i)
    std::swap(part.rows[i], part.rows[random() % (i + 1)]);
  return part;
}

RigidPlacement machine_motion() {
  RigidPlacement m;
  m.rotation = Eigen::AngleAxisd(0.8, Eigen::Vector3d(0.2, -0.9, 0.4).normalized()).toRotationMatrix();
  m.translation = Eigen::Vector3d(312.5, -140.25, 88.0);
  return m;
}

std::string point_row(const Eigen::Vector3d& p) {
  char text[96];
  std::snprintf(text, sizeof text, "%.9f,%.9f,%.9f\n", p.x(), p.y(), p.z());
  return text;
}

/// Writes the part as per-feature files and as one scan (the very same text for each point)
/// with both plans; returns {per-feature plan, scan plan}.
std::pair<std::filesystem::path, std::filesystem::path> write_generated_part(
    const std::string& name, bool slot) {
  const std::filesystem::path dir = std::filesystem::temp_directory_path() / name;
  std::filesystem::create_directories(dir);
  const GeneratedPart part = generated_part(slot);
  const RigidPlacement m = machine_motion();
  std::map<std::string, std::string> files;
  std::string scan = "x,y,z\n";
  for (const auto& [feature, p] : part.rows) {
    const std::string row = point_row(m.rotation * p + m.translation);
    scan += row;
    files[feature] += row;
  }
  const auto write = [&](const std::string& file, const std::string& text) {
    std::ofstream(dir / file) << text;
  };
  write("scan.csv", scan);
  for (const auto& [feature, text] : files)
    if (feature != "none") write(feature.substr(feature.find(' ') + 1) + ".csv", "x,y,z\n" + text);
  // The placement maps the machine's coordinates into the part's: M^-1.
  const Eigen::Matrix3d R = m.rotation.transpose();
  const Eigen::Vector3d t = -(R * m.translation);
  std::string placement = "placement = [\n";
  char text[200];
  for (int i = 0; i < 3; ++i) {
    std::snprintf(text, sizeof text, "  [%.17g, %.17g, %.17g, %.17g],\n", R(i, 0), R(i, 1),
                  R(i, 2), t[i]);
    placement += text;
  }
  placement += "  [0, 0, 0, 1]]\n";
  const std::string c_files =
      slot ? "[datum.C]\nfeature = \"slot\"\nbasic = [0, -45]\npoints = \"C.csv\"\n"
           : "[datum.C]\nfeature = \"plane\"\noutward_normal = [1, 0]\npoints = \"C.csv\"\n";
  const std::string c_scan =
      slot ? "[datum.C]\nfeature = \"slot\"\nbasic = [0, -45]\nnominal_size = 6.02\n"
             "span = [35, 55]\ndepth = { top = 0, bottom = -8 }\n"
           : "[datum.C]\nfeature = \"plane\"\noutward_normal = [1, 0]\noffset = 110\n"
             "span = [-25, 65]\ndepth = { top = -1, bottom = -19 }\n";
  const std::string bore =
      "[[bore]]\nid = \"P1\"\nbasic = [40, 30]\nsize = { lower = 10, upper = 10.02 }\n"
      "position = { tolerance = 0.05, modifier = \"MMC\", datums = \"A|B|C\" }\n"
      "perpendicularity = { tolerance = 0.02 }\n";
  write("plan.toml", plan_head() +
                         "[datum.A]\nfeature = \"plane\"\npoints = \"A.csv\"\n"
                         "[datum.B]\nfeature = \"bore\"\npoints = \"B.csv\"\n" +
                         c_files + bore + "points = \"P1.csv\"\ndepth = { top = 0, bottom = -40 }\n");
  write("plan-scan.toml",
        plan_head() + "[scan]\npoints = \"scan.csv\"\nband = 0.2\n" + placement +
            "[datum.A]\nfeature = \"plane\"\nextent = { x = [-32, 112], y = [-62, 72] }\n"
            "[datum.B]\nfeature = \"bore\"\nnominal_size = 20\ndepth = { top = 0, bottom = -30 }\n" +
            c_scan + bore + "nominal_size = 10\ndepth = { top = 0, bottom = -40 }\n");
  return {dir / "plan.toml", dir / "plan-scan.toml"};
}

/// Same points, same answer: the scan's features hold exactly the files' points, and every
/// figure agrees to 1e-9 mm.
void same_as_files(const std::filesystem::path& files_plan, const std::filesystem::path& scan_plan) {
  const PartPlan by_files_plan = read_plan(files_plan);
  const PartPlan by_scan_plan = read_plan(scan_plan);
  const PartInputs files = load_part_inputs(by_files_plan);
  const PartInputs scan = load_part_inputs(by_scan_plan);
  REQUIRE(scan.scan);
  CHECK(scan.scan->unassigned == 20);
  for (std::size_t k = 0; k < files.datums.size(); ++k) {
    INFO("datum " << by_files_plan.datums[k].label);
    CHECK(scan.datums[k].points == files.datums[k].points);
  }
  CHECK(scan.bores[0].points == files.bores[0].points);
  const PartCheckResult a = check_part(by_files_plan, files);
  const PartCheckResult b = check_part(by_scan_plan, scan);
  REQUIRE(a.characteristics.size() == b.characteristics.size());
  REQUIRE(!a.characteristics.empty());
  for (std::size_t i = 0; i < a.characteristics.size(); ++i) {
    INFO(a.characteristics[i].id);
    CHECK(b.characteristics[i].id == a.characteristics[i].id);
    CHECK(b.characteristics[i].value == Approx(a.characteristics[i].value).margin(1e-9));
    CHECK(b.characteristics[i].allowed == Approx(a.characteristics[i].allowed).margin(1e-9));
    CHECK(b.characteristics[i].verdict == a.characteristics[i].verdict);
  }
}

}  // namespace

TEST_CASE("generated part: a plane C from the scan gives the per-feature files' points and figures") {
  const auto [files, scan] = write_generated_part("cylzone-scanreg-plane-c", false);
  same_as_files(files, scan);
  const PartInputs inputs = load_part_inputs(read_plan(scan));
  CHECK(inputs.scan->features[2].role == "datum C");
  CHECK(inputs.scan->features[2].points == 36);
  CHECK(inputs.scan->features[2].face_points.empty());
}

TEST_CASE("generated part: a slot C from the scan gives each face its points, the datum both") {
  const auto [files, scan] = write_generated_part("cylzone-scanreg-slot-c", true);
  same_as_files(files, scan);
  const PartInputs inputs = load_part_inputs(read_plan(scan));
  const FeatureSegmentation& c = inputs.scan->features[2];
  CHECK(c.role == "datum C");
  CHECK(c.points == 72);
  CHECK(c.face_points == std::vector<std::size_t>{36, 36});
  // The datum's cloud is its two faces' points in the cloud's order, as a file of them is.
  const InputRecord& record = inputs.records[3];
  CHECK(record.role == "datum C");
  CHECK(std::is_sorted(record.point_lines.begin(), record.point_lines.end()));
}

namespace {

/// The plan-scan.toml demo with no placement (placement = "find").
PartPlan demo_without_placement(const std::string& replace_from = {},
                                const std::string& replace_to = {}) {
  std::ifstream in(demo_dir + "plan-scan.toml");
  std::stringstream text;
  text << in.rdbuf();
  std::string plan = text.str();
  const std::size_t from = plan.find("placement = [");
  const std::size_t to = plan.find("\n]\n", from);
  REQUIRE(from != std::string::npos);
  REQUIRE(to != std::string::npos);
  plan.replace(from, to + 3 - from, "placement = \"find\"\n");
  if (!replace_from.empty()) {
    REQUIRE(plan.find(replace_from) != std::string::npos);
    plan.replace(plan.find(replace_from), replace_from.size(), replace_to);
  }
  return parse_plan(plan, demo_dir + "plan-scan-find.toml");
}

std::string load_problem(const PartPlan& plan, const PointCloud& cloud) {
  try {
    segment_part_scan(plan, cloud, "");
  } catch (const InputError& e) {
    return e.what();
  }
  return "no error";
}

}  // namespace

TEST_CASE("demo scan: no placement, moved anywhere: the same points per feature, the same figures") {
  // Results never depend on how the part sat on the machine: the demo scan moved by random
  // rigid motions (axes anywhere, angles up to 180 degrees, metres away) and placed by
  // find_placement from the nominal datums alone must give every feature exactly the rows the
  // generator wrote for it (the scan's `feature` column) and every figure of plan-scan.toml
  // (its given placement) to 1e-9 mm.
  const PartPlan given = read_plan(demo_dir + "plan-scan.toml");
  const PartPlan plan = demo_without_placement();
  REQUIRE(plan.scan->find_placement);
  const PointCloud cloud = read_points(plan.scan->points);
  const std::map<std::string, std::vector<std::size_t>> truth = demo_scan_truth();
  const PartCheckResult by_given = check_part(given);
  std::mt19937 random(7031);
  std::uniform_real_distribution<double> unit(-1.0, 1.0);
  std::vector<RigidPlacement> found;
  for (int trial = 0; trial < 4; ++trial) {
    const Eigen::Vector3d axis = Eigen::Vector3d(unit(random), unit(random), unit(random)).normalized();
    const double angle = kPi * (0.5 + 0.5 * unit(random));
    const Eigen::Matrix3d R = Eigen::AngleAxisd(angle, axis).toRotationMatrix();
    const Eigen::Vector3d t(3000.0 * unit(random), 3000.0 * unit(random), 3000.0 * unit(random));
    INFO("trial " << trial << ": " << angle << " rad about " << axis.transpose());
    PointCloud moved = cloud;
    moved.points = (R * cloud.points).colwise() + t;
    moved.vectors = R * cloud.vectors;
    PartPlan moved_plan = plan;
    for (PlanDatum& d : moved_plan.datums)
      if (d.material_side) d.material_side = R * *d.material_side;
    const SegmentedScan scan = segment_part_scan(moved_plan, moved, "");
    REQUIRE(scan.record.search);
    PartInputs inputs;
    inputs.records.push_back({"plan", moved_plan.file, "", 0, {}});
    for (std::size_t k = 0; k < scan.clouds.size(); ++k) {
      INFO(scan.record.features[k].role);
      CHECK(scan.clouds[k].lines == truth.at(scan.record.features[k].role));
      (k < moved_plan.datums.size() ? inputs.datums : inputs.bores).push_back(scan.clouds[k]);
    }
    inputs.scan = scan.record;
    const PartCheckResult by_found = check_part(moved_plan, inputs);
    REQUIRE(by_found.characteristics.size() == by_given.characteristics.size());
    for (std::size_t i = 0; i < by_given.characteristics.size(); ++i) {
      INFO(by_given.characteristics[i].id);
      CHECK(by_found.characteristics[i].value ==
            Approx(by_given.characteristics[i].value).margin(1e-9));
      CHECK(by_found.characteristics[i].verdict == by_given.characteristics[i].verdict);
    }
    // The placement found, taken back through the motion: the same for every motion.
    RigidPlacement back = scan.record.placement;
    back.translation += back.rotation * t;
    back.rotation = back.rotation * R;
    found.push_back(back);
  }
  for (const RigidPlacement& p : found) {
    const Eigen::Vector3d corner(150.0, 80.0, -64.0);
    CHECK(((p.rotation * corner + p.translation) -
           (found[0].rotation * corner + found[0].translation)).norm() < 1e-6);
  }
  // The order of the points decides nothing: the cloud reversed gives the same placement.
  PointCloud reversed = cloud;
  reversed.points = cloud.points.rowwise().reverse();
  reversed.vectors = cloud.vectors.rowwise().reverse();
  reversed.lines.assign(cloud.lines.rbegin(), cloud.lines.rend());
  const SegmentedScan forward = segment_part_scan(plan, cloud, "");
  const SegmentedScan backward = segment_part_scan(plan, reversed, "");
  CHECK((forward.record.placement.rotation - backward.record.placement.rotation).norm() < 1e-12);
  CHECK((forward.record.placement.translation - backward.record.placement.translation).norm() <
        1e-9);
}

TEST_CASE("no placement: symmetric nominal datums are refused, naming the two placements") {
  // A keyway C whose nominal faces reach across B's axis ([-55, 55]) and a face A whose extent
  // is symmetric about B: a half turn about B's axis maps the nominal datums onto themselves,
  // so two placements fit the scan equally and put the part differently. Nothing may choose.
  const auto [files, scan_plan] = write_generated_part("cylzone-scanreg-symmetric", true);
  const std::filesystem::path dir = files.parent_path();
  const std::string datums =
      "[datum.A]\nfeature = \"plane\"\nextent = { x = [-120, 120], y = [-70, 70] }\n"
      "[datum.B]\nfeature = \"bore\"\nnominal_size = 20\ndepth = { top = 0, bottom = -30 }\n"
      "[datum.C]\nfeature = \"slot\"\nbasic = [0, -45]\nnominal_size = 6.02\n";
  const std::string bore =
      "[[bore]]\nid = \"P1\"\nbasic = [40, 30]\nnominal_size = 10\n"
      "depth = { top = 0, bottom = -40 }\nposition = { tolerance = 0.05, datums = \"A|B|C\" }\n";
  std::ofstream(dir / "plan-symmetric.toml")
      << plan_head() << "[scan]\npoints = \"scan.csv\"\nband = 0.2\n" << datums
      << "span = [-55, 55]\ndepth = { top = 0, bottom = -8 }\n" << bore;
  std::ofstream(dir / "plan-one-sided.toml")
      << plan_head() << "[scan]\npoints = \"scan.csv\"\nband = 0.2\n" << datums
      << "span = [35, 55]\ndepth = { top = 0, bottom = -8 }\n" << bore;
  try {
    load_part_inputs(read_plan(dir / "plan-symmetric.toml"));
    FAIL("no error");
  } catch (const InputError& e) {
    const std::string what = e.what();
    CHECK_THAT(what, Catch::Contains("key 'scan.placement'"));
    CHECK_THAT(what, Catch::Contains("the nominal datum features are symmetric: two placements "
                                     "fit equally"));
    CHECK_THAT(what, Catch::Contains("give a rough placement"));
  }
  // The keyway on one side of B only: one placement, the same points as the plan with the
  // placement given (the generator's M^-1).
  const PartInputs found = load_part_inputs(read_plan(dir / "plan-one-sided.toml"));
  const PartInputs given = load_part_inputs(read_plan(scan_plan));
  REQUIRE(found.records.size() == given.records.size());
  for (std::size_t k = 1; k < found.records.size(); ++k) {
    INFO(found.records[k].role);
    CHECK(found.records[k].point_lines == given.records[k].point_lines);
  }
}

TEST_CASE("no placement: a scan that fits no placement is an error naming the best rms") {
  const PointCloud cloud = read_points(demo_dir + "scan/manifold-scan.csv");
  // Datum C moved to where the part has no hole, and datum B given a size no bore has.
  for (const auto& [from, to] :
       {std::pair<std::string, std::string>{"basic = [120.0, 0.0]", "basic = [60.0, -30.0]"},
        {"size = { lower = 20.000, upper = 20.021 }", "size = { lower = 16.000, upper = 16.021 }"}}) {
    INFO(to);
    const std::string what = load_problem(demo_without_placement(from, to), cloud);
    CHECK_THAT(what, Catch::Contains("key 'scan.placement': the scan cannot be placed by the "
                                     "nominal datums alone: no placement fits: the best of"));
    CHECK_THAT(what, Catch::Contains("tried (rms "));
    CHECK_THAT(what, Catch::Contains("give a rough placement"));
  }
  // Finding a placement needs A, B and C from the scan; an unknown word is refused.
  const std::string a = "[datum.A]\nfeature = \"plane\"\nextent = { x = [-10, 90], y = [-5, 50] }\n";
  const std::string b =
      "[datum.B]\nfeature = \"bore\"\nnominal_size = 20\ndepth = { top = 0, bottom = -30 }\n";
  const std::string bore =
      "[[bore]]\nid = \"P1\"\nbasic = [20, 20]\nnominal_size = 10\n"
      "depth = { top = 0, bottom = -30 }\nposition = { tolerance = 0.03, datums = \"A|B\" }\n";
  CHECK_THAT(problem_of(plan_head() + "[scan]\npoints = \"c.csv\"\nband = 0.2\n" + a + b + bore),
             Catch::Contains("key 'scan.placement': without a placement (or with placement = "
                             "\"find\") the scan is placed by the nominal datum features A, B "
                             "and C, and datum C is not defined"));
  CHECK_THAT(problem_of(plan_head() + "[scan]\npoints = \"c.csv\"\nband = 0.2\n"
                                      "placement = \"guess\"\n" + a + b + bore),
             Catch::Contains("key 'scan.placement': unknown placement \"guess\""));
}

TEST_CASE("find_placement: too few points, or no datum C, is refused with a status, not a crash") {
  // Three datum surfaces: A, B (radius 10, z in [-30, 0]), C (radius 4 at x = 120).
  NominalSurface a;
  a.kind = NominalSurface::Kind::plane;
  a.name = "datum A";
  a.u_low = -20.0;
  a.u_high = 140.0;
  a.v_low = -20.0;
  a.v_high = 40.0;
  NominalSurface b;
  b.name = "datum B";
  b.radius = 10.0;
  b.low = -30.0;
  NominalSurface c = b;
  c.name = "datum C";
  c.origin = Eigen::Vector3d(120.0, 0.0, 0.0);
  c.radius = 4.0;
  PointCloud few;
  few.points = Eigen::Matrix3Xd::Random(3, 3);
  PlacementSearchOptions options;
  options.segment.band = 0.1;
  const PlacementSearchResult none = find_placement(few, {a, b, c}, options);
  CHECK(none.status == PlacementSearchResult::Status::no_match);
  CHECK_THAT(none.message, Catch::Contains("no placement to try"));
  const PlacementSearchResult free = find_placement(few, {a, b}, options);
  CHECK(free.status == PlacementSearchResult::Status::underdetermined);
  CHECK_THAT(free.message, Catch::Contains("leave the rotation about B's axis free"));
  CHECK_THROWS_AS(find_placement(few, {b, a, c}, options), std::invalid_argument);
}

TEST_CASE("find_placement: a dense scan without vectors is placed by estimated normals") {
  // The test's own scanner-like cloud (uniform random points, 1 um noise): face A (z = 0,
  // x in [-20, 140], y in [-20, 75], clear of the holes), bore B (20 mm, 30 deep) at the origin,
  // bore C (8 mm, 20 deep) at (120, 0), two bores of 10 and 12 mm, a side face; no vectors, in
  // a scanner pose M. The placement found must be M^-1 to the noise, and segment the cloud as
  // M^-1 does (the generator's truth, PCA normals: Hoppe et al. 1992).
  struct Hole { double x, y, d, depth; };
  const std::vector<Hole> holes = {{0, 0, 20, 30}, {120, 0, 8, 20}, {25, 25, 10, 60}, {85, 55, 12, 56}};
  std::mt19937 random(424242);
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  std::normal_distribution<double> noise(0.0, 0.001);
  std::vector<Eigen::Vector3d> points;
  for (int i = 0; i < 40000; ++i) {
    const double pick = unit(random);
    if (pick < 0.35) {
      const Eigen::Vector3d p(-20 + 160 * unit(random), -20 + 95 * unit(random), noise(random));
      bool clear = true;
      for (const Hole& h : holes) clear = clear && std::hypot(p.x() - h.x, p.y() - h.y) > h.d / 2 + 1;
      if (clear) points.push_back(p);
    } else if (pick < 0.95) {
      const Hole& h = holes[static_cast<std::size_t>(4 * unit(random)) % 4];
      const double phi = 2 * kPi * unit(random), r = h.d / 2 + noise(random);
      points.emplace_back(h.x + r * std::cos(phi), h.y + r * std::sin(phi),
                          -1.0 - (h.depth - 2.0) * unit(random));
    } else {
      points.emplace_back(-30.0, -30 + 115 * unit(random), -3 - 60 * unit(random));
    }
  }
  RigidPlacement truth;  // scanner -> part; the cloud is made in its inverse (in_scanner)
  truth.rotation = Eigen::AngleAxisd(2.4, Eigen::Vector3d(-0.3, 0.8, 0.5).normalized()).toRotationMatrix();
  truth.translation = Eigen::Vector3d(-812.0, 1430.5, 96.25);
  const PointCloud cloud = in_scanner(points, {}, truth);
  NominalSurface a;
  a.kind = NominalSurface::Kind::plane;
  a.name = "datum A";
  a.u_low = -20.0;
  a.u_high = 140.0;
  a.v_low = -20.0;
  a.v_high = 75.0;
  std::vector<NominalSurface> datums = {a};
  for (std::size_t k = 0; k < 2; ++k) {
    NominalSurface s;
    s.name = k == 0 ? "datum B" : "datum C";
    s.origin = Eigen::Vector3d(holes[k].x, holes[k].y, 0.0);
    s.radius = holes[k].d / 2;
    s.low = -holes[k].depth;
    datums.push_back(s);
  }
  PlacementSearchOptions options;
  options.segment.band = 0.05;
  const PlacementSearchResult found = find_placement(cloud, datums, options);
  INFO(found.message);
  REQUIRE(found.status == PlacementSearchResult::Status::found);
  double most = 0.0;
  for (const Eigen::Vector3d& p : points)
    most = std::max(most, (found.registration.placement.rotation *
                               (truth.rotation.transpose() * (p - truth.translation)) +
                           found.registration.placement.translation - p)
                              .norm());
  CHECK(most < 0.005);
  const SegmentationResult by_found =
      segment_scan(cloud, found.registration.placement, datums, options.segment);
  const SegmentationResult by_truth = segment_scan(cloud, truth, datums, options.segment);
  for (std::size_t k = 0; k < datums.size(); ++k) {
    INFO(datums[k].name);
    CHECK(by_found.surfaces[k].indices == by_truth.surfaces[k].indices);
  }
}
