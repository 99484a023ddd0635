// Segmenting a whole-part scan among the nominal surfaces (segment_scan.hpp states the method).
#include "cylzone/prepare/segment_scan.hpp"

#include "cylzone/prepare/neighbour_index.hpp"
#include "detail/fit_support.hpp"
#include "detail/parallel.hpp"

#include <Eigen/Eigenvalues>
#include <Eigen/Geometry>
#include <Eigen/SVD>

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <limits>
#include <memory>
#include <stdexcept>
#include <string>
#include <utility>

namespace cylzone {
namespace {

constexpr double kPi = 3.14159265358979323846;

/// Points per chunk of segment_scan's pass, fixed by the data alone (never by the thread
/// count), so the chunks and the result are the same for any `threads`.
constexpr std::size_t kSegmentChunk = std::size_t{1} << 16;

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
/// Blocks of kSegmentChunk indices are copied on `threads` (pure copies into their own
/// columns: the same result for any count).
PointCloud gather(const PointCloud& cloud, const std::vector<std::size_t>& indices,
                  std::size_t threads) {
  const auto n = static_cast<Eigen::Index>(indices.size());
  const bool vectors = cloud.has_vectors();
  const bool lines = cloud.lines.size() == cloud.size();
  PointCloud out;
  out.source = cloud.source;
  out.file_unit = cloud.file_unit;
  out.points.resize(3, n);
  if (vectors) out.vectors.resize(3, n);
  if (lines) out.lines.resize(indices.size());
  const std::size_t blocks = (indices.size() + kSegmentChunk - 1) / kSegmentChunk;
  detail::parallel_for(blocks, threads, [&](std::size_t b, std::size_t) {
    const auto first = static_cast<Eigen::Index>(b * kSegmentChunk);
    const Eigen::Index last = std::min(n, first + static_cast<Eigen::Index>(kSegmentChunk));
    for (Eigen::Index at = first; at < last; ++at) {
      const std::size_t i = indices[static_cast<std::size_t>(at)];
      const auto from = static_cast<Eigen::Index>(i);
      out.points.col(at) = cloud.points.col(from);
      if (vectors) out.vectors.col(at) = cloud.vectors.col(from);
      if (lines) out.lines[static_cast<std::size_t>(at)] = cloud.lines[i];
    }
  });
  return out;
}

}  // namespace

// ---------------------------------------------------------------- finding a placement

namespace {

/// Up to `most` indices of the cloud's points, every k-th by rank of distance from the cloud's
/// centroid (ties by index): the choice follows the part's shape, not its pose on the machine
/// nor the order of the points. In rank order.
std::vector<std::size_t> ranked_sample(const PointCloud& cloud, std::size_t most) {
  const std::size_t n = cloud.size();
  if (n == 0 || most == 0) return {};
  const Eigen::Vector3d centroid = cloud.points.rowwise().mean();
  std::vector<std::pair<double, std::size_t>> ranked(n);
  for (std::size_t i = 0; i < n; ++i)
    ranked[i] = {(cloud.points.col(static_cast<Eigen::Index>(i)) - centroid).squaredNorm(), i};
  std::sort(ranked.begin(), ranked.end());
  const std::size_t step = (n + most - 1) / most;
  std::vector<std::size_t> out;
  out.reserve(n / step + 1);
  for (std::size_t k = 0; k < n; k += step) out.push_back(ranked[k].second);
  return out;
}

/// The sample as a cloud of oriented points: the cloud's own vectors (unit), or the normal of
/// the least-squares plane through each point and its 12 nearest neighbours among up to
/// 100,000 points chosen the same way (PCA normal estimation, Hoppe et al., SIGGRAPH 1992).
PointCloud oriented_sample(const PointCloud& cloud, std::size_t most) {
  PointCloud out;
  std::vector<Eigen::Vector3d> points, normals;
  if (cloud.has_vectors()) {
    for (std::size_t i : ranked_sample(cloud, most)) {
      const Eigen::Vector3d v = cloud.vectors.col(static_cast<Eigen::Index>(i));
      if (!(v.norm() > 0.0)) continue;
      points.push_back(cloud.points.col(static_cast<Eigen::Index>(i)));
      normals.push_back(v.normalized());
    }
  } else {
    const std::vector<std::size_t> dense = ranked_sample(cloud, std::max<std::size_t>(most, 100000));
    if (dense.size() < 4) return out;  // too few points for a neighbourhood
    Eigen::Matrix3Xd at(3, static_cast<Eigen::Index>(dense.size()));
    for (std::size_t k = 0; k < dense.size(); ++k)
      at.col(static_cast<Eigen::Index>(k)) = cloud.points.col(static_cast<Eigen::Index>(dense[k]));
    const NeighbourIndex index(at);
    NeighbourIndex::Query query(12);
    const std::size_t step = (dense.size() + most - 1) / std::max<std::size_t>(1, most);
    for (std::size_t k = 0; k < dense.size(); k += std::max<std::size_t>(1, step)) {
      const std::vector<std::uint32_t>& near = query.of_point(index, k);
      if (near.size() < 3) continue;
      Eigen::Vector3d mean = at.col(static_cast<Eigen::Index>(k));
      for (std::uint32_t j : near) mean += at.col(j);
      mean /= static_cast<double>(near.size() + 1);
      Eigen::Matrix3d scatter = Eigen::Matrix3d::Zero();
      const Eigen::Vector3d d0 = at.col(static_cast<Eigen::Index>(k)) - mean;
      scatter += d0 * d0.transpose();
      for (std::uint32_t j : near) {
        const Eigen::Vector3d d = at.col(j) - mean;
        scatter += d * d.transpose();
      }
      const Eigen::SelfAdjointEigenSolver<Eigen::Matrix3d> eigen(scatter);
      points.push_back(at.col(static_cast<Eigen::Index>(k)));
      normals.push_back(eigen.eigenvectors().col(0));
    }
  }
  out.points.resize(3, static_cast<Eigen::Index>(points.size()));
  out.vectors.resize(3, static_cast<Eigen::Index>(points.size()));
  for (std::size_t k = 0; k < points.size(); ++k) {
    out.points.col(static_cast<Eigen::Index>(k)) = points[k];
    out.vectors.col(static_cast<Eigen::Index>(k)) = normals[k];
  }
  return out;
}

/// The unit normal of a nominal surface at `q` (radial for a cylinder; zero on its axis).
Eigen::Vector3d normal_at(const NominalSurface& s, const Eigen::Vector3d& q) {
  if (s.kind == NominalSurface::Kind::plane) return s.direction;
  const Eigen::Vector3d rel = q - s.origin;
  const Eigen::Vector3d radial = rel - s.direction.dot(rel) * s.direction;
  const double r = radial.norm();
  return r > 0.0 ? Eigen::Vector3d(radial / r) : Eigen::Vector3d::Zero();
}

/// `s` turned by `rotation` about the origin.
NominalSurface turned(const NominalSurface& s, const Eigen::Matrix3d& rotation) {
  NominalSurface t = s;
  t.origin = rotation * s.origin;
  t.direction = rotation * s.direction;
  t.u_axis = rotation * s.u_axis;
  t.v_axis = rotation * s.v_axis;
  return t;
}

/// A plane through `point` with unit normal `normal` and the sample points supporting it.
struct PlaneHypothesis {
  Eigen::Vector3d normal, point;
  std::size_t support = 0;
};

/// The least-squares plane of the sample points within `tau` of the plane through `point`
/// along `normal` whose normals agree within `min_cos`; the normal keeps the sense of `normal`.
PlaneHypothesis refit_plane(const PointCloud& sample, const Eigen::Vector3d& normal,
                            const Eigen::Vector3d& point, double tau, double min_cos) {
  PlaneHypothesis plane{normal, point, 0};
  for (int round = 0; round < 2; ++round) {
    Eigen::Vector3d mean = Eigen::Vector3d::Zero();
    std::vector<Eigen::Index> on;
    for (Eigen::Index j = 0; j < sample.points.cols(); ++j)
      if (std::abs(plane.normal.dot(sample.points.col(j) - plane.point)) <= tau &&
          std::abs(plane.normal.dot(sample.vectors.col(j))) >= min_cos) {
        on.push_back(j);
        mean += sample.points.col(j);
      }
    plane.support = on.size();
    if (on.size() < 3) return plane;
    mean /= static_cast<double>(on.size());
    Eigen::Matrix3d scatter = Eigen::Matrix3d::Zero();
    for (Eigen::Index j : on) {
      const Eigen::Vector3d d = sample.points.col(j) - mean;
      scatter += d * d.transpose();
    }
    const Eigen::SelfAdjointEigenSolver<Eigen::Matrix3d> eigen(scatter);
    Eigen::Vector3d n = eigen.eigenvectors().col(0);
    if (n.dot(normal) < 0.0) n = -n;
    plane.normal = n;
    plane.point = mean;
  }
  return plane;
}

/// The largest displacement of any sample point between two placements (mm).
double placement_distance(const PointCloud& sample, const RigidPlacement& a,
                          const RigidPlacement& b) {
  double most = 0.0;
  for (Eigen::Index j = 0; j < sample.points.cols(); ++j) {
    const Eigen::Vector3d p = sample.points.col(j);
    most = std::max(most, ((a.rotation * p + a.translation) - (b.rotation * p + b.translation)).norm());
  }
  return most;
}

/// A refined hypothesis and its score on the sample.
struct Candidate {
  RegistrationResult registration;
  std::size_t inliers = 0;
  bool every_surface = false;
};

std::string mm_text(double mm) {
  char text[48];
  std::snprintf(text, sizeof text, "%.4g mm", mm);
  return text;
}

}  // namespace

PlacementSearchResult find_placement(const PointCloud& cloud,
                                     const std::vector<NominalSurface>& datums,
                                     const PlacementSearchOptions& options) {
  const SegmentOptions& segment = options.segment;
  const double band = segment.band;
  if (!(band > 0.0) || !std::isfinite(band))
    throw std::invalid_argument("find_placement: the band must be a positive finite length");
  if (datums.size() < 2 || datums[0].kind != NominalSurface::Kind::plane ||
      datums[1].kind != NominalSurface::Kind::cylinder)
    throw std::invalid_argument("find_placement: the datum surfaces must be A (a plane), then B "
                                "(a cylinder), then C's");
  PlacementSearchResult result;
  if (datums.size() < 3) {
    result.status = PlacementSearchResult::Status::underdetermined;
    result.message = "datum A and B alone leave the rotation about B's axis free: without C "
                     "nothing in the nominal datum features fixes it";
    return result;
  }
  const NominalSurface& b_surface = datums[1];
  const std::vector<NominalSurface> c_surfaces(datums.begin() + 2, datums.end());
  // The capture band: wide enough for the coarse hypotheses (a plane from sample normals, a
  // centre from circle votes), narrowed to `band` by the refinement.
  const double tau = std::max(4.0 * band, 0.05 * b_surface.radius);
  const double plane_cos = std::cos(20.0 * kPi / 180.0);
  const double wall_sin = std::sin(20.0 * kPi / 180.0);
  const double agree_cos = std::cos(30.0 * kPi / 180.0);

  const PointCloud sample = oriented_sample(cloud, std::max<std::size_t>(3, options.sample_points));
  const auto S = sample.points.cols();

  // 2. Datum A: tangent planes of the sample points, by support; distinct ones refitted.
  std::vector<std::pair<std::size_t, Eigen::Index>> by_support;
  for (Eigen::Index i = 0; i < S; ++i) {
    const Eigen::Vector3d n = sample.vectors.col(i), p = sample.points.col(i);
    std::size_t support = 0;
    for (Eigen::Index j = 0; j < S; ++j)
      support += std::abs(n.dot(sample.points.col(j) - p)) <= tau &&
                 std::abs(n.dot(sample.vectors.col(j))) >= plane_cos;
    by_support.emplace_back(support, i);
  }
  std::stable_sort(by_support.begin(), by_support.end(),
                   [](const auto& a, const auto& b) { return a.first > b.first; });
  std::vector<PlaneHypothesis> planes;
  for (const auto& [support, i] : by_support) {
    if (planes.size() >= options.plane_candidates || support < 3) break;
    bool known = false;
    for (const PlaneHypothesis& k : planes)
      known = known || (std::abs(k.normal.dot(sample.vectors.col(i))) >= plane_cos &&
                        std::abs(k.normal.dot(sample.points.col(i) - k.point)) <= tau);
    if (known) continue;
    const PlaneHypothesis plane =
        refit_plane(sample, sample.vectors.col(i), sample.points.col(i), tau, plane_cos);
    if (plane.support >= 3) planes.push_back(plane);
  }

  std::vector<Candidate> candidates;
  for (const PlaneHypothesis& plane : planes)
    for (const double side : {1.0, -1.0}) {
      // The hypothesis' own axes: z out of the material, e1 and e2 any pair in the plane (the
      // clocking search below covers every turn about z).
      const Eigen::Vector3d z = side * plane.normal;
      const Eigen::Vector3d e1 = perpendicular(z), e2 = z.cross(e1);
      Eigen::Matrix3d axes;
      axes.row(0) = e1.transpose();
      axes.row(1) = e2.transpose();
      axes.row(2) = z.transpose();
      // Local coordinates and normals of the wall points (normals within 20 degrees of A's
      // plane).
      std::vector<Eigen::Vector3d> wall, wall_normal;
      for (Eigen::Index j = 0; j < S; ++j) {
        const Eigen::Vector3d n = axes * Eigen::Vector3d(sample.vectors.col(j));
        if (std::abs(n.z()) > wall_sin) continue;
        wall.push_back(axes * (Eigen::Vector3d(sample.points.col(j)) - plane.point));
        wall_normal.push_back(Eigen::Vector3d(n.x(), n.y(), 0.0).normalized());
      }
      // 3. Datum B: votes for centres of circles of B's radius from the walls within B's depth.
      std::vector<Eigen::Vector2d> votes;
      for (std::size_t j = 0; j < wall.size(); ++j) {
        if (wall[j].z() < b_surface.low - tau || wall[j].z() > b_surface.high + tau) continue;
        for (const double sense : {1.0, -1.0})
          votes.push_back(wall[j].head<2>() + sense * b_surface.radius * wall_normal[j].head<2>());
      }
      std::vector<std::pair<std::size_t, std::size_t>> dense;
      for (std::size_t v = 0; v < votes.size(); ++v) {
        std::size_t count = 0;
        for (const Eigen::Vector2d& w : votes) count += (w - votes[v]).norm() <= tau;
        dense.emplace_back(count, v);
      }
      std::stable_sort(dense.begin(), dense.end(),
                       [](const auto& a, const auto& b) { return a.first > b.first; });
      std::vector<Eigen::Vector2d> centres;
      for (const auto& [count, v] : dense) {
        if (centres.size() >= options.centre_candidates || count < 3) break;
        bool known = false;
        for (const Eigen::Vector2d& c : centres) known = known || (c - votes[v]).norm() <= 2.0 * tau;
        if (known) continue;
        Eigen::Vector2d mean = Eigen::Vector2d::Zero();
        std::size_t near = 0;
        for (const Eigen::Vector2d& w : votes)
          if ((w - votes[v]).norm() <= tau) {
            mean += w;
            ++near;
          }
        centres.push_back(mean / static_cast<double>(near));
      }
      // 4. The rotation about B's axis: C's surfaces turned in steps, scored by wall points.
      double reach = 0.0, inner = std::numeric_limits<double>::infinity();
      for (const NominalSurface& c : c_surfaces) {
        if (c.kind == NominalSurface::Kind::cylinder) {
          const double r = c.origin.head<2>().norm();
          reach = std::max(reach, r + c.radius);
          inner = std::min(inner, std::max(0.0, r - c.radius));
        } else {
          for (double u : {c.u_low, c.u_high})
            for (double v : {c.v_low, c.v_high})
              reach = std::max(reach, (c.origin + u * c.u_axis + v * c.v_axis).head<2>().norm());
          inner = 0.0;  // a face may pass near B's axis: every wall point within reach
        }
      }
      const auto steps = static_cast<std::size_t>(
          std::clamp(std::ceil(2.0 * kPi * reach / (0.5 * tau)), 72.0, 7200.0));
      for (const Eigen::Vector2d& centre : centres) {
        std::vector<Eigen::Vector3d> near, near_normal;
        for (std::size_t j = 0; j < wall.size(); ++j) {
          const Eigen::Vector3d q(wall[j].x() - centre.x(), wall[j].y() - centre.y(), wall[j].z());
          const double r = q.head<2>().norm();
          if (r < inner - tau || r > reach + tau) continue;
          near.push_back(q);
          near_normal.push_back(wall_normal[j]);
        }
        std::vector<std::size_t> score(steps, 0);
        for (std::size_t k = 0; k < steps; ++k) {
          const Eigen::Matrix3d turn =
              Eigen::AngleAxisd(2.0 * kPi * static_cast<double>(k) / static_cast<double>(steps),
                                Eigen::Vector3d::UnitZ())
                  .toRotationMatrix();
          std::vector<NominalSurface> placed;
          for (const NominalSurface& c : c_surfaces) placed.push_back(turned(c, turn));
          for (std::size_t j = 0; j < near.size(); ++j)
            for (const NominalSurface& c : placed)
              if (bounded_distance(c, near[j]) <= tau &&
                  std::abs(normal_at(c, near[j]).dot(near_normal[j])) >= agree_cos) {
                ++score[k];
                break;
              }
        }
        // Peaks: local maxima holding at least half the best score, 10 degrees apart.
        const std::size_t best = *std::max_element(score.begin(), score.end());
        std::vector<std::pair<std::size_t, std::size_t>> peaks;
        for (std::size_t k = 0; k < steps; ++k) {
          const std::size_t before = score[(k + steps - 1) % steps], after = score[(k + 1) % steps];
          if (score[k] >= 3 && 2 * score[k] >= best && score[k] >= before && score[k] >= after)
            peaks.emplace_back(score[k], k);
        }
        std::stable_sort(peaks.begin(), peaks.end(),
                         [](const auto& a, const auto& b) { return a.first > b.first; });
        std::vector<std::size_t> kept;
        const std::size_t apart = std::max<std::size_t>(1, steps / 36);
        for (const auto& [value, k] : peaks) {
          if (kept.size() >= 4) break;
          bool close = false;
          for (std::size_t m : kept) {
            const std::size_t gap = k > m ? k - m : m - k;
            close = close || std::min(gap, steps - gap) < apart;
          }
          if (!close) kept.push_back(k);
        }
        for (std::size_t k : kept) {
          // The hypothesis: part = Rz(-theta) * axes * (p - origin), origin B's axis on A.
          const double theta = 2.0 * kPi * static_cast<double>(k) / static_cast<double>(steps);
          const Eigen::Vector3d origin = plane.point + centre.x() * e1 + centre.y() * e2;
          RigidPlacement start;
          start.rotation =
              Eigen::AngleAxisd(-theta, Eigen::Vector3d::UnitZ()).toRotationMatrix() * axes;
          start.translation = -(start.rotation * origin);
          ++result.hypotheses;
          // 5. Refined on the sample, bands from the capture band down to the plan's.
          Candidate candidate;
          candidate.registration.placement = start;
          bool lost = false;
          for (double stage = tau;; stage = std::max(band, 0.5 * stage)) {
            RegistrationOptions refine;
            refine.segment = segment;
            refine.segment.band = stage;
            refine.segment.margin = std::max(stage, segment.margin.value_or(band));
            refine.capture_factor = 1.0;
            refine.max_iterations = 30;
            refine.max_points = static_cast<std::size_t>(S);
            try {
              candidate.registration =
                  register_to_nominal(sample, candidate.registration.placement, datums, refine);
            } catch (const std::invalid_argument&) {
              lost = true;
              break;
            }
            if (stage <= band) break;
          }
          if (lost) continue;
          const SegmentationResult taken =
              segment_scan(sample, candidate.registration.placement, datums, segment);
          candidate.every_surface = true;
          for (const SurfaceSegment& one : taken.surfaces) {
            candidate.inliers += one.indices.size();
            candidate.every_surface = candidate.every_surface && !one.indices.empty();
          }
          candidates.push_back(std::move(candidate));
        }
      }
    }

  if (candidates.empty()) {
    result.status = PlacementSearchResult::Status::no_match;
    result.message = std::string("no placement to try: the scan shows no plane with walls of "
                                 "datum B's nominal radius within B's depth") +
                     (cloud.has_vectors()
                          ? ""
                          : " (the cloud has no vectors: normals from 12 nearest neighbours "
                            "need a dense scan, not points probed in rings)");
    return result;
  }
  // Best first: every datum surface taking points, then the most points in the bands, then the
  // smallest rms (a stable sort keeps the hypotheses' data-decided order on exact ties).
  std::stable_sort(candidates.begin(), candidates.end(),
                   [](const Candidate& a, const Candidate& b) {
                     if (a.every_surface != b.every_surface) return a.every_surface;
                     if (a.inliers != b.inliers) return a.inliers > b.inliers;
                     return a.registration.rms < b.registration.rms;
                   });
  const Candidate& best = candidates.front();
  result.inliers = best.inliers;
  result.best_rms = best.registration.rms;
  for (std::size_t k = 1; k < candidates.size(); ++k) {
    const double apart = placement_distance(sample, best.registration.placement,
                                            candidates[k].registration.placement);
    if (apart <= 2.0 * band) continue;  // the same placement, reached from another start
    result.runner_up_inliers = candidates[k].inliers;
    result.runner_up_distance = apart;
    break;
  }
  const std::string best_text = std::to_string(best.inliers) + " of " + std::to_string(S) +
                                " sample points within the band";
  if (!best.every_surface) {
    result.status = PlacementSearchResult::Status::no_match;
    result.message = "no placement fits: the best of " + std::to_string(result.hypotheses) +
                     " tried (rms " + mm_text(best.registration.rms) + ") has " + best_text +
                     " and leaves a datum surface without any";
    return result;
  }
  if (result.runner_up_distance > 0.0 &&
      static_cast<double>(result.runner_up_inliers) >=
          options.ambiguity_share * static_cast<double>(best.inliers)) {
    result.status = PlacementSearchResult::Status::ambiguous;
    result.message = "the nominal datum features are symmetric: two placements fit equally (" +
                     std::to_string(best.inliers) + " and " +
                     std::to_string(result.runner_up_inliers) +
                     " sample points in the bands) but put the part up to " +
                     mm_text(result.runner_up_distance) + " apart";
    return result;
  }
  // The best refined on up to refine_points of the cloud (chosen by rank, as the sample).
  const std::vector<std::size_t> chosen = ranked_sample(cloud, options.refine_points);
  PointCloud refine_cloud;
  refine_cloud.points.resize(3, static_cast<Eigen::Index>(chosen.size()));
  if (cloud.has_vectors()) refine_cloud.vectors.resize(3, refine_cloud.points.cols());
  for (std::size_t k = 0; k < chosen.size(); ++k) {
    refine_cloud.points.col(static_cast<Eigen::Index>(k)) =
        cloud.points.col(static_cast<Eigen::Index>(chosen[k]));
    if (cloud.has_vectors())
      refine_cloud.vectors.col(static_cast<Eigen::Index>(k)) =
          cloud.vectors.col(static_cast<Eigen::Index>(chosen[k]));
  }
  RegistrationOptions last;
  last.segment = segment;
  last.max_points = std::max<std::size_t>(1, chosen.size());
  result.registration = register_to_nominal(refine_cloud, best.registration.placement, datums, last);
  result.best_rms = result.registration.rms;
  if (result.registration.free_directions > 0) {
    result.status = PlacementSearchResult::Status::underdetermined;
    result.message = "the nominal datum features leave " +
                     std::to_string(result.registration.free_directions) +
                     " direction(s) of motion free";
    return result;
  }
  // Accepted when every datum surface holds enough points closely: a surface matched to the
  // wrong feature (another radius, another face) keeps only stray points spread over the band,
  // whose rms is about band / sqrt(3), and a cylinder only short arcs where two circles cross.
  // C's few points alone fix the turn about B's axis, so they are not enough: at least
  // `min_points` on each surface, a cylinder's covering `min_coverage_deg` about its axis.
  const SegmentationResult taken =
      segment_scan(refine_cloud, result.registration.placement, datums, segment);
  for (std::size_t k = 0; k < datums.size(); ++k) {
    double squares = 0.0;
    for (std::size_t i : taken.surfaces[k].indices) {
      const double d =
          bounded_distance(datums[k], placed_point(refine_cloud, result.registration.placement, i));
      squares += d * d;
    }
    const std::size_t n = taken.surfaces[k].indices.size();
    const double rms = n > 0 ? std::sqrt(squares / static_cast<double>(n))
                             : std::numeric_limits<double>::infinity();
    const double coverage = taken.surfaces[k].angular_coverage_deg.value_or(360.0);
    if (n < options.min_points || !(rms <= options.acceptance_rms_share * band) ||
        coverage < options.min_coverage_deg) {
      result.status = PlacementSearchResult::Status::no_match;
      const bool arc = taken.surfaces[k].angular_coverage_deg.has_value();
      result.message = "no placement fits: the best of " + std::to_string(result.hypotheses) +
                       " tried (rms " + mm_text(result.best_rms) + ") leaves " + datums[k].name +
                       " " + std::to_string(n) + " points" +
                       (n > 0 ? ", rms " + mm_text(rms) : std::string()) +
                       (arc ? ", " + std::to_string(static_cast<int>(coverage)) + " deg around"
                            : std::string()) +
                       " (needed: " + std::to_string(options.min_points) + ", " +
                       mm_text(options.acceptance_rms_share * band) +
                       (arc ? ", " + std::to_string(static_cast<int>(options.min_coverage_deg)) +
                                  " deg"
                            : std::string()) +
                       ")";
      return result;
    }
  }
  result.status = PlacementSearchResult::Status::found;
  result.message = "placement found from " + std::to_string(result.hypotheses) +
                   " hypotheses: " + best_text;
  return result;
}

std::vector<PointCloud> split_cloud(const PointCloud& cloud, const SegmentationResult& segments,
                                    std::size_t threads) {
  std::vector<PointCloud> out;
  out.reserve(segments.surfaces.size());
  for (const SurfaceSegment& segment : segments.surfaces)
    out.push_back(gather(cloud, segment.indices, threads));
  return out;
}

std::vector<PointCloud> split_cloud(const PointCloud& cloud, SegmentationResult&& segments,
                                    std::size_t threads) {
  std::vector<PointCloud> out;
  out.reserve(segments.surfaces.size());
  for (SurfaceSegment& segment : segments.surfaces) {
    out.push_back(gather(cloud, segment.indices, threads));
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
  if (surfaces.size() >= std::numeric_limits<std::uint32_t>::max())
    throw std::invalid_argument("segment_scan: too many surfaces");

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

  // The pass runs on the `threads` option in chunks of kSegmentChunk points fixed by the cloud
  // alone (detail/parallel.hpp). Each point's surface is written to a label array (its own
  // slot, so no order matters); each chunk counts its points per surface; the azimuth
  // buckets and axial ranges are per worker and hold only minima and maxima, which merge to
  // the same values in any order (the exact range of ArcCoverage, whose ties would depend on
  // order, is used only below 2^15 points: one chunk). A second pass writes each chunk's
  // indices at the offsets its counts give, so every surface's indices stay ascending: the
  // same result, bit for bit, for any thread count.
  const std::size_t none = surfaces.size();
  const std::size_t chunks = (n + kSegmentChunk - 1) / kSegmentChunk;
  const std::size_t workers = detail::worker_count(chunks, options.threads);
  // Every label is written by the pass: not zero-filled first (that would touch each page twice).
  std::unique_ptr<std::uint32_t[]> label(new std::uint32_t[n]);
  std::vector<std::size_t> counts(chunks * (none + 1), 0);
  std::vector<std::vector<double>> worker_min(workers, s_min), worker_max(workers, s_max);
  std::vector<std::vector<detail::ArcCoverage>> worker_coverage(workers);
  for (std::size_t w = 1; w < workers; ++w) {
    for (const NominalSurface& s : surfaces)
      worker_coverage[w].emplace_back(s.kind == NominalSurface::Kind::cylinder ? n : 1);
  }
  detail::parallel_for(chunks, options.threads, [&](std::size_t c, std::size_t w) {
    std::vector<detail::ArcCoverage>& arcs = w == 0 ? coverage : worker_coverage[w];
    std::vector<double>& low = worker_min[w];
    std::vector<double>& high = worker_max[w];
    std::size_t* count = counts.data() + c * (none + 1);
    const std::size_t end = std::min(n, (c + 1) * kSegmentChunk);
    for (std::size_t i = c * kSegmentChunk; i < end; ++i) {
      const Eigen::Vector3d q = R * cloud.points.col(static_cast<Eigen::Index>(i)) + t;
      std::size_t best = none;
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
        if (best == none || distance < best_distance) {
          best = k;
          best_distance = distance;
        }
      }
      label[i] = static_cast<std::uint32_t>(best);
      ++count[best];
      if (best == none) continue;
      const NominalSurface& s = surfaces[best];
      if (s.kind != NominalSurface::Kind::cylinder) continue;
      const Eigen::Vector3d rel = q - s.origin;
      const double axial = s.direction.dot(rel);
      low[best] = std::min(low[best], axial);
      high[best] = std::max(high[best], axial);
      arcs[best].add(frames[best].first.dot(rel), frames[best].second.dot(rel));
    }
  });
  for (std::size_t w = 0; w < workers; ++w)
    for (std::size_t k = 0; k < none; ++k) {
      s_min[k] = std::min(s_min[k], worker_min[w][k]);
      s_max[k] = std::max(s_max[k], worker_max[w][k]);
      if (w > 0 && surfaces[k].kind == NominalSurface::Kind::cylinder)
        coverage[k].merge(worker_coverage[w][k]);
    }
  worker_coverage.clear();
  // Each chunk's first position in each surface's indices: the counts of the chunks before it.
  std::vector<std::size_t> total(none + 1, 0);
  std::vector<std::size_t> offset(counts.size());
  for (std::size_t c = 0; c < chunks; ++c)
    for (std::size_t k = 0; k <= none; ++k) {
      offset[c * (none + 1) + k] = total[k];
      total[k] += counts[c * (none + 1) + k];
    }
  result.unassigned = total[none];
  for (std::size_t k = 0; k < none; ++k) result.surfaces[k].indices.resize(total[k]);
  detail::parallel_for(chunks, options.threads, [&](std::size_t c, std::size_t) {
    std::size_t* at = offset.data() + c * (none + 1);
    const std::size_t end = std::min(n, (c + 1) * kSegmentChunk);
    for (std::size_t i = c * kSegmentChunk; i < end; ++i) {
      const std::uint32_t k = label[i];
      if (k != none) result.surfaces[k].indices[at[k]++] = i;
    }
  });
  label.reset();

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
