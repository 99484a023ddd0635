#include "reference_data.hpp"

#include <Eigen/Geometry>
#include <Eigen/QR>
#include <algorithm>
#include <cmath>

namespace cylzone::testing {
namespace {
constexpr double pi = 3.14159265358979323846;
constexpr double deg = pi / 180.0;

// Orthonormal (u, v) perpendicular to w; independent of the library's own basis helper so the
// test data does not share code with the code under test.
void perpendicular_pair(const Eigen::Vector3d& w, Eigen::Vector3d& u, Eigen::Vector3d& v) {
  const Eigen::Vector3d n = w.normalized();
  const Eigen::Vector3d seed = std::abs(n.z()) < 0.9 ? Eigen::Vector3d::UnitZ()
                                                      : Eigen::Vector3d::UnitX();
  u = n.cross(seed).normalized();
  v = n.cross(u);
}
}  // namespace

Eigen::VectorXd null_space_deviations(const Eigen::MatrixXd& jacobian, double amplitude,
                                      std::mt19937_64& rng) {
  std::normal_distribution<double> normal(0.0, 1.0);
  Eigen::VectorXd g(jacobian.rows());
  for (Eigen::Index i = 0; i < g.size(); ++i) g(i) = normal(rng);
  // Remove the component in the column space of J: e = (I - Q Q^T) g with Q from a thin QR.
  const Eigen::HouseholderQR<Eigen::MatrixXd> qr(jacobian);
  const Eigen::MatrixXd q =
      qr.householderQ() * Eigen::MatrixXd::Identity(jacobian.rows(), jacobian.cols());
  Eigen::VectorXd e = g - q * (q.transpose() * g);
  e -= q * (q.transpose() * e);  // a second pass removes what rounding left of the projection
  // Without redundancy (no more points than parameters) the null space is empty and e is only
  // rounding; with amplitude 0 the scaling would be 0 / 0. Both mean: no deviations.
  const double largest = e.cwiseAbs().maxCoeff();
  if (jacobian.rows() <= jacobian.cols() || amplitude == 0.0 || !(largest > 0.0))
    return Eigen::VectorXd::Zero(g.size());
  return e * (amplitude / largest);
}

Eigen::Vector3d direction_from_angles(double polar_deg, double azimuth_deg) {
  const double p = polar_deg * deg, a = azimuth_deg * deg;
  return {std::sin(p) * std::cos(a), std::sin(p) * std::sin(a), std::cos(p)};
}

ReferenceSet make_line_reference(const Axis& axis, double t0, double t1, int count,
                                 double amplitude, std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  std::uniform_real_distribution<double> angle(0.0, 2.0 * pi);
  Eigen::Vector3d u, v;
  const Eigen::Vector3d d = axis.direction.normalized();
  perpendicular_pair(d, u, v);
  ReferenceSet set;
  set.points.resize(3, count);
  set.normals.resize(3, count);
  Eigen::MatrixXd jac(count, 4);
  for (int i = 0; i < count; ++i) {
    const double t = t0 + (t1 - t0) * i / (count - 1);
    const double a = angle(rng);
    const Eigen::Vector3d n = std::cos(a) * u + std::sin(a) * v;
    set.points.col(i) = axis.point + t * d;
    set.normals.col(i) = n;
    jac.row(i) << n.dot(u), n.dot(v), t * n.dot(u), t * n.dot(v);
  }
  set.deviations = null_space_deviations(jac, amplitude, rng);
  for (int i = 0; i < count; ++i) set.points.col(i) += set.deviations(i) * set.normals.col(i);
  return set;
}

ReferenceSet make_plane_reference(const Eigen::Vector3d& point, const Eigen::Vector3d& normal,
                                  double width, double height, int count, double amplitude,
                                  std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  std::uniform_real_distribution<double> unit(-0.5, 0.5);
  Eigen::Vector3d u, v;
  const Eigen::Vector3d n = normal.normalized();
  perpendicular_pair(n, u, v);
  ReferenceSet set;
  set.points.resize(3, count);
  set.normals.resize(3, count);
  Eigen::MatrixXd jac(count, 3);
  for (int i = 0; i < count; ++i) {
    const double x = width * unit(rng), y = height * unit(rng);
    set.points.col(i) = point + x * u + y * v;
    set.normals.col(i) = n;
    jac.row(i) << 1.0, x, y;
  }
  set.deviations = null_space_deviations(jac, amplitude, rng);
  for (int i = 0; i < count; ++i) set.points.col(i) += set.deviations(i) * n;
  return set;
}

ReferenceSet make_circle_reference(const Eigen::Vector3d& centre, const Eigen::Vector3d& normal,
                                   double radius, double start_deg, double arc_deg, int count,
                                   double amplitude, std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  Eigen::Vector3d u, v;
  perpendicular_pair(normal, u, v);
  ReferenceSet set;
  set.points.resize(3, count);
  set.normals.resize(3, count);
  Eigen::MatrixXd jac(count, 3);
  const bool full = arc_deg >= 360.0;
  for (int i = 0; i < count; ++i) {
    const double frac = full ? double(i) / count : double(i) / (count - 1);
    const double a = (start_deg + arc_deg * frac) * deg;
    const Eigen::Vector3d n = std::cos(a) * u + std::sin(a) * v;
    set.points.col(i) = centre + radius * n;
    set.normals.col(i) = n;
    jac.row(i) << std::cos(a), std::sin(a), 1.0;
  }
  set.deviations = null_space_deviations(jac, amplitude, rng);
  for (int i = 0; i < count; ++i) set.points.col(i) += set.deviations(i) * set.normals.col(i);
  return set;
}

ReferenceSet make_sphere_reference(const Eigen::Vector3d& centre, double radius,
                                   const Eigen::Vector3d& pole, double cap_deg, int count,
                                   double amplitude, std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  Eigen::Vector3d u, v;
  const Eigen::Vector3d w = pole.normalized();
  perpendicular_pair(w, u, v);
  ReferenceSet set;
  set.points.resize(3, count);
  set.normals.resize(3, count);
  Eigen::MatrixXd jac(count, 4);
  const double cos_cap = std::cos(cap_deg * deg);
  for (int i = 0; i < count; ++i) {
    // Uniform on the cap: cos(polar) uniform in [cos_cap, 1].
    const double c = cos_cap + (1.0 - cos_cap) * unit(rng);
    const double s = std::sqrt(std::max(0.0, 1.0 - c * c));
    const double a = 2.0 * pi * unit(rng);
    const Eigen::Vector3d n = s * std::cos(a) * u + s * std::sin(a) * v + c * w;
    set.points.col(i) = centre + radius * n;
    set.normals.col(i) = n;
    jac.row(i) << n.x(), n.y(), n.z(), 1.0;
  }
  set.deviations = null_space_deviations(jac, amplitude, rng);
  for (int i = 0; i < count; ++i) set.points.col(i) += set.deviations(i) * set.normals.col(i);
  return set;
}

ReferenceSet make_cylinder_reference(const Axis& axis, double radius, double t0, double t1,
                                     int levels, int per_level, double arc_deg, double amplitude,
                                     std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  Eigen::Vector3d u, v;
  const Eigen::Vector3d d = axis.direction.normalized();
  perpendicular_pair(d, u, v);
  const int count = levels * per_level;
  ReferenceSet set;
  set.points.resize(3, count);
  set.normals.resize(3, count);
  Eigen::MatrixXd jac(count, 5);
  int k = 0;
  for (int level = 0; level < levels; ++level) {
    const double t = levels == 1 ? t0 : t0 + (t1 - t0) * level / (levels - 1);
    for (int j = 0; j < per_level; ++j, ++k) {
      const double a = arc_deg * unit(rng) * deg;
      const Eigen::Vector3d n = std::cos(a) * u + std::sin(a) * v;
      set.points.col(k) = axis.point + t * d + radius * n;
      set.normals.col(k) = n;
      jac.row(k) << std::cos(a), std::sin(a), t * std::cos(a), t * std::sin(a), 1.0;
    }
  }
  set.deviations = null_space_deviations(jac, amplitude, rng);
  for (int i = 0; i < count; ++i) set.points.col(i) += set.deviations(i) * set.normals.col(i);
  return set;
}

ReferenceSet make_lobed_cylinder(const Axis& axis, double radius, double t0, double t1,
                                 int levels, int per_level, double eps, double phase_deg) {
  Eigen::Vector3d u, v;
  const Eigen::Vector3d d = axis.direction.normalized();
  perpendicular_pair(d, u, v);
  const int count = levels * per_level;
  ReferenceSet set;
  set.points.resize(3, count);
  set.normals.resize(3, count);
  set.deviations.resize(count);
  int k = 0;
  for (int level = 0; level < levels; ++level) {
    const double t = levels == 1 ? t0 : t0 + (t1 - t0) * level / (levels - 1);
    for (int j = 0; j < per_level; ++j, ++k) {
      const double a = 2.0 * pi * j / per_level + phase_deg * deg;
      const Eigen::Vector3d n = std::cos(a) * u + std::sin(a) * v;
      set.deviations(k) = eps * std::cos(3.0 * (a - phase_deg * deg));
      set.normals.col(k) = n;
      set.points.col(k) = axis.point + t * d + (radius + set.deviations(k)) * n;
    }
  }
  return set;
}

double angle_between_lines(const Eigen::Vector3d& a, const Eigen::Vector3d& b) {
  const Eigen::Vector3d ua = a.normalized(), ub = b.normalized();
  return std::atan2(ua.cross(ub).norm(), std::abs(ua.dot(ub)));
}

double axis_distance_over_extent(const Axis& fitted, const Axis& reference, double t0, double t1) {
  const Eigen::Vector3d d = reference.direction.normalized();
  double worst = 0.0;
  for (const double t : {t0, t1}) {
    const Eigen::Vector3d q = fitted.point + t * fitted.direction.normalized() - reference.point;
    worst = std::max(worst, (q - q.dot(d) * d).norm());
  }
  return worst;
}

}  // namespace cylzone::testing
