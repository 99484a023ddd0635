// Tests of detail/local_blocks.hpp (local coordinates a block of columns at a time). Reference:
// the whole-cloud product basis^T (p - origin) in one expression (detail::local_coordinates for
// three dimensions), which the blocks replace in the tangent plane and the least-squares plane.
#include <catch2/catch.hpp>

#include <Eigen/Geometry>
#include <random>

#include "detail/fit_support.hpp"
#include "detail/local_blocks.hpp"

using namespace cylzone;

namespace {

// Sizes on, just past and short of the block width (a few columns left over take Eigen's
// small-product path), and none.
const Eigen::Index sizes[] = {0, 1, 13, 4095, 4096, 4097, 4096 + 13, 10000};

}  // namespace

TEST_CASE("for_each_local_block visits every column once with the whole product's bits",
          "[fit_support]") {
  std::mt19937_64 rng(8191);
  std::uniform_real_distribution<double> coordinate(-250.0, 250.0);
  const Eigen::Matrix3d basis3 =
      Eigen::AngleAxisd(0.7, Eigen::Vector3d(0.3, -0.5, 0.8).normalized()).toRotationMatrix();
  const Eigen::Vector3d origin3(12.25, -7.5, 301.125);
  const Eigen::Matrix2d basis2 = Eigen::Rotation2Dd(-1.1).toRotationMatrix();
  const Eigen::Vector2d origin2(-3.5, 88.0625);
  for (const Eigen::Index n : sizes) {
    INFO("n = " << n);
    Eigen::Matrix3Xd points(3, n);
    for (Eigen::Index i = 0; i < n; ++i)
      points.col(i) = Eigen::Vector3d(coordinate(rng), coordinate(rng), coordinate(rng));
    // Three dimensions, against detail::local_coordinates; a buffer of another size is resized.
    const Eigen::Matrix3Xd expected3 = detail::local_coordinates(points, origin3, basis3);
    Eigen::Matrix3Xd got3 = Eigen::Matrix3Xd::Constant(3, n, -1.0);
    Eigen::Matrix3Xd buffer3(3, 7);
    Eigen::Index next = 0;
    detail::for_each_local_block<3>(points, origin3, basis3, buffer3,
                                    [&](Eigen::Index start, const auto& local) {
                                      CHECK(start == next);  // in order, no gap, no overlap
                                      CHECK(local.cols() <= detail::local_block_columns);
                                      got3.middleCols(start, local.cols()) = local;
                                      next = start + local.cols();
                                    });
    CHECK(next == n);
    CHECK(got3 == expected3);
    // Two dimensions (a tangent line's), against the same expression over the whole cloud.
    const Eigen::Matrix2Xd points2 = points.topRows<2>();
    const Eigen::Matrix2Xd expected2 = basis2.transpose() * (points2.colwise() - origin2);
    Eigen::Matrix2Xd got2 = Eigen::Matrix2Xd::Constant(2, n, -1.0);
    Eigen::Matrix2Xd buffer2;
    detail::for_each_local_block<2>(
        points2, origin2, basis2, buffer2,
        [&](Eigen::Index start, const auto& local) { got2.middleCols(start, local.cols()) = local; });
    CHECK(got2 == expected2);
  }
}
