// The prepare stage (prepare.hpp) and the neighbour index (neighbour_index.hpp).
//
// References outside the code under test:
//  * reference sets with known form (the null-space construction of ISO 10360-6 test sets,
//    Forbes & Minh, Int. J. Metrol. Qual. Eng. 3(3), 2012; tests/support/reference_data.hpp)
//    with ONE point displaced by a known amount: the truth is the index chosen here;
//  * the nearest neighbours by exhaustive search over all pairs, ordered by (distance, index)
//    as the index documents (brute force; common practice);
//  * the screen's definition applied to the least-squares element's residuals, as
//    stray_points.hpp states it (the same criterion, fed by prepare's own element).

#include <catch2/catch.hpp>

#include <Eigen/Geometry>
#include <algorithm>
#include <cstdint>
#include <numeric>
#include <random>
#include <stdexcept>
#include <vector>

#include "cylzone/fit/fit_cylinder.hpp"
#include "cylzone/prepare/neighbour_index.hpp"
#include "cylzone/prepare/prepare.hpp"
#include "cylzone/prepare/stray_points.hpp"
#include "reference_data.hpp"

using namespace cylzone;
using cylzone::testing::make_lobed_cylinder;
using cylzone::testing::make_plane_reference;
using cylzone::testing::ReferenceSet;

namespace {

constexpr double um = 1e-3;

Axis tilted_axis() {
  // Off the origin, tilted: frame and sign mistakes show.
  return Axis{Eigen::Vector3d(41.0, -17.5, 3.0),
              Eigen::Vector3d(0.012, -0.007, 1.0).normalized()};
}

PointCloud cloud_of(const Eigen::Matrix3Xd& points) {
  PointCloud c;
  c.points = points;
  return c;
}

}  // namespace

TEST_CASE("prepare_feature flags the one point pushed off a lobed bore and keeps every point",
          "[prepare]") {
  ReferenceSet set = make_lobed_cylinder(tilted_axis(), 6.005, -1.0, -49.0, 13, 48, 2.0 * um, 11.0);
  const Eigen::Index pushed = 301;
  // 20 um toward the axis (inward): a chip or a trigger error.
  set.points.col(pushed) -= 20.0 * um * set.normals.col(pushed);
  PrepareOptions options;
  options.fit.axis_hint = tilted_axis().direction;
  const PreparedFeature prepared = prepare_feature(FeatureKind::bore, cloud_of(set.points), options);

  // Truth by construction: only the pushed point.
  REQUIRE(prepared.record.stray_points.points.size() == 1);
  CHECK(prepared.record.stray_points.points.front().index == static_cast<std::size_t>(pushed));
  CHECK(prepared.record.stray_points.points.front().excess < -15.0 * um);
  CHECK(prepared.record.stray_points.screened == static_cast<std::size_t>(set.points.cols()));
  // The screen reports; it removes and moves nothing.
  CHECK(prepared.cloud.points == set.points);

  // The same criterion on the least-squares cylinder's residuals (stray_points.hpp).
  const CylinderFit ls = fit_cylinder_least_squares(set.points, options.fit);
  const StrayPointReport direct = find_stray_points(set.points, ls.residuals.values);
  REQUIRE(direct.points.size() == 1);
  CHECK(direct.points.front().excess == prepared.record.stray_points.points.front().excess);
}

TEST_CASE("prepare_feature screens a plane along its outward direction", "[prepare]") {
  const Eigen::Vector3d normal = Eigen::Vector3d(0.05, -0.03, 1.0).normalized();
  ReferenceSet set = make_plane_reference(Eigen::Vector3d(12.0, 7.0, -3.0), normal, 60.0, 40.0,
                                          400, 1.0 * um, 7);
  const Eigen::Index proud = 123;
  set.points.col(proud) += 25.0 * um * normal;  // a chip standing proud of the face
  PrepareOptions options;
  options.outward = normal;
  const PreparedFeature out = prepare_feature(FeatureKind::plane, cloud_of(set.points), options);
  REQUIRE(out.record.stray_points.points.size() == 1);
  CHECK(out.record.stray_points.points.front().index == static_cast<std::size_t>(proud));
  CHECK(out.record.stray_points.points.front().residual > 0.0);  // proud: positive outward

  options.outward = -normal;  // the other side: the same point, now below the surface
  const PreparedFeature in = prepare_feature(FeatureKind::plane, cloud_of(set.points), options);
  REQUIRE(in.record.stray_points.points.size() == 1);
  CHECK(in.record.stray_points.points.front().residual ==
        -out.record.stray_points.points.front().residual);
}

TEST_CASE("prepare_feature: the screen switched off, too few points, and what it needs",
          "[prepare]") {
  ReferenceSet set = make_lobed_cylinder(tilted_axis(), 6.005, -1.0, -49.0, 13, 48, 2.0 * um, 11.0);
  set.points.col(17) -= 20.0 * um * set.normals.col(17);
  PrepareOptions off;
  off.stray_screen = false;
  const PreparedFeature skipped = prepare_feature(FeatureKind::bore, cloud_of(set.points), off);
  CHECK(skipped.record.stray_points.points.empty());
  CHECK(skipped.record.stray_points.screened == 0);
  CHECK(skipped.cloud.points == set.points);

  PrepareOptions few;
  const PreparedFeature small =
      prepare_feature(FeatureKind::bore, cloud_of(set.points.leftCols(8)), few);  // 8 <= k
  CHECK(small.record.stray_points.screened == 0);

  PrepareOptions plane;  // no outward direction
  CHECK_THROWS_AS(prepare_feature(FeatureKind::plane, cloud_of(set.points), plane),
                  std::invalid_argument);
  CHECK_THROWS_AS(prepare_feature(FeatureKind::slot, cloud_of(set.points), plane),
                  std::invalid_argument);
  PrepareOptions given;
  given.residuals = Eigen::VectorXd::Zero(set.points.cols() - 1);
  CHECK_THROWS_AS(prepare_feature(FeatureKind::slot, cloud_of(set.points), given),
                  std::invalid_argument);
  // The caller's residuals are used as given: one spike, flagged by index.
  given.residuals = Eigen::VectorXd::Zero(set.points.cols());
  given.residuals(40) = 0.05;
  const PreparedFeature slot = prepare_feature(FeatureKind::slot, cloud_of(set.points), given);
  REQUIRE(slot.record.stray_points.points.size() == 1);
  CHECK(slot.record.stray_points.points.front().index == 40);
}

TEST_CASE("NeighbourIndex gives the exhaustive search's neighbours, ties to the lower index",
          "[prepare][neighbours]") {
  std::mt19937_64 rng(2024);
  std::uniform_real_distribution<double> unit(-1.0, 1.0);
  // Random points plus a grid with many equal distances (ties).
  Eigen::Matrix3Xd points(3, 300);
  for (Eigen::Index i = 0; i < 200; ++i)
    points.col(i) = Eigen::Vector3d(5.0 + unit(rng), -2.0 + unit(rng), 30.0 + unit(rng));
  for (Eigen::Index i = 0; i < 100; ++i)
    points.col(200 + i) = Eigen::Vector3d(10.0 + i % 10, 3.0 + (i / 10) % 10, 30.0);
  points.col(299) = points.col(250);  // a coincident pair
  const NeighbourIndex index(points);
  CHECK(index.size() == 300);
  std::vector<std::uint32_t> order = index.locality_order();
  std::sort(order.begin(), order.end());
  for (std::size_t i = 0; i < order.size(); ++i) REQUIRE(order[i] == i);  // a permutation

  const std::size_t k = 8;
  NeighbourIndex::Query query(k);
  for (Eigen::Index i = 0; i < points.cols(); ++i) {
    std::vector<std::uint32_t> all;
    for (Eigen::Index j = 0; j < points.cols(); ++j)
      if (j != i) all.push_back(static_cast<std::uint32_t>(j));
    const auto d2 = [&](std::uint32_t j) { return (points.col(j) - points.col(i)).squaredNorm(); };
    std::sort(all.begin(), all.end(), [&](std::uint32_t a, std::uint32_t b) {
      return d2(a) < d2(b) || (d2(a) == d2(b) && a < b);
    });
    all.resize(k);
    INFO("point " << i);
    REQUIRE(query.of_point(index, static_cast<std::size_t>(i)) == all);
  }
  CHECK_THROWS_AS(NeighbourIndex::Query(0), std::invalid_argument);
}

TEST_CASE("the screen gives the same report for 1 and 4 threads", "[prepare][threads]") {
  // 30 000 points: several fixed chunks, so 4 threads really split the work.
  ReferenceSet set = make_lobed_cylinder(tilted_axis(), 6.005, -1.0, -49.0, 250, 120, 2.0 * um, 11.0);
  set.points.col(12345) += 30.0 * um * set.normals.col(12345);
  const CylinderFit ls = fit_cylinder_least_squares(set.points);
  StrayPointOptions one, four;
  one.threads = 1;
  four.threads = 4;
  const StrayPointReport a = find_stray_points(set.points, ls.residuals.values, one);
  const StrayPointReport b = find_stray_points(set.points, ls.residuals.values, four);
  CHECK(a.robust_scale == b.robust_scale);
  REQUIRE(a.points.size() == b.points.size());
  REQUIRE(!a.points.empty());
  CHECK(a.points.front().index == 12345);
  for (std::size_t i = 0; i < a.points.size(); ++i) {
    CHECK(a.points[i].index == b.points[i].index);
    CHECK(a.points[i].excess == b.points[i].excess);
  }
}

TEST_CASE("the least-squares cylinder is bit-identical for 1 and 3 threads", "[prepare][threads]") {
  // Above the fit's threaded threshold (200 000 points), so its passes are really split.
  const ReferenceSet set = make_lobed_cylinder(tilted_axis(), 6.005, -1.0, -49.0, 500, 420, 2.0 * um, 11.0);
  FitOptions one, three;
  one.threads = 1;
  three.threads = 3;
  const CylinderFit a = fit_cylinder_least_squares(set.points, one);
  const CylinderFit b = fit_cylinder_least_squares(set.points, three);
  CHECK(a.axis.point == b.axis.point);
  CHECK(a.axis.direction == b.axis.direction);
  CHECK(a.radius == b.radius);
  CHECK(a.residuals.values == b.residuals.values);
  CHECK(a.angular_coverage_deg == b.angular_coverage_deg);
  // And it is the reference cylinder (null-space construction: the least-squares solution).
  CHECK(testing::angle_between_lines(a.axis.direction, tilted_axis().direction) < 1e-9);
}

TEST_CASE("prepare_feature taking the cloud over gives the copy's result bit for bit",
          "[prepare]") {
  // Reference: the const& form on the same data (the definition of the overload). Ball centres
  // with vectors, both outlier stages and the screen, so every step that reads the cloud runs.
  ReferenceSet set = make_lobed_cylinder(tilted_axis(), 6.005, -1.0, -49.0, 13, 48, 2.0 * um, 11.0);
  set.points.col(77) -= 40.0 * um * set.normals.col(77);
  PointCloud cloud = cloud_of(set.points - 0.5 * set.normals);  // centres of a 1 mm ball
  cloud.vectors = -set.normals;  // into the hole's axis: the approach sense, as files give it
  cloud.lines.resize(cloud.size());
  std::iota(cloud.lines.begin(), cloud.lines.end(), std::size_t{3});
  PrepareOptions options;
  options.fit.axis_hint = tilted_axis().direction;
  options.probe_tip.emplace();  // built in place: copying a local one trips g++ 12's
  options.probe_tip->tip_diameter = 1.0;  // -Wmaybe-uninitialized on its empty optionals
  options.outliers.neighbour_filter = true;
  options.outliers.residual_rejection = true;
  const PreparedFeature copied = prepare_feature(FeatureKind::bore, cloud, options);
  const PreparedFeature taken = prepare_feature(FeatureKind::bore, PointCloud(cloud), options);
  REQUIRE(copied.cloud.size() > 0);
  CHECK(taken.cloud.points == copied.cloud.points);
  CHECK(taken.cloud.vectors == copied.cloud.vectors);
  CHECK(taken.cloud.lines == copied.cloud.lines);
  CHECK(taken.record.kept == copied.record.kept);
  CHECK(taken.record.outliers.removed_count() == copied.record.outliers.removed_count());
  REQUIRE(taken.record.stray_points.points.size() == copied.record.stray_points.points.size());
  for (std::size_t k = 0; k < taken.record.stray_points.points.size(); ++k)
    CHECK(taken.record.stray_points.points[k].excess ==
          copied.record.stray_points.points[k].excess);
  // The compensation moved the centres out to the surface (0.5 mm), so the copy is not the input.
  const auto from = static_cast<Eigen::Index>(copied.record.kept.front());
  CHECK((copied.cloud.points.col(0) - cloud.points.col(from)).norm() == Approx(0.5).margin(0.01));
}

TEST_CASE("screen_feature gives prepare_feature's stray-point report without the copy",
          "[prepare]") {
  // Reference: prepare_feature's record on the same points (the definition screen_feature
  // states), for a plane with a chip standing proud, a lobed bore with a pushed point and a
  // slot given its residuals; the screen off and too few points give the empty report.
  const Eigen::Vector3d normal = Eigen::Vector3d(0.05, -0.03, 1.0).normalized();
  ReferenceSet face = make_plane_reference(Eigen::Vector3d(12.0, 7.0, -3.0), normal, 60.0, 40.0,
                                           400, 1.0 * um, 7);
  face.points.col(123) += 25.0 * um * normal;
  ReferenceSet bore = make_lobed_cylinder(tilted_axis(), 6.005, -1.0, -49.0, 13, 48, 2.0 * um, 11.0);
  bore.points.col(301) -= 20.0 * um * bore.normals.col(301);
  PrepareOptions plane_options;
  plane_options.outward = normal;
  PrepareOptions bore_options;
  bore_options.fit.axis_hint = tilted_axis().direction;
  PrepareOptions slot_options;
  slot_options.residuals = Eigen::VectorXd::Zero(bore.points.cols());
  slot_options.residuals(40) = 0.05;
  PrepareOptions off = bore_options;
  off.stray_screen = false;
  const PointCloud few = cloud_of(bore.points.leftCols(8));
  const struct {
    FeatureKind kind;
    PointCloud cloud;
    PrepareOptions options;
  } cases[] = {{FeatureKind::plane, cloud_of(face.points), plane_options},
               {FeatureKind::bore, cloud_of(bore.points), bore_options},
               {FeatureKind::slot, cloud_of(bore.points), slot_options},
               {FeatureKind::bore, cloud_of(bore.points), off},
               {FeatureKind::bore, few, bore_options}};
  std::size_t flagged = 0;
  for (const auto& c : cases) {
    const StrayPointReport expected = prepare_feature(c.kind, c.cloud, c.options).record.stray_points;
    const StrayPointReport got = screen_feature(c.kind, c.cloud, c.options);
    CHECK(got.screened == expected.screened);
    CHECK(got.robust_scale == expected.robust_scale);
    REQUIRE(got.points.size() == expected.points.size());
    for (std::size_t k = 0; k < got.points.size(); ++k) {
      CHECK(got.points[k].index == expected.points[k].index);
      CHECK(got.points[k].residual == expected.points[k].residual);
      CHECK(got.points[k].excess == expected.points[k].excess);
    }
    flagged += got.points.size();
  }
  CHECK(flagged == 3);  // the chip, the pushed point, the slot's spike: the reports are not empty

  // What changes the points is prepare_feature's alone.
  PrepareOptions filtered = bore_options;
  filtered.outliers.neighbour_filter = true;
  CHECK_THROWS_AS(screen_feature(FeatureKind::bore, cloud_of(bore.points), filtered),
                  std::invalid_argument);
  PrepareOptions tip = bore_options;
  tip.probe_tip = ProbeTipOptions{};
  CHECK_THROWS_AS(screen_feature(FeatureKind::bore, cloud_of(bore.points), tip),
                  std::invalid_argument);
  CHECK_THROWS_AS(screen_feature(FeatureKind::plane, cloud_of(face.points), PrepareOptions{}),
                  std::invalid_argument);  // a plane without its outward direction
}

TEST_CASE("the least-squares cylinder prepare keeps is a refit of its points, bit for bit",
          "[prepare]") {
  // Reference: fit_cylinder_least_squares on the prepared points with the same options (the fit
  // the evaluation would run again); after outlier removal the points are the ones kept, so the
  // refit is of the prepared cloud, not of the given one.
  ReferenceSet set = make_lobed_cylinder(tilted_axis(), 6.005, -1.0, -49.0, 13, 48, 2.0 * um, 11.0);
  set.points.col(301) -= 200.0 * um * set.normals.col(301);  // far enough to be removed
  for (const bool remove : {false, true}) {
    INFO((remove ? "outlier stages on" : "points as given"));
    PrepareOptions options;
    options.fit.axis_hint = tilted_axis().direction;
    options.outliers.neighbour_filter = options.outliers.residual_rejection = remove;
    const PreparedFeature prepared =
        prepare_feature(FeatureKind::bore, cloud_of(set.points), options);
    CHECK(prepared.cloud.points.cols() == set.points.cols() - (remove ? 1 : 0));
    REQUIRE(prepared.least_squares);
    const CylinderFit refit = fit_cylinder_least_squares(prepared.cloud.points, options.fit);
    const CylinderFit& kept = prepared.least_squares->fit;
    CHECK(kept.axis.point == refit.axis.point);
    CHECK(kept.axis.direction == refit.axis.direction);
    CHECK(kept.radius == refit.radius);
    CHECK(kept.residuals.values == refit.residuals.values);
    CHECK(kept.residuals.rms == refit.residuals.rms);
    CHECK(kept.residuals.form == refit.residuals.form);
    CHECK(kept.summary.iterations == refit.summary.iterations);
    CHECK(kept.summary.message == refit.summary.message);
    CHECK(kept.summary.warnings == refit.summary.warnings);
    CHECK(kept.covariance.matrix == refit.covariance.matrix);
    CHECK(prepared.least_squares->options.axis_hint == options.fit.axis_hint);
  }
  // None without a screen of its own element: screen off, too few points, a plane.
  PrepareOptions off;
  off.stray_screen = false;
  CHECK(!prepare_feature(FeatureKind::bore, cloud_of(set.points), off).least_squares);
  CHECK(!prepare_feature(FeatureKind::bore, cloud_of(set.points.leftCols(8)), PrepareOptions{})
             .least_squares);
  PrepareOptions plane;
  plane.outward = Eigen::Vector3d::UnitZ();
  CHECK(!prepare_feature(FeatureKind::plane, cloud_of(set.points), plane).least_squares);
}
