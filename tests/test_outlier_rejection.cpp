// Outlier rejection (outlier_rejection.hpp), alone and through prepare_feature.
//
// References outside the code under test:
//  * reference sets with known least-squares solutions (null-space construction of ISO 10360-6
//    test sets, Forbes & Minh, Int. J. Metrol. Qual. Eng. 3(3), 2012): spikes and double hits
//    are injected at indices chosen here (the truth), and once they are removed the fit must be
//    the reference element again;
//  * normal tables (common practice): with Gaussian noise of sigma s, |r| > 5 s has probability
//    5.7e-7 per point, so the clean clouds below (<= 2000 points) lose a point with probability
//    about 1e-3 per pass: losing one is a defect, not bad luck (the seeds are fixed anyway).

#include <catch2/catch.hpp>

#include <Eigen/Geometry>
#include <algorithm>
#include <cmath>
#include <random>
#include <vector>

#include "cylzone/fit/fit_cylinder.hpp"
#include "cylzone/prepare/outlier_rejection.hpp"
#include "cylzone/prepare/prepare.hpp"
#include "reference_data.hpp"

using namespace cylzone;
using cylzone::testing::axis_distance_over_extent;
using cylzone::testing::make_cylinder_reference;
using cylzone::testing::ReferenceSet;

namespace {

constexpr double um = 1e-3;
constexpr double pi = 3.14159265358979323846;

const Axis kAxis{Eigen::Vector3d(-63.0, 28.0, 110.0), Eigen::Vector3d(-0.01, 0.02, 1.0).normalized()};

PointCloud with_lines(const Eigen::Matrix3Xd& points) {
  PointCloud c;
  c.points = points;
  c.source = "bore.csv";
  for (Eigen::Index i = 0; i < points.cols(); ++i) c.lines.push_back(static_cast<std::size_t>(i) + 2);
  return c;
}

PrepareOptions both_stages() {
  PrepareOptions o;
  o.fit.axis_hint = kAxis.direction;
  o.outliers.neighbour_filter = true;
  o.outliers.residual_rejection = true;
  return o;
}

std::vector<std::size_t> removed_indices(const OutlierRecord& r) {
  std::vector<std::size_t> out;
  for (const OutlierStageRecord* s : {&r.neighbour_filter, &r.residual_rejection})
    for (const RemovedPoint& p : s->removed) out.push_back(p.index);
  std::sort(out.begin(), out.end());
  return out;
}

/// A bore of `levels` x `per_level` points, 0.5 um Gaussian noise along the radius (fixed
/// seed) and, when `bell` > 0, a bell-mouth of that radial size fading out over the top 15 mm.
Eigen::Matrix3Xd noisy_bore(int levels, int per_level, double bell, unsigned seed) {
  const Eigen::Vector3d w = kAxis.direction;
  const Eigen::Vector3d u = w.unitOrthogonal(), v = w.cross(u);
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> noise(0.0, 0.5 * um);
  Eigen::Matrix3Xd p(3, levels * per_level);
  int k = 0;
  for (int l = 0; l < levels; ++l) {
    const double t = -2.0 - 54.0 * l / (levels - 1);
    const double q = std::max(0.0, (t + 15.0) / 15.0);
    for (int j = 0; j < per_level; ++j, ++k) {
      const double theta = 2.0 * pi * j / per_level + 0.3 * l;
      const Eigen::Vector3d e = std::cos(theta) * u + std::sin(theta) * v;
      p.col(k) = kAxis.point + t * w + (6.0 + bell * q * q + noise(rng)) * e;
    }
  }
  return p;
}

}  // namespace

TEST_CASE("spikes and double hits are removed and the fit returns to the clean answer",
          "[prepare][outliers]") {
  const ReferenceSet clean = make_cylinder_reference(kAxis, 6.0, -2.0, -58.0, 9, 40, 360.0, 0.6 * um, 29);
  const Eigen::Index n = clean.points.cols();
  // Three spikes (two into the hole, one into the material) and two double hits: a second
  // trigger at the spot of an existing point, off by a spike along the normal (appended, as a
  // CMM logs it right after the first).
  Eigen::Matrix3Xd points(3, n + 2);
  points.leftCols(n) = clean.points;
  const std::vector<std::pair<Eigen::Index, double>> spikes = {{37, -25.0 * um}, {190, -12.0 * um}, {301, 30.0 * um}};
  for (const auto& [i, size] : spikes) points.col(i) += size * clean.normals.col(i);
  points.col(n) = clean.points.col(100) - 15.0 * um * clean.normals.col(100);
  points.col(n + 1) = clean.points.col(250) + 20.0 * um * clean.normals.col(250);
  const std::vector<std::size_t> injected = {37, 190, 301, static_cast<std::size_t>(n),
                                             static_cast<std::size_t>(n + 1)};

  for (int stages = 1; stages <= 3; ++stages) {
    CAPTURE(stages);
    PrepareOptions options = both_stages();
    options.outliers.neighbour_filter = (stages & 1) != 0;
    options.outliers.residual_rejection = (stages & 2) != 0;
    const PreparedFeature prepared = prepare_feature(FeatureKind::bore, with_lines(points), options);
    const OutlierRecord& record = prepared.record.outliers;
    // Spikes put back on the surface would not make the clean set; compare with it without them.
    std::vector<std::size_t> expected = injected;
    CHECK(removed_indices(record) == expected);
    REQUIRE(prepared.cloud.size() == static_cast<std::size_t>(n) - 3);
    // Every removed point carries its file line (line = index + 2 here).
    for (const OutlierStageRecord* s : {&record.neighbour_filter, &record.residual_rejection})
      for (const RemovedPoint& p : s->removed) CHECK(p.line == p.index + 2);
    // The kept points are the clean set less the three spiked points, which stay removed; a
    // null-space set less some points is no longer exact, so the fit is compared with the
    // fit of exactly those clean points (the clean answer), to rounding.
    Eigen::Matrix3Xd clean_kept(3, n - 3);
    Eigen::Index k = 0;
    for (Eigen::Index i = 0; i < n; ++i)
      if (i != 37 && i != 190 && i != 301) clean_kept.col(k++) = clean.points.col(i);
    CHECK((prepared.cloud.points - clean_kept).cwiseAbs().maxCoeff() == 0.0);
    const CylinderFit fit = fit_cylinder_least_squares(prepared.cloud.points, options.fit);
    const CylinderFit reference = fit_cylinder_least_squares(clean.points, options.fit);
    CHECK(std::abs(fit.radius - 6.0) < 0.1 * um);  // within the 0.6 um form's reach
    CHECK(axis_distance_over_extent(fit.axis, reference.axis, fit.extent_min, fit.extent_max) < 0.2 * um);
    // The points inside the hole (37, 190 and the double hit at n) would have been contacts of
    // the maximum-inscribed cylinder: flagged and warned about; the one into the material not.
    for (const OutlierStageRecord* s : {&record.neighbour_filter, &record.residual_rejection})
      for (const RemovedPoint& p : s->removed)
        CHECK(p.contact == (p.index == 37 || p.index == 190 || p.index == static_cast<std::size_t>(n)));
    const std::vector<std::string> warnings = preparation_warnings(prepared.record);
    REQUIRE(warnings.size() == 1);
    CHECK_THAT(warnings.front(), Catch::Contains("lines 39, 192") ||
                                     Catch::Contains("line 39"));
    CHECK_THAT(warnings.front(), Catch::Contains("would have touched such a point"));
  }
}

TEST_CASE("clean data lose no points; form shared by neighbours is kept", "[prepare][outliers]") {
  for (const unsigned seed : {1u, 2u, 3u}) {
    CAPTURE(seed);
    const PreparedFeature plain =
        prepare_feature(FeatureKind::bore, with_lines(noisy_bore(25, 80, 0.0, seed)), both_stages());
    CHECK(plain.record.outliers.removed_count() == 0);
    CHECK(plain.record.outliers.residual_rejection.iterations == 1);
    // The robust scale estimates the 0.5 um noise (MAD consistency, common practice).
    CHECK(plain.record.outliers.residual_rejection.robust_scale == Approx(0.5 * um).epsilon(0.15));
    CHECK(preparation_warnings(plain.record).empty());
    // A 5 um bell-mouth over the top 15 mm (the demo's bore P6 in kind): beyond 5 robust sigma
    // at the mouth, but every neighbour follows it: form, kept.
    const PreparedFeature bell =
        prepare_feature(FeatureKind::bore, with_lines(noisy_bore(8, 36, 5.0 * um, seed)), both_stages());
    CHECK(bell.record.outliers.removed_count() == 0);
  }
}

TEST_CASE("a large share removed is warned about; stages skipped say why", "[prepare][outliers]") {
  Eigen::Matrix3Xd points = noisy_bore(10, 40, 0.0, 7);
  // Every eighth point a spike: 50 of 400, 12.5 %.
  for (Eigen::Index i = 0; i < points.cols(); i += 8) {
    const Eigen::Vector3d d = points.col(i) - kAxis.point;
    const Eigen::Vector3d radial = (d - kAxis.direction * kAxis.direction.dot(d)).normalized();
    points.col(i) += 40.0 * um * radial;
  }
  const PreparedFeature prepared = prepare_feature(FeatureKind::bore, with_lines(points), both_stages());
  CHECK(prepared.record.outliers.removed_count() == 50);
  const std::vector<std::string> warnings = preparation_warnings(prepared.record);
  REQUIRE_FALSE(warnings.empty());
  CHECK_THAT(warnings.front(), Catch::Contains("50 of 400 points removed as outliers (12.5 %, above 5.0 %)"));

  // A slot's element is its datum simulator's: the stages are recorded as not run.
  PrepareOptions slot = both_stages();
  slot.stray_screen = false;
  const PreparedFeature skipped = prepare_feature(FeatureKind::slot, with_lines(points), slot);
  CHECK(skipped.cloud.size() == 400);
  CHECK_FALSE(skipped.record.outliers.neighbour_filter.skipped.empty());
  CHECK_THAT(preparation_warnings(skipped.record).front(), Catch::Contains("neighbour filter not run"));
}

TEST_CASE("reject_outliers with both stages off returns the cloud and calls nothing",
          "[prepare][outliers]") {
  const PointCloud cloud = with_lines(noisy_bore(3, 12, 0.0, 4));
  bool called = false;
  const OutlierResult r = reject_outliers(
      cloud, [&](const Eigen::Matrix3Xd& p) { called = true; return Eigen::VectorXd::Zero(p.cols()).eval(); },
      ContactSide::lowest, OutlierOptions{});
  CHECK_FALSE(called);
  CHECK(r.kept.size() == cloud.size());
  CHECK((r.cloud.points.array() == cloud.points.array()).all());
  OutlierOptions bad;
  bad.residual_rejection = true;
  bad.residual_threshold = 0.0;
  CHECK_THROWS_AS(reject_outliers(cloud, [](const Eigen::Matrix3Xd& p) { return Eigen::VectorXd::Zero(p.cols()).eval(); },
                                  ContactSide::lowest, bad),
                  std::invalid_argument);
}

TEST_CASE("the points removed do not depend on how the part sat on the machine",
          "[prepare][outliers]") {
  Eigen::Matrix3Xd points = noisy_bore(10, 40, 0.0, 11);
  for (Eigen::Index i : {5, 77, 230}) {
    const Eigen::Vector3d d = points.col(i) - kAxis.point;
    points.col(i) -= 15.0 * um * (d - kAxis.direction * kAxis.direction.dot(d)).normalized();
  }
  const Eigen::Matrix3d turn =
      Eigen::AngleAxisd(2.2, Eigen::Vector3d(-0.2, 0.9, 0.4).normalized()).toRotationMatrix();
  PrepareOptions there = both_stages();
  there.fit.axis_hint = turn * kAxis.direction;
  const PreparedFeature a = prepare_feature(FeatureKind::bore, with_lines(points), both_stages());
  const PreparedFeature b = prepare_feature(
      FeatureKind::bore,
      with_lines((turn * points).colwise() + Eigen::Vector3d(350.0, -120.0, 64.0)), there);
  CHECK(removed_indices(a.record.outliers) == std::vector<std::size_t>{5, 77, 230});
  CHECK(removed_indices(b.record.outliers) == removed_indices(a.record.outliers));
  CHECK(a.record.kept == b.record.kept);
}
