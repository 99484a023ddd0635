#include "cylzone/evaluate/axis_zone.hpp"

#include <Eigen/Geometry>
#include <algorithm>
#include <cmath>
#include <utility>

#include "cylzone/core/errors.hpp"

namespace cylzone {
namespace {

constexpr double pi = 3.14159265358979323846;

// Smallest circle containing a set of points in the plane (Welzl, "Smallest enclosing disks",
// LNCS 555, 1991), in its move-to-front iterative form. The points are visited in their given
// order, so the result is deterministic; the expected linear running time of the randomised
// algorithm does not matter for the few dozen section centres of a median line.
struct Disk {
  Eigen::Vector2d centre = Eigen::Vector2d::Zero();
  double radius = 0.0;
  bool contains(const Eigen::Vector2d& p) const {
    // A relative slack absorbs the rounding of the circumcircle construction.
    return (p - centre).norm() <= radius * (1.0 + 1e-12) + 1e-15;
  }
};

Disk disk_of_two(const Eigen::Vector2d& a, const Eigen::Vector2d& b) {
  return {0.5 * (a + b), 0.5 * (a - b).norm()};
}

Disk disk_of_three(const Eigen::Vector2d& a, const Eigen::Vector2d& b, const Eigen::Vector2d& c) {
  const Eigen::Vector2d ab = b - a, ac = c - a;
  const double d = 2.0 * (ab.x() * ac.y() - ab.y() * ac.x());
  if (std::abs(d) <= 1e-300) {
    // Collinear: the disk on the two points farthest apart.
    Disk best = disk_of_two(a, b);
    for (const Disk& other : {disk_of_two(a, c), disk_of_two(b, c)})
      if (other.radius > best.radius) best = other;
    return best;
  }
  const double ab2 = ab.squaredNorm(), ac2 = ac.squaredNorm();
  const Eigen::Vector2d offset((ac.y() * ab2 - ab.y() * ac2) / d, (ab.x() * ac2 - ac.x() * ab2) / d);
  return {a + offset, offset.norm()};
}

Disk smallest_enclosing_disk(const std::vector<Eigen::Vector2d>& p) {
  if (p.empty()) return {};
  Disk disk{p[0], 0.0};
  for (std::size_t i = 1; i < p.size(); ++i) {
    if (disk.contains(p[i])) continue;
    disk = {p[i], 0.0};
    for (std::size_t j = 0; j < i; ++j) {
      if (disk.contains(p[j])) continue;
      disk = disk_of_two(p[i], p[j]);
      for (std::size_t k = 0; k < j; ++k) {
        if (disk.contains(p[k])) continue;
        disk = disk_of_three(p[i], p[j], p[k]);
      }
    }
  }
  return disk;
}

}  // namespace

ZoneFrame ZoneFrame::at(const Eigen::Vector2d& basic_location, const Eigen::Vector3d& direction) {
  const double length = direction.norm();
  if (!(length > 0.0) || !std::isfinite(length))
    throw FitError("the nominal direction of a zone has zero length");
  const Eigen::Vector3d w = direction / length;
  // u: the frame's x axis made perpendicular to w, so that for a perpendicular bore (u, v) are
  // the datum frame's (x, y) and the deviations read directly as dx, dy. When w is nearly
  // parallel to x (a bore along x), y takes its place.
  Eigen::Vector3d seed = Eigen::Vector3d::UnitX();
  if (std::abs(w.x()) > 0.9) seed = Eigen::Vector3d::UnitY();
  const Eigen::Vector3d u = (seed - seed.dot(w) * w).normalized();
  ZoneFrame zone;
  zone.origin = Eigen::Vector3d(basic_location.x(), basic_location.y(), 0.0);
  zone.basis.col(0) = u;
  zone.basis.col(1) = w.cross(u);
  zone.basis.col(2) = w;
  return zone;
}

double StraightAxis::tilt_rad() const { return std::atan(slope.norm()); }

double StraightAxis::tilt_azimuth_deg() const {
  if (slope.squaredNorm() == 0.0) return 0.0;
  double deg = std::atan2(slope.y(), slope.x()) * 180.0 / pi;
  if (deg <= -180.0) deg += 360.0;  // (-180, 180]
  return deg;
}

StraightAxis StraightAxis::from_axis(const Axis& axis, const ZoneFrame& zone) {
  const Eigen::Vector3d p = zone.basis.transpose() * (axis.point - zone.origin);
  const Eigen::Vector3d d = zone.basis.transpose() * axis.direction.normalized();
  // An axis within ~1e-9 rad of perpendicular to the zone's axis has no height parametrisation.
  if (!(std::abs(d.z()) > 1e-9))
    throw FitError("the axis is perpendicular to the nominal direction of its zone");
  StraightAxis result;
  result.slope = d.head<2>() / d.z();
  result.at_zero = p.head<2>() - p.z() * result.slope;
  return result;
}

double position_over_range(const StraightAxis& axis, double h1, double h2) {
  // The radial deviation |at_zero + h slope| is convex in h, so its maximum over [h1, h2] is at
  // an end (see the file comment of axis_zone.hpp).
  return 2.0 * std::max(axis.at(h1).radial(), axis.at(h2).radial());
}

AxisDeviation worst_end(const StraightAxis& axis, double h1, double h2) {
  const AxisDeviation a = axis.at(h1), b = axis.at(h2);
  return b.radial() > a.radial() + worst_tie_margin ? b : a;
}

double perpendicularity_over_range(const StraightAxis& axis, double h1, double h2) {
  // The axis' offset runs along a segment of length |h2 - h1| |slope| in the (u, v) plane; the
  // smallest circle containing a segment has it as diameter. The zone cylinder is parallel to
  // w and free in location (ASME Y14.5-2018 orientation; ISO 1101:2017 perpendicularity of a
  // line to a datum plane).
  return std::abs(h2 - h1) * axis.slope.norm();
}

std::optional<double> first_height_outside(const StraightAxis& axis, double h_start,
                                           double h_end, double zone_diameter) {
  const double r2 = 0.25 * zone_diameter * zone_diameter;
  const auto outside = [&](double h) { return axis.at(h).offset.squaredNorm() > r2; };
  if (outside(h_start)) return h_start;
  if (!outside(h_end)) return std::nullopt;  // convex: inside at both ends, inside between
  // q(h) = |a + h s|^2 - r^2 = A h^2 + 2 B h + C, with q(h_start) <= 0 < q(h_end): exactly one
  // root lies between them, on the side of h_end. Roots by the cancellation-free form.
  const Eigen::Vector2d& a = axis.at_zero;
  const Eigen::Vector2d& s = axis.slope;
  const double A = s.squaredNorm(), B = a.dot(s), C = a.squaredNorm() - r2;
  const double disc = std::sqrt(std::max(0.0, B * B - A * C));
  // A > 0 here: a constant offset cannot be inside at one end and outside at the other.
  const double q = -(B + std::copysign(disc, B));
  double r1 = q / A;
  double r2root = q != 0.0 ? C / q : r1;
  if (r1 > r2root) std::swap(r1, r2root);
  double root = h_end > h_start ? r2root : r1;
  const double lo = std::min(h_start, h_end), hi = std::max(h_start, h_end);
  return std::clamp(root, lo, hi);
}

double position_of_points(const std::vector<AxisDeviation>& centres) {
  double largest = 0.0;
  for (const AxisDeviation& c : centres) largest = std::max(largest, c.radial());
  return 2.0 * largest;
}

double perpendicularity_of_points(const std::vector<AxisDeviation>& centres) {
  std::vector<Eigen::Vector2d> offsets;
  offsets.reserve(centres.size());
  for (const AxisDeviation& c : centres) offsets.push_back(c.offset);
  return 2.0 * smallest_enclosing_disk(offsets).radius;
}

}  // namespace cylzone
