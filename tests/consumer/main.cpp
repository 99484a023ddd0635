// Fits a plane through four points of z = 2 + 0.5 x - 0.25 y through the installed library and
// checks the normal against the plane's closed form n ~ (-0.5, 0.25, 1).
#include <cmath>
#include <cstdio>
#include <cylzone/fit_plane.hpp>
#include <cylzone/version.hpp>

int main() {
  Eigen::Matrix3Xd p(3, 5);
  const double xy[5][2] = {{0, 0}, {10, 0}, {0, 10}, {10, 10}, {3, 7}};
  for (int i = 0; i < 5; ++i)
    p.col(i) << xy[i][0], xy[i][1], 2.0 + 0.5 * xy[i][0] - 0.25 * xy[i][1];
  const cylzone::PlaneFit fit = cylzone::fit_plane_least_squares(p);
  const Eigen::Vector3d expected = Eigen::Vector3d(-0.5, 0.25, 1.0).normalized();
  const double angle = std::acos(std::min(1.0, std::abs(fit.normal.dot(expected))));
  std::printf("cylzone %s: plane normal off by %.3g rad\n", cylzone::version_string, angle);
  return angle < 1e-12 ? 0 : 1;
}
