// Segmenting a whole-part scan among the nominal surfaces (segment_scan.hpp states the method).
#include "cylzone/prepare/segment_scan.hpp"

#include "detail/fit_support.hpp"

#include <Eigen/Eigenvalues>
#include <Eigen/Geometry>
#include <Eigen/SVD>

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdint>
#include <limits>
#include <utility>
#include <stdexcept>

namespace cylzone {
namespace {

constexpr double kPi = 3.14159265358979323846;

/// An axis-aligned box in the part's coordinates that holds every candidate of a surface: a
/// point outside it is rejected with six comparisons, so a point costs little per surface.
struct Box {
  Eigen::Vector3d low, high;
  bool holds(const Eigen::Vector3d& p) const {
    return p.x() >= low.x() && p.x() <= high.x() && p.y() >= low.y() && p.y() <= high.y() &&
           p.z() >= low.z() && p.z() <= high.z();
  }
};

/// A unit vector perpendicular to `d`: the azimuth origin about a cylinder's axis.
Eigen::Vector3d perpendicular(const Eigen::Vector3d& d) {
  Eigen::Index smallest = 0;
  d.cwiseAbs().minCoeff(&smallest);
  Eigen::Vector3d a = Eigen::Vector3d::Zero();
  a[smallest] = 1.0;
  return (a - a.dot(d) * d).normalized();
}

/// A surface prepared for the pass: its box and the margin-widened ranges.
struct Prepared {
  const NominalSurface* s = nullptr;
  Box box;
  double low = 0.0, high = 0.0;                      // cylinder's axial range with the margin
  double u_low = 0.0, u_high = 0.0, v_low = 0.0, v_high = 0.0;  // plane's, with the margin
};

Prepared prepare_surface(const NominalSurface& s, double band, double margin) {
  Prepared p;
  p.s = &s;
  if (s.kind == NominalSurface::Kind::cylinder) {
    p.low = s.low - margin;
    p.high = s.high + margin;
    const Eigen::Vector3d a = s.origin + p.low * s.direction;
    const Eigen::Vector3d b = s.origin + p.high * s.direction;
    // A disc of radius r normal to d spans r sqrt(1 - d_i^2) along axis i.
    const double r = s.radius + band;
    const Eigen::Vector3d reach =
        r * (Eigen::Vector3d::Ones() - s.direction.cwiseAbs2()).cwiseMax(0.0).cwiseSqrt();
    p.box.low = a.cwiseMin(b) - reach;
    p.box.high = a.cwiseMax(b) + reach;
  } else {
    p.u_low = s.u_low - margin;
    p.u_high = s.u_high + margin;
    p.v_low = s.v_low - margin;
    p.v_high = s.v_high + margin;
    p.box.low = Eigen::Vector3d::Constant(std::numeric_limits<double>::infinity());
    p.box.high = -p.box.low;
    for (double u : {p.u_low, p.u_high})
      for (double v : {p.v_low, p.v_high})
        for (double w : {-band, band}) {
          const Eigen::Vector3d c = s.origin + u * s.u_axis + v * s.v_axis + w * s.direction;
          p.box.low = p.box.low.cwiseMin(c);
          p.box.high = p.box.high.cwiseMax(c);
        }
  }
  return p;
}

/// Distance of `q` from the bounded nominal surface (overshoot beyond its range included).
double bounded_distance(const NominalSurface& s, const Eigen::Vector3d& q) {
  const Eigen::Vector3d rel = q - s.origin;
  if (s.kind == NominalSurface::Kind::cylinder) {
    const double axial = s.direction.dot(rel);
    const double radial = (rel - axial * s.direction).norm() - s.radius;
    const double beyond = std::max({0.0, s.low - axial, axial - s.high});
    return std::hypot(radial, beyond);
  }
  const double normal = s.direction.dot(rel);
  const double u = s.u_axis.dot(rel), v = s.v_axis.dot(rel);
  const double du = std::max({0.0, s.u_low - u, u - s.u_high});
  const double dv = std::max({0.0, s.v_low - v, v - s.v_high});
  return std::sqrt(normal * normal + du * du + dv * dv);
}

}  // namespace

namespace {

/// The cloud's points `indices` (ascending) as a cloud of their own, with their vectors and
/// file lines. The reads go forward through the cloud, so they stream through memory however
/// the features' points are interleaved in the file; no cloud-sized bookkeeping is allocated.
PointCloud gather(const PointCloud& cloud, const std::vector<std::size_t>& indices) {
  const auto n = static_cast<Eigen::Index>(indices.size());
  const bool vectors = cloud.has_vectors();
  const bool lines = cloud.lines.size() == cloud.size();
  PointCloud out;
  out.source = cloud.source;
  out.file_unit = cloud.file_unit;
  out.points.resize(3, n);
  if (vectors) out.vectors.resize(3, n);
  if (lines) out.lines.resize(indices.size());
  for (Eigen::Index at = 0; at < n; ++at) {
    const std::size_t i = indices[static_cast<std::size_t>(at)];
    const auto from = static_cast<Eigen::Index>(i);
    out.points.col(at) = cloud.points.col(from);
    if (vectors) out.vectors.col(at) = cloud.vectors.col(from);
    if (lines) out.lines[static_cast<std::size_t>(at)] = cloud.lines[i];
  }
  return out;
}

}  // namespace

std::vector<PointCloud> split_cloud(const PointCloud& cloud, const SegmentationResult& segments) {
  std::vector<PointCloud> out;
  out.reserve(segments.surfaces.size());
  for (const SurfaceSegment& segment : segments.surfaces)
    out.push_back(gather(cloud, segment.indices));
  return out;
}

std::vector<PointCloud> split_cloud(const PointCloud& cloud, SegmentationResult&& segments) {
  std::vector<PointCloud> out;
  out.reserve(segments.surfaces.size());
  for (SurfaceSegment& segment : segments.surfaces) {
    out.push_back(gather(cloud, segment.indices));
    std::vector<std::size_t>().swap(segment.indices);  // released: the memory goes to the next
  }
  return out;
}

SegmentationResult segment_scan(const PointCloud& cloud, const RigidPlacement& placement,
                                const std::vector<NominalSurface>& surfaces,
                                const SegmentOptions& options) {
  const double band = options.band;
  const double margin = options.margin.value_or(band);
  if (!(band > 0.0) || !std::isfinite(band))
    throw std::invalid_argument("segment_scan: the band must be a positive finite length");
  if (!(margin >= 0.0) || !std::isfinite(margin))
    throw std::invalid_argument("segment_scan: the margin must be a finite length >= 0");
  if (!(options.normal_agreement_deg > 0.0 && options.normal_agreement_deg <= 90.0))
    throw std::invalid_argument("segment_scan: the normal agreement must be in (0, 90] degrees");

  std::vector<Prepared> prepared;
  prepared.reserve(surfaces.size());
  for (const NominalSurface& s : surfaces) prepared.push_back(prepare_surface(s, band, margin));

  SegmentationResult result;
  result.surfaces.resize(surfaces.size());
  result.used_vectors = cloud.has_vectors();
  const double min_cos = std::cos(options.normal_agreement_deg * kPi / 180.0);
  const Eigen::Matrix3d& R = placement.rotation;
  const Eigen::Vector3d& t = placement.translation;
  const std::size_t n = cloud.size();
  // Per cylinder: the azimuth origin, the angular coverage and the axial range of the points
  // taken, gathered in the same pass (the points of one feature may be spread over the whole
  // file). The coverage is the fits' maximum-gap bucketing (detail::ArcCoverage), announced the
  // cloud's size: exact for a cloud of up to 2^15 points, else exact for any gap of 0.014
  // degrees or more.
  std::vector<std::pair<Eigen::Vector3d, Eigen::Vector3d>> frames;
  std::vector<detail::ArcCoverage> coverage;
  for (const NominalSurface& s : surfaces) {
    const Eigen::Vector3d u = perpendicular(s.direction);
    frames.emplace_back(u, s.direction.cross(u));
    coverage.emplace_back(s.kind == NominalSurface::Kind::cylinder ? n : 1);
  }
  std::vector<double> s_min(surfaces.size(), std::numeric_limits<double>::infinity());
  std::vector<double> s_max(surfaces.size(), -std::numeric_limits<double>::infinity());

  for (std::size_t i = 0; i < n; ++i) {
    const Eigen::Vector3d q = R * cloud.points.col(static_cast<Eigen::Index>(i)) + t;
    std::size_t best = surfaces.size();
    double best_distance = 0.0;
    for (std::size_t k = 0; k < prepared.size(); ++k) {
      const Prepared& p = prepared[k];
      if (!p.box.holds(q)) continue;
      const NominalSurface& s = *p.s;
      const Eigen::Vector3d rel = q - s.origin;
      double distance = 0.0;
      Eigen::Vector3d normal;
      if (s.kind == NominalSurface::Kind::cylinder) {
        const double axial = s.direction.dot(rel);
        if (axial < p.low || axial > p.high) continue;
        const Eigen::Vector3d radial = rel - axial * s.direction;
        const double r = radial.norm();
        distance = std::abs(r - s.radius);
        if (distance > band) continue;
        if (!result.used_vectors) {
          normal = Eigen::Vector3d::Zero();
        } else if (r > 0.0) {
          normal = radial / r;
        } else {
          continue;  // on the axis: no surface normal to agree with
        }
      } else {
        distance = std::abs(s.direction.dot(rel));
        if (distance > band) continue;
        const double u = s.u_axis.dot(rel), v = s.v_axis.dot(rel);
        if (u < p.u_low || u > p.u_high || v < p.v_low || v > p.v_high) continue;
        normal = s.direction;
      }
      if (result.used_vectors) {
        const Eigen::Vector3d vector = R * cloud.vectors.col(static_cast<Eigen::Index>(i));
        if (std::abs(vector.dot(normal)) < min_cos * vector.norm()) continue;
      }
      // Nearest surface wins; strict '<' keeps the first listed on an exact tie.
      if (best == surfaces.size() || distance < best_distance) {
        best = k;
        best_distance = distance;
      }
    }
    if (best == surfaces.size()) {
      ++result.unassigned;
      continue;
    }
    result.surfaces[best].indices.push_back(i);
    const NominalSurface& s = surfaces[best];
    if (s.kind != NominalSurface::Kind::cylinder) continue;
    const Eigen::Vector3d rel = q - s.origin;
    const double axial = s.direction.dot(rel);
    s_min[best] = std::min(s_min[best], axial);
    s_max[best] = std::max(s_max[best], axial);
    coverage[best].add(frames[best].first.dot(rel), frames[best].second.dot(rel));
  }

  for (std::size_t k = 0; k < surfaces.size(); ++k) {
    const NominalSurface& s = surfaces[k];
    SurfaceSegment& segment = result.surfaces[k];
    if (segment.indices.empty()) {
      // Only for a surface that took nothing: how far its nearest points are, for the message.
      for (std::size_t i = 0; i < n; ++i)
        segment.nearest_distance = std::min(segment.nearest_distance,
                                            bounded_distance(s, placed_point(cloud, placement, i)));
      continue;
    }
    segment.nearest_distance = 0.0;
    if (s.kind != NominalSurface::Kind::cylinder) continue;
    segment.angular_coverage_deg = coverage[k].degrees();
    segment.probed_span = s_max[k] - s_min[k];
    segment.nominal_span = s.high - s.low;
  }
  return result;
}

RegistrationResult register_to_nominal(const PointCloud& cloud, const RigidPlacement& rough,
                                       const std::vector<NominalSurface>& surfaces,
                                       const RegistrationOptions& options) {
  // A thinned copy of the cloud: every k-th point, vectors kept (normal agreement).
  const std::size_t n = cloud.size();
  const std::size_t most = std::max<std::size_t>(1, options.max_points);
  const std::size_t step = std::max<std::size_t>(1, (n + most - 1) / most);
  PointCloud thin;
  const auto m = static_cast<Eigen::Index>((n + step - 1) / step);
  thin.points.resize(3, m);
  if (cloud.has_vectors()) thin.vectors.resize(3, m);
  for (Eigen::Index k = 0; k < m; ++k) {
    const Eigen::Index from = k * static_cast<Eigen::Index>(step);
    thin.points.col(k) = cloud.points.col(from);
    if (cloud.has_vectors()) thin.vectors.col(k) = cloud.vectors.col(from);
  }

  RegistrationResult result;
  result.placement = rough;
  SegmentOptions capture = options.segment;
  capture.band *= std::max(1.0, options.capture_factor);
  capture.margin =
      options.segment.margin.value_or(options.segment.band) * std::max(1.0, options.capture_factor);
  const std::array<const SegmentOptions*, 2> stages = {&capture, &options.segment};
  for (const SegmentOptions* stage : stages) {
    for (std::size_t iteration = 0; iteration < options.max_iterations; ++iteration) {
      const SegmentationResult taken = segment_scan(thin, result.placement, surfaces, *stage);
      // Point-to-plane: r_i = n_i . (q_i - foot_i); a small motion (w, v) of the placed points
      // changes it by (q_i x n_i) . w + n_i . v.
      Eigen::Matrix<double, 6, 6> normal = Eigen::Matrix<double, 6, 6>::Zero();
      Eigen::Matrix<double, 6, 1> rhs = Eigen::Matrix<double, 6, 1>::Zero();
      double squares = 0.0;
      std::size_t count = 0;
      for (std::size_t k = 0; k < surfaces.size(); ++k) {
        const NominalSurface& s = surfaces[k];
        for (std::size_t i : taken.surfaces[k].indices) {
          const Eigen::Vector3d q = placed_point(thin, result.placement, i);
          const Eigen::Vector3d rel = q - s.origin;
          Eigen::Vector3d nrm = s.direction;
          double r = s.direction.dot(rel);
          if (s.kind == NominalSurface::Kind::cylinder) {
            const Eigen::Vector3d radial = rel - s.direction.dot(rel) * s.direction;
            const double length = radial.norm();
            if (!(length > 0.0)) continue;
            nrm = radial / length;
            r = length - s.radius;
          }
          Eigen::Matrix<double, 6, 1> row;
          row << q.cross(nrm), nrm;
          normal.noalias() += row * row.transpose();
          rhs.noalias() -= row * r;
          squares += r * r;
          ++count;
        }
      }
      if (count == 0)
        throw std::invalid_argument(
            "register_to_nominal: no point of the cloud lies within the band of a datum feature's "
            "nominal surface with the rough placement");
      result.points = count;
      result.rms = std::sqrt(squares / static_cast<double>(count));
      // Rank-revealing: a direction the surfaces leave free (its eigenvalue below 1e-10 of the
      // largest) gets no step.
      const Eigen::SelfAdjointEigenSolver<Eigen::Matrix<double, 6, 6>> eigen(normal);
      const double largest = eigen.eigenvalues().maxCoeff();
      Eigen::Matrix<double, 6, 1> x = Eigen::Matrix<double, 6, 1>::Zero();
      result.free_directions = 0;
      for (int j = 0; j < 6; ++j) {
        const double value = eigen.eigenvalues()[j];
        if (!(value > 1e-10 * largest)) {
          ++result.free_directions;
          continue;
        }
        const Eigen::Matrix<double, 6, 1> v = eigen.eigenvectors().col(j);
        x += v * (v.dot(rhs) / value);
      }
      const Eigen::Vector3d w = x.head<3>(), v = x.tail<3>();
      const double angle = w.norm();
      const Eigen::Matrix3d turn =
          angle > 0.0 ? Eigen::AngleAxisd(angle, w / angle).toRotationMatrix()
                      : Eigen::Matrix3d::Identity();
      result.placement.rotation = turn * result.placement.rotation;
      result.placement.translation = turn * result.placement.translation + v;
      ++result.iterations;
      result.converged = angle * options.reach + v.norm() < options.tolerance;
      if (result.converged) break;
    }
  }
  // Keep the rotation orthonormal to rounding after many small turns.
  const Eigen::JacobiSVD<Eigen::Matrix3d> svd(result.placement.rotation,
                                              Eigen::ComputeFullU | Eigen::ComputeFullV);
  result.placement.rotation = svd.matrixU() * svd.matrixV().transpose();
  return result;
}

}  // namespace cylzone
