// Datum mobility: what a datum reference leaves free, and the best use of it for a pattern.
//
// Method of best_frame_motion. The moved frame has its origin at s and its axes turned by theta
// about z (see position_after_frame_motion). For a fixed theta, every bore's deviation at an
// evaluated height (the ends of a straight axis, or a median line's section centres) is an
// affine function M s + b of the shift, so the worst ratio
//     F(s; theta) = max_m  w_m |M_m s + b_m|,   w_m = 2 / allowed of the term's bore,
// is a maximum of norms of affine maps: convex in s (a second-order cone programme in two
// unknowns). The allowed shifts form a convex set: a disk (datum feature shift at MMB), the
// plane (no datum B), the origin (B at RMB), intersected with a strip when datum C at MMB lets
// the rotation deviate within C's own allowance, or a chord when C's simulator translates and
// the rotation follows C; with C's simulator fixed at basic the shift is a function of the
// rotation (the part turns about C's axis), a single point per rotation, or with C at MMB the
// overlap of B's disk and a disk of C's room about that point. The rotation is
// one-dimensional and F is not convex in it in general.
//
// Solution: an outer search over theta (a coarse scan of the bracket, then golden-section
// search on the interval around the best sample, which handles several local minima of a
// non-convex function as long as the scan resolves them) around an inner convex solve in s:
// nested golden-section searches (Kiefer 1953; Press et al., Numerical Recipes 3rd ed., 10.2)
// in the coordinates of the strip (or of the frame): G(x) = min over y of F(x, y) is convex
// because partial minimisation of a convex function over a convex set preserves convexity
// (Boyd & Vandenberghe, Convex Optimization, 3.2.5), so both levels are unimodal and the
// golden-section search converges to the minimum; its interval shrinks by 0.618 per step, to a
// length below tolerance / (Lipschitz constant of F), so the worst ratio is found to
// MobilityOptions::tolerance. No random starts, no hidden state: deterministic.

#include "cylzone/evaluate/datum_mobility.hpp"

#include <Eigen/Geometry>
#include <Eigen/LU>
#include <Eigen/SVD>
#include <algorithm>
#include <array>
#include <cmath>
#include <limits>
#include <optional>
#include <utility>

#include "cylzone/core/errors.hpp"
#include "cylzone/evaluate/material_condition.hpp"
#include "detail/fit_support.hpp"
#include "detail/golden_section.hpp"
#include "evaluate/detail/boundary_clearance.hpp"

namespace cylzone {
namespace {

constexpr double pi = 3.14159265358979323846;
constexpr double infinity = std::numeric_limits<double>::infinity();

const DatumReference* find_reference(const std::vector<DatumReference>& datums, char label) {
  for (const DatumReference& d : datums)
    if (d.label == label) return &d;
  return nullptr;
}

/// Shift allowance of a datum feature of size at MMB, from its related envelope (or width) and
/// its MMB size. Falls back on the frame's own figure without limits.
template <class Datum>
double mmb_allowance(const Datum& datum, double mating_size) {
  const DatumShiftAtMmb shift = datum_shift_at_mmb(datum.kind, datum.size, datum.mmb_size, mating_size);
  return shift.boundary_size ? shift.allowance : datum.shift_allowance;
}

/// C's simulator fixed at basic: the origin s = c - R(theta) c_held that keeps the part's C axis
/// on the simulator, which lies on C's basic ray at the held distance from the moved origin.
Eigen::Vector2d origin_about_c(const FrameMobility& m, double theta) {
  const Eigen::Vector2d held = (m.c_held_distance / m.c_location.norm()) * m.c_location;
  return m.c_location - Eigen::Rotation2Dd(theta) * held;
}

/// The rotations that keep |c - R(theta) c_held| within r, B's clearance plus C's own room at
/// MMB (the two disks of the allowed origins then meet): by the law of cosines
/// |theta| <= 2 asin(sqrt((r^2 - (|c| - held)^2) / (4 |c| held))), written so that a small
/// angle keeps its digits.
double rotation_about_c_limit(const FrameMobility& m) {
  const double c = m.c_location.norm(), held = m.c_held_distance;
  const double r = m.shift_allowance + m.c_shift_allowance;
  const double gap = c - held;
  // C held at the end of the clearance (mobility_of clamps it there) leaves no rotation; the
  // test allows for the rounding of that clamp.
  if (!(std::abs(gap) < r * (1.0 - 1e-9))) return 0.0;
  const double q = (r - gap) * (r + gap) / (4.0 * c * held);
  if (!(q > 0.0)) return 0.0;
  return q >= 1.0 ? pi : 2.0 * std::asin(std::sqrt(q));
}

/// One evaluated height of one bore: its deviation M s + b, weighted by 2 / allowed.
struct Term {
  Eigen::Matrix2d m = Eigen::Matrix2d::Zero();
  Eigen::Vector2d b = Eigen::Vector2d::Zero();
  double weight = 0.0;
};

/// Convex hull vertices of 2D points (Andrew's monotone chain, Comput. Geom. 1979); all points
/// when fewer than three.
std::vector<Eigen::Vector2d> hull_vertices(std::vector<Eigen::Vector2d> p) {
  if (p.size() < 3) return p;
  std::sort(p.begin(), p.end(), [](const Eigen::Vector2d& a, const Eigen::Vector2d& b) {
    return a.x() < b.x() || (a.x() == b.x() && a.y() < b.y());
  });
  const auto cross = [](const Eigen::Vector2d& o, const Eigen::Vector2d& a,
                        const Eigen::Vector2d& b) {
    return (a.x() - o.x()) * (b.y() - o.y()) - (a.y() - o.y()) * (b.x() - o.x());
  };
  std::vector<Eigen::Vector2d> h(2 * p.size());
  std::size_t k = 0;
  for (std::size_t i = 0; i < p.size(); ++i) {
    while (k >= 2 && cross(h[k - 2], h[k - 1], p[i]) <= 0.0) --k;
    h[k++] = p[i];
  }
  for (std::size_t i = p.size() - 1, t = k + 1; i > 0; --i) {
    while (k >= t && cross(h[k - 2], h[k - 1], p[i - 1]) <= 0.0) --k;
    h[k++] = p[i - 1];
  }
  h.resize(k > 1 ? k - 1 : k);
  return h;
}

/// The pattern's deviations as functions of the frame motion.
class PatternModel {
 public:
  explicit PatternModel(const std::vector<const BoreResult*>& bores) {
    for (std::size_t i = 0; i < bores.size(); ++i) {
      const BoreResult& bore = *bores[i];
      if (!bore.position)
        throw FitError("bore " + bore.id + ": datum mobility needs its position result");
      const PositionResult& p = *bore.position;
      if (!(p.allowed > 0.0))
        throw FitError("bore " + bore.id + ": the allowed position zone is not positive");
      BoreData d;
      d.zone = bore.zone;
      d.weight = 2.0 / p.allowed;
      d.median = bore.axis_method == BoreAxisMethod::median_line;
      if (d.median) {
        for (const AxisDeviation& c : p.section_centres)
          d.centres.push_back(bore.zone.origin +
                              bore.zone.basis * Eigen::Vector3d(c.offset.x(), c.offset.y(), c.height));
        if (d.centres.empty())
          throw FitError("bore " + bore.id + ": the median line has no section centre in range");
      } else {
        d.point = bore.axis.point;
        d.direction = bore.axis.direction;
        d.heights = {p.range_top, p.range_bottom};
      }
      if (d.median)
        for (const Eigen::Vector3d& c : d.centres) points_.push_back({i, c, 0.0});
      else
        for (double h : d.heights) points_.push_back({i, d.point, h});
      data_.push_back(std::move(d));
    }
  }

  /// Terms at rotation theta, in the moved frame: p' = R^T (p - s), zone coordinates
  /// B^T (p' - o), so a local point is a0 - K s with K = B^T R^T [e_x e_y].
  void terms_at(double theta, std::vector<Term>& out) const {
    out.clear();
    const Eigen::Matrix3d r_t =
        Eigen::AngleAxisd(theta, Eigen::Vector3d::UnitZ()).toRotationMatrix().transpose();
    for (const BoreData& d : data_) {
      const Eigen::Matrix3d bt = d.zone.basis.transpose();
      const Eigen::Matrix<double, 3, 2> k = bt * r_t.leftCols<2>();
      if (d.median) {
        std::vector<Eigen::Vector2d> offsets;
        offsets.reserve(d.centres.size());
        for (const Eigen::Vector3d& c : d.centres)
          offsets.push_back((bt * (r_t * c - d.zone.origin)).head<2>());
        // Every centre of one median line shares M and the weight, and the largest of
        // |M s + b_k| over k is reached at a vertex of the convex hull of the b_k.
        for (const Eigen::Vector2d& b : hull_vertices(std::move(offsets))) {
          Term t;
          t.m = -k.topRows<2>();
          t.b = b;
          t.weight = d.weight;
          out.push_back(t);
        }
      } else {
        const Eigen::Vector3d a0 = bt * (r_t * d.point - d.zone.origin);
        const Eigen::Vector3d e = bt * (r_t * d.direction);
        const Eigen::Vector2d slope = e.head<2>() / e.z();
        // offset(h) = a.xy + (h - a.z) slope with a = a0 - K s.
        const Eigen::Matrix2d m = -k.topRows<2>() + slope * k.row(2);
        for (double h : d.heights) {
          Term t;
          t.m = m;
          t.b = a0.head<2>() + (h - a0.z()) * slope;
          t.weight = d.weight;
          out.push_back(t);
        }
      }
    }
  }

  /// Frame xy of every term's axis point at theta = 0: the lever arms of a rotation.
  std::vector<std::pair<Eigen::Vector2d, double>> levers() const {
    std::vector<std::pair<Eigen::Vector2d, double>> out;
    for (const BoreData& d : data_) {
      if (d.median) {
        for (const Eigen::Vector3d& c : d.centres) out.emplace_back(c.head<2>(), d.weight);
      } else {
        const StraightAxis axis = StraightAxis::from_axis({d.point, d.direction}, d.zone);
        for (double h : d.heights) {
          const AxisDeviation dev = axis.at(h);
          const Eigen::Vector3d p = d.zone.origin + d.zone.basis * Eigen::Vector3d(
                                                        dev.offset.x(), dev.offset.y(), h);
          out.emplace_back(p.head<2>(), d.weight);
        }
      }
    }
    return out;
  }

  /// Every evaluated point of the pattern, one per end of a straight axis and one per section
  /// centre of a median line (no hull: the polish treats each as one smooth function).
  std::size_t point_count() const { return points_.size(); }
  double point_weight(std::size_t k) const { return data_[points_[k].bore].weight; }

  /// Deviation of point k in its zone after the motion x = (s_x, s_y, theta), as terms_at
  /// builds it, and its derivatives with respect to x (analytic: a turn by theta about z has
  /// the derivative -J R^T with J the generator of rotations about z).
  Eigen::Vector2d deviation(std::size_t k, const Eigen::Vector3d& x,
                            Eigen::Matrix<double, 2, 3>* jacobian) const {
    const PointRef& p = points_[k];
    const BoreData& d = data_[p.bore];
    const Eigen::Matrix3d r_t =
        Eigen::AngleAxisd(x.z(), Eigen::Vector3d::UnitZ()).toRotationMatrix().transpose();
    Eigen::Matrix3d generator;
    generator << 0.0, -1.0, 0.0, 1.0, 0.0, 0.0, 0.0, 0.0, 0.0;
    const Eigen::Matrix3d bt = d.zone.basis.transpose();
    const Eigen::Vector3d u = r_t * (p.point - Eigen::Vector3d(x.x(), x.y(), 0.0));
    const Eigen::Vector3d a = bt * (u - d.zone.origin);
    Eigen::Matrix3d da;  // columns: d/ds_x, d/ds_y, d/dtheta of a
    da.leftCols<2>() = -bt * r_t.leftCols<2>();
    da.col(2) = -bt * (generator * u);
    if (d.median) {
      if (jacobian) *jacobian = da.topRows<2>();
      return a.head<2>();
    }
    const Eigen::Vector3d direction = r_t * d.direction;
    const Eigen::Vector3d e = bt * direction;
    const Eigen::Vector3d de = -bt * (generator * direction);
    const Eigen::Vector2d slope = e.head<2>() / e.z();
    const Eigen::Vector2d dslope = (de.head<2>() - slope * de.z()) / e.z();
    if (jacobian) {
      *jacobian = da.topRows<2>() - slope * da.row(2);
      jacobian->col(2) += (p.height - a.z()) * dslope;
    }
    return a.head<2>() + (p.height - a.z()) * slope;
  }

 private:
  struct PointRef {
    std::size_t bore = 0;
    Eigen::Vector3d point = Eigen::Vector3d::Zero();  ///< axis point, or section centre
    double height = 0.0;                              ///< zone height (straight axis)
  };
  std::vector<PointRef> points_;
  struct BoreData {
    ZoneFrame zone;
    double weight = 0.0;
    bool median = false;
    Eigen::Vector3d point = Eigen::Vector3d::Zero();
    Eigen::Vector3d direction = Eigen::Vector3d::UnitZ();
    std::vector<double> heights;
    std::vector<Eigen::Vector3d> centres;
  };
  std::vector<BoreData> data_;
};

double worst_ratio(const std::vector<Term>& terms, const Eigen::Vector2d& s) {
  double worst = 0.0;
  for (const Term& t : terms) worst = std::max(worst, t.weight * (t.m * s + t.b).norm());
  return worst;
}

/// Smallest singular value of M: |M s| >= sigma_min(M) |s|.
double smallest_singular_value(const Eigen::Matrix2d& m) {
  return Eigen::JacobiSVD<Eigen::Matrix2d>(m).singularValues()(1);
}

/// A disk about the origin from per-term bounds |M s + b| <= limit: sigma_min(M) |s| - |b| <=
/// limit, so |s| <= (limit + |b|) / sigma_min(M); the smallest bound, widened for rounding.
/// 0 when no term bounds the shift.
class FreeRadius {
 public:
  void bound(const Eigen::Matrix2d& m, const Eigen::Vector2d& b, double limit) {
    const double sigma = smallest_singular_value(m);
    if (sigma > 1e-9) bound_ = std::min(bound_, (limit + b.norm()) / sigma);
  }
  double radius() const { return std::isfinite(bound_) ? bound_ * (1.0 + 1e-9) + 1e-12 : 0.0; }

 private:
  double bound_ = infinity;
};

/// The position search's objective at one rotation: the pattern's worst ratio.
struct RatioObjective {
  const std::vector<Term>& terms;
  double operator()(const Eigen::Vector2d& s) const { return worst_ratio(terms, s); }
  /// Without datum B the shift is free, but any s with F(s) <= F(0) has, for every term,
  /// sigma_min(M) |s| - |b| <= F(0) / w: the optimum lies in the disk of the smallest such bound.
  double free_radius() const {
    const double f0 = worst_ratio(terms, Eigen::Vector2d::Zero());
    FreeRadius r;
    for (const Term& t : terms) r.bound(t.m, t.b, f0 / t.weight);
    return r.radius();
  }
};

struct InnerSolution {
  Eigen::Vector2d shift = Eigen::Vector2d::Zero();
  double ratio = infinity;
};

/// The inner convex problem at one rotation.
class InnerSolver {
 public:
  InnerSolver(const FrameMobility& mobility, const MobilityOptions& options, double s_tolerance)
      : mobility_(mobility), options_(options), s_tolerance_(s_tolerance) {}

  /// `objective(s)` is the function minimised at this rotation; `objective.free_radius()` a
  /// disk about the origin holding every shift that is no worse than the origin's (used when
  /// translation is free).
  template <class Objective>
  InnerSolution solve(const Objective& objective, double theta) const {
    const auto f = [&](const Eigen::Vector2d& s) { return objective(s); };
    InnerSolution out;
    const double r = mobility_.shift_allowance;
    if (mobility_.rotation_about_c && mobility_.c_shift_allowance <= 0.0) {
      // One origin per rotation. Rounding may leave it a hair outside the disk at the ends of
      // the rotation bracket; 1e-9 of B's clearance is far below any reported digit.
      out.shift = origin_about_c(mobility_, theta);
      if (out.shift.norm() > r * (1.0 + 1e-9)) return out;
      out.ratio = f(out.shift);
      return out;
    }
    if (mobility_.rotation_about_c) {
      // C at MMB with room, its simulator fixed at basic: the origins within C's room rho of
      // p = c - R(theta) c_held and within B's clearance r of 0, two disks. In coordinates x
      // along p, y across, x runs over the overlap of [-r, r] and [|p| - rho, |p| + rho], and
      // at x, |y| is bounded by both disks' chords.
      const Eigen::Vector2d p = origin_about_c(mobility_, theta);
      const double rho = mobility_.c_shift_allowance, d = p.norm();
      const Eigen::Vector2d e1 = d > 0.0 ? Eigen::Vector2d(p / d) : Eigen::Vector2d::UnitX();
      const Eigen::Vector2d e2(-e1.y(), e1.x());
      const double x_lo = std::max(-r, d - rho), x_hi = std::min(r, d + rho);
      if (x_lo > x_hi + 1e-9 * (r + rho)) return out;
      if (!(r > 0.0)) {  // B at RMB: the origin stays
        out.shift = Eigen::Vector2d::Zero();
        out.ratio = f(out.shift);
        return out;
      }
      const auto across = [&](double x) {
        const double half = std::sqrt(
            std::max(0.0, std::min(r * r - x * x, rho * rho - (x - d) * (x - d))));
        return detail::golden_minimum([&](double y) { return f(Eigen::Vector2d(x * e1 + y * e2)); },
                                      -half, half, s_tolerance_, options_.max_iterations);
      };
      const auto [x, value] =
          detail::golden_minimum([&](double xx) { return across(xx).second; }, x_lo,
                                 std::max(x_lo, x_hi), s_tolerance_, options_.max_iterations);
      out.shift = x * e1 + across(x).first * e2;
      out.ratio = value;
      return out;
    }
    if (mobility_.rotation_follows_c) {
      // C at RMB: C's axis stays on its basic ray, so the new origin s satisfies
      // c - s = t u(alpha + theta), t > 0: a chord of the shift disk.
      const Eigen::Vector2d& c = mobility_.c_location;
      const double alpha = std::atan2(c.y(), c.x());
      // Parametrised from the line's point nearest the origin, p0 = (c . u') u' with u' normal
      // to u, as s = p0 + tau u: |s|^2 = |p0|^2 + tau^2 without the cancellation of
      // |c|^2 - (c . u)^2, so the chord's ends stay inside the disk.
      const Eigen::Vector2d u(std::cos(alpha + theta), std::sin(alpha + theta));
      const Eigen::Vector2d normal(-u.y(), u.x());
      const Eigen::Vector2d p0 = c.dot(normal) * normal;
      const double disc = r * r - p0.squaredNorm();
      if (disc < 0.0) return out;  // no allowed shift at this rotation
      const double half = std::sqrt(disc);
      const auto along = [&](double tau) { return f(Eigen::Vector2d(p0 + tau * u)); };
      const auto [tau, value] =
          detail::golden_minimum(along, -half, half, s_tolerance_, options_.max_iterations);
      out.shift = p0 + tau * u;
      out.ratio = value;
      return out;
    }
    double radius = r;
    if (mobility_.translation_free) radius = objective.free_radius();
    if (!(radius > 0.0)) {
      if (mobility_.c_shift_allowance > 0.0 && !strip_contains_origin(theta)) return out;
      out.ratio = f(Eigen::Vector2d::Zero());
      return out;
    }
    // Coordinates: x along the strip's normal (C at MMB) or the frame's x, y across.
    Eigen::Vector2d e1(1.0, 0.0);
    double x_lo = -radius, x_hi = radius;
    if (mobility_.c_shift_allowance > 0.0) {
      const Strip strip = c_strip(theta);
      e1 = strip.normal;
      x_lo = std::max(x_lo, strip.lo);
      x_hi = std::min(x_hi, strip.hi);
      if (x_lo > x_hi) return out;
    }
    const Eigen::Vector2d e2(-e1.y(), e1.x());
    const auto across = [&](double x) {
      const double half = std::sqrt(std::max(0.0, radius * radius - x * x));
      return detail::golden_minimum([&](double y) { return f(Eigen::Vector2d(x * e1 + y * e2)); }, -half,
                            half, s_tolerance_, options_.max_iterations);
    };
    const auto [x, value] = detail::golden_minimum([&](double xx) { return across(xx).second; }, x_lo,
                                           x_hi, s_tolerance_, options_.max_iterations);
    out.shift = x * e1 + across(x).first * e2;
    out.ratio = value;
    return out;
  }

 private:
  /// C at MMB: the origins s it allows at rotation theta, lo <= s . normal <= hi, with normal
  /// n(alpha + theta) the normal of C's basic ray in the moved frame.
  struct Strip {
    Eigen::Vector2d normal = Eigen::Vector2d::UnitY();
    double lo = 0.0;
    double hi = 0.0;
  };
  Strip c_strip(double theta) const {
    const Eigen::Vector2d& c = mobility_.c_location;
    const double alpha = std::atan2(c.y(), c.x());
    Strip strip;
    strip.normal = Eigen::Vector2d(-std::sin(alpha + theta), std::cos(alpha + theta));
    if (!mobility_.c_width) {
      // |(c - s) . n| <= c allowance: C's axis within its allowance of the ray.
      const double cn = c.dot(strip.normal);
      strip.lo = cn - mobility_.c_shift_allowance;
      strip.hi = cn + mobility_.c_shift_allowance;
      return strip;
    }
    // A point q of C is at (q - s) . n from the simulator's centre plane. A slot's simulator
    // (a block MMB wide) must leave the positive face at >= MMB / 2 and the negative one at
    // <= -MMB / 2; a tab's (two plates MMB apart) must hold every point within +-MMB / 2
    // (ASME Y14.5-2018, datum feature simulator at MMB; from memory for the clause).
    const FrameMobility::WidthSimulator& w = *mobility_.c_width;
    const auto extremes = [&](const std::vector<Eigen::Vector2d>& face) {
      std::pair<double, double> range{infinity, -infinity};
      for (const Eigen::Vector2d& q : face) {
        const double v = q.dot(strip.normal);
        range.first = std::min(range.first, v);
        range.second = std::max(range.second, v);
      }
      return range;
    };
    const auto [positive_min, positive_max] = extremes(w.positive_face);
    const auto [negative_min, negative_max] = extremes(w.negative_face);
    const double half = 0.5 * w.mmb_width;
    if (w.internal) {
      strip.lo = negative_max + half;
      strip.hi = positive_min - half;
    } else {
      strip.lo = std::max(positive_max, negative_max) - half;
      strip.hi = std::min(positive_min, negative_min) + half;
    }
    return strip;
  }

  bool strip_contains_origin(double theta) const {
    const Strip strip = c_strip(theta);
    return strip.lo <= 0.0 && 0.0 <= strip.hi;
  }

  const FrameMobility& mobility_;
  const MobilityOptions& options_;
  double s_tolerance_;
};

/// Half-width of the rotations a slot or tab C at MMB can allow, with the origin within
/// `shift` of its place. In coordinates (t along C's basic ray, d across it) a point moves, at
/// rotation theta and origin s, to d cos theta -+ t sin theta - s.n from the simulator's centre
/// plane, with |s.n| <= shift. Each point gives a necessary condition on sigma = |sin theta|
/// for the sense of rotation that moves it toward the simulator's plane on its side:
///   slot (stays >= MMB / 2 out):  t sigma <= |d| - MMB / 2 + shift   (cos theta <= 1);
///   tab (stays <= MMB / 2 in):    |d| (1 - sigma^2) + t sigma <= MMB / 2 + shift
///                                 (cos theta >= 1 - sigma^2 for |theta| <= pi/2),
/// whose smaller root bounds sigma when the larger lies beyond 1. Beyond pi/2 a slot's faces
/// would cross the block; a tab turned that far no longer presents its faces to the plates.
double width_rotation_bracket(const FrameMobility::WidthSimulator& w, const Eigen::Vector2d& c,
                              double shift) {
  const Eigen::Vector2d u = c.normalized();
  const Eigen::Vector2d n(-u.y(), u.x());
  const double half = 0.5 * w.mmb_width;
  const auto bound = [&](const std::vector<Eigen::Vector2d>& face) {
    double sigma = 1.0;
    for (const Eigen::Vector2d& q : face) {
      const double t = q.dot(u), d = std::abs(q.dot(n));
      if (!(t > 0.0)) continue;
      if (w.internal) {
        sigma = std::min(sigma, std::max(0.0, d - half + shift) / t);
      } else {
        // d sigma^2 - t sigma + k >= 0 with k = MMB / 2 + shift - d >= 0.
        const double k = std::max(0.0, half + shift - d);
        const double disc = t * t - 4.0 * d * k;
        if (disc < 0.0) continue;
        const double root = std::sqrt(disc);
        if (d > 0.0 && (t + root) / (2.0 * d) <= 1.0) continue;  // a second feasible range
        sigma = std::min(sigma, 2.0 * k / (t + root));
      }
    }
    return sigma;
  };
  const double sigma = std::max(bound(w.positive_face), bound(w.negative_face));
  return std::asin(std::min(1.0, sigma));
}

/// The rotations datum C's simulator allows, when C holds the rotation at all; empty when the
/// rotation is free (no C).
std::optional<double> simulator_rotation_bracket(const FrameMobility& mobility) {
  if (mobility.rotation_about_c) return rotation_about_c_limit(mobility);
  if (mobility.c_width && mobility.c_shift_allowance > 0.0 && !mobility.rotation_follows_c)
    return width_rotation_bracket(*mobility.c_width, mobility.c_location, mobility.shift_allowance);
  if (mobility.rotation_follows_c || mobility.c_shift_allowance > 0.0) {
    const double c = mobility.c_location.norm();
    const double reach = mobility.rotation_follows_c
                             ? mobility.shift_allowance
                             : mobility.shift_allowance + mobility.c_shift_allowance;
    return c > reach ? std::asin(reach / c) : pi;
  }
  return std::nullopt;
}

/// Half-width of the rotation bracket: no rotation beyond it can beat the unmoved frame. The
/// bounds follow from |offset| <= F0 / w at the start and at the optimum, with the rotation
/// moving a lever arm q by 2 sin(|theta| / 2) |q| (exact for a bore perpendicular to A; the
/// bound is doubled for inclined bores). 0 when no rotation can matter.
double rotation_bracket(const PatternModel& model, const FrameMobility& mobility, double f0) {
  if (const std::optional<double> simulator = simulator_rotation_bracket(mobility))
    return *simulator;
  const auto levers = model.levers();
  const auto half_angle = [](double ratio) { return 2.0 * std::asin(std::min(1.0, ratio)); };
  double bound = pi;
  bool any = false;
  if (mobility.translation_free) {
    for (std::size_t i = 0; i < levers.size(); ++i)
      for (std::size_t j = i + 1; j < levers.size(); ++j) {
        const double arm = (levers[i].first - levers[j].first).norm();
        if (arm <= 1e-9) continue;
        any = true;
        bound = std::min(bound, half_angle(f0 * (1.0 / levers[i].second + 1.0 / levers[j].second) /
                                           arm));
      }
  } else {
    for (const auto& [q, w] : levers) {
      const double arm = q.norm();
      if (arm <= 1e-9) continue;
      any = true;
      bound = std::min(bound, half_angle((2.0 * f0 / w + mobility.shift_allowance) / (2.0 * arm)));
    }
  }
  if (!any) return 0.0;
  return std::min(pi, 2.0 * bound);
}

/// The pattern's virtual condition boundaries as functions of the frame motion: at a rotation
/// every bore's points and envelope axis, in its zone coordinates, are affine in the shift
/// (M s + b, as PatternModel's terms), so the objective at a shift costs one 2 x 2 product per
/// bore and one norm per point.
class BoundaryModel {
 public:
  /// Weight of the mean margin beside the smallest one (the tie-break of best_boundary_motion).
  static constexpr double mean_weight = 1e-6;

  BoundaryModel(const std::vector<const BoreResult*>& bores, const FrameMobility& mobility)
      : mobility_(mobility) {
    for (const BoreResult* bore : bores) {
      const VirtualConditionResult* vc =
          bore->virtual_condition ? &*bore->virtual_condition : nullptr;
      if (!vc || !vc->on_true_position || !bore->position)
        throw FitError("bore " + bore->id +
                       ": the boundary search needs its virtual condition on the true position");
      BoreData d;
      d.zone = bore->zone;
      d.at_mmc = vc->condition == MaterialCondition::mmc;
      d.projected = bore->position->projected;
      d.surrounded = vc->envelope_surrounded;
      d.boundary = vc->boundary;
      const CylinderFit& envelope = d.at_mmc ? bore->mating_envelope : bore->minimum_material;
      d.diameter = envelope.diameter();
      d.point = envelope.axis.point;
      d.direction = envelope.axis.direction;
      d.heights = {bore->position->range_top, bore->position->range_bottom};
      d.points = bore->boundary_points;
      if (!d.projected && d.points.cols() == 0)
        throw FitError("bore " + bore->id + ": no point lies within the depth range");
      data_.push_back(std::move(d));
    }
    rotated_.resize(data_.size());
  }

  /// Prepares the objective at rotation theta (the moved frame as in PatternModel::terms_at).
  void at_rotation(double theta) {
    const Eigen::Matrix3d r_t =
        Eigen::AngleAxisd(theta, Eigen::Vector3d::UnitZ()).toRotationMatrix().transpose();
    for (std::size_t i = 0; i < data_.size(); ++i) {
      const BoreData& d = data_[i];
      Rotated& r = rotated_[i];
      const Eigen::Matrix3d bt = d.zone.basis.transpose();
      const Eigen::Matrix<double, 3, 2> k = bt * r_t.leftCols<2>();
      r.points_m = -k.topRows<2>();
      if (!d.projected)
        r.points_b = ((bt * r_t) * d.points).colwise() - bt * d.zone.origin;
      const Eigen::Vector3d a0 = bt * (r_t * d.point - d.zone.origin);
      const Eigen::Vector3d e = bt * (r_t * d.direction);
      const Eigen::Vector2d slope = e.head<2>() / e.z();
      r.envelope_m = -k.topRows<2>() + slope * k.row(2);
      for (int h = 0; h < 2; ++h) r.envelope_b[h] = a0.head<2>() + (d.heights[h] - a0.z()) * slope;
      r.candidates = r.points_b.topRows<2>();
    }
    // Every shift the inner search tries at this rotation lies in a disk about the origin
    // (B's clearance, or the free-translation bound), so the points that can be the nearest
    // (farthest) for some shift in it are found once per rotation.
    const double radius = mobility_.translation_free ? free_radius() : mobility_.shift_allowance;
    for (std::size_t i = 0; i < data_.size(); ++i)
      if (!data_[i].projected)
        keep_candidates(rotated_[i], rotated_[i].points_m.norm() * radius * (1.0 + 1e-6),
                        data_[i].at_mmc);
  }

  /// Margin of bore i at shift s (clearance - boundary at MMC, boundary - clearance at LMC).
  double margin(std::size_t i, const Eigen::Vector2d& s) const {
    const BoreData& d = data_[i];
    const Rotated& r = rotated_[i];
    detail::BoundaryDistances distances;
    distances.envelope_diameter = d.diameter;
    const Eigen::Vector2d te = r.envelope_m * s;
    distances.envelope_reach =
        2.0 * std::max((te + r.envelope_b[0]).norm(), (te + r.envelope_b[1]).norm());
    // At MMC with the axis outside the envelope the clearance is the envelope figure, at most
    // 0 and so below twice any distance: the points need not be visited.
    const bool outside = d.at_mmc && !(distances.envelope_reach < distances.envelope_diameter);
    if (outside) distances.nearest = infinity;
    if (!d.projected && !outside) {
      const Eigen::Vector2d t = r.points_m * s;
      double nearest = infinity, farthest = 0.0;
      for (Eigen::Index j = 0; j < r.candidates.cols(); ++j) {
        const double radial = (r.candidates.col(j) + t).norm();
        nearest = std::min(nearest, radial);
        farthest = std::max(farthest, radial);
      }
      distances.nearest = nearest;
      distances.farthest = farthest;
    }
    const double clearance =
        detail::boundary_clearance(d.at_mmc, d.projected, d.surrounded, distances).clearance;
    return d.at_mmc ? clearance - d.boundary : d.boundary - clearance;
  }

  /// The objective: minus the smallest margin, less mean_weight x the mean margin.
  double operator()(const Eigen::Vector2d& s) const {
    double worst = infinity, sum = 0.0;
    for (std::size_t i = 0; i < data_.size(); ++i) {
      const double m = margin(i, s);
      worst = std::min(worst, m);
      sum += m;
    }
    return -worst - mean_weight * sum / static_cast<double>(data_.size());
  }

  /// Without datum B: any shift no worse than the origin keeps every bore's envelope offset
  /// (or, at LMC in the material, one point's distance) within a bound, so the optimum lies
  /// in a disk (FreeRadius). The bounds follow from the clearance rule: at MMC the figure is
  /// at most D - 2|e| once |e| reaches D / 2, at LMC at least 2 |M s + b| for any point.
  double free_radius() const {
    const double f0 = (*this)(Eigen::Vector2d::Zero());
    // The objective's mean term moves it by at most mean_weight x the largest |margin|, here
    // and at the optimum; a margin at the optimum is at most D + boundary in size (a
    // clearance no worse than the unmoved frame's is at most the envelope's, or at LMC the
    // boundary), which the bounds allow for.
    double slack = 0.0;
    for (std::size_t i = 0; i < data_.size(); ++i)
      slack = std::max(slack, std::abs(margin(i, Eigen::Vector2d::Zero())) + data_[i].diameter +
                                  data_[i].boundary);
    const double f = f0 + 2.0 * mean_weight * slack + 1e-9;
    FreeRadius r;
    for (std::size_t i = 0; i < data_.size(); ++i) {
      const BoreData& d = data_[i];
      const Rotated& rot = rotated_[i];
      if (d.at_mmc || d.projected) {
        // At MMC 2|e| <= max(D, f + D - boundary) (in the material) or f + D - boundary
        // (projected); at LMC projected 2|e| <= f + boundary - D.
        const double reach = d.at_mmc ? std::max(d.projected ? 0.0 : d.diameter,
                                                 f + d.diameter - d.boundary)
                                      : f + d.boundary - d.diameter;
        for (int h = 0; h < 2; ++h)
          r.bound(rot.envelope_m, rot.envelope_b[h], std::max(0.0, 0.5 * reach));
      } else {
        r.bound(rot.points_m, rot.points_b.col(0).head<2>(), std::max(0.0, 0.5 * (f + d.boundary)));
      }
    }
    return r.radius();
  }

  /// Largest rate of change of a margin per unit shift (2 |M|, plus the mean term) and per
  /// radian of rotation (2 x the farthest lever arm from the frame's z axis, plus 1 mm).
  double shift_lipschitz() const { return 2.0 * (1.0 + mean_weight) * shift_gain_; }
  double rotation_arm() const {
    double arm = 0.0;
    for (const BoreData& d : data_) {
      arm = std::max(arm, d.point.head<2>().norm() + 0.5 * d.diameter);
      for (Eigen::Index j = 0; j < d.points.cols(); ++j)
        arm = std::max(arm, d.points.col(j).head<2>().norm());
    }
    return 2.0 * (1.0 + mean_weight) * (arm + 1.0);
  }
  void measure_shift_gain() {
    shift_gain_ = 0.0;
    for (const Rotated& r : rotated_)
      shift_gain_ = std::max({shift_gain_, r.points_m.norm(), r.envelope_m.norm()});
  }

 private:
  struct BoreData {
    ZoneFrame zone;
    bool at_mmc = true;
    bool projected = false;
    bool surrounded = true;
    double boundary = 0.0;
    double diameter = 0.0;  ///< the envelope's
    Eigen::Vector3d point = Eigen::Vector3d::Zero();  ///< the envelope's axis
    Eigen::Vector3d direction = Eigen::Vector3d::UnitZ();
    std::array<double, 2> heights = {0.0, 0.0};
    Eigen::Matrix3Xd points;  ///< within the depth, frame coordinates
  };
  struct Rotated {
    Eigen::Matrix2d points_m = Eigen::Matrix2d::Zero();
    Eigen::Matrix3Xd points_b;  ///< zone coordinates of the points at s = 0 (rows 0, 1 used)
    /// The columns of points_b (x, y) that can be the nearest (MMC) or farthest (LMC) point for
    /// some shift of this rotation's disk: keep_candidates.
    Eigen::Matrix2Xd candidates;
    Eigen::Matrix2d envelope_m = Eigen::Matrix2d::Zero();
    std::array<Eigen::Vector2d, 2> envelope_b;
  };
  /// Drops the points that another point of the same narrow angular sector beats for every
  /// offset t with |t| <= delta: for the nearest, k beats j when |b_j + t|^2 - |b_k + t|^2 =
  /// |b_j|^2 - |b_k|^2 + 2 t . (b_j - b_k) > 0, which holds for all such t when
  /// |b_j|^2 - |b_k|^2 > 2 delta |b_j - b_k| (the farthest: the same with j and k exchanged).
  /// Exact: the nearest (farthest) over the candidates is the nearest over all points. Dense
  /// scans of a bore perpendicular to A keep about one point per direction.
  static void keep_candidates(Rotated& r, double delta, bool nearest) {
    const Eigen::Index n = r.candidates.cols();
    constexpr int sectors = 4096;
    std::vector<Eigen::Index> best(sectors, -1);
    std::vector<int> sector(static_cast<std::size_t>(n));
    const auto sq = [&](Eigen::Index j) { return r.candidates.col(j).squaredNorm(); };
    for (Eigen::Index j = 0; j < n; ++j) {
      const Eigen::Vector2d b = r.candidates.col(j);
      const int k = std::clamp(
          static_cast<int>((std::atan2(b.y(), b.x()) + pi) * (sectors / (2.0 * pi))), 0,
          sectors - 1);
      sector[static_cast<std::size_t>(j)] = k;
      Eigen::Index& champion = best[static_cast<std::size_t>(k)];
      if (champion < 0 || (nearest ? sq(j) < sq(champion) : sq(j) > sq(champion))) champion = j;
    }
    Eigen::Index kept = 0;
    for (Eigen::Index j = 0; j < n; ++j) {
      const Eigen::Index k = best[static_cast<std::size_t>(sector[static_cast<std::size_t>(j)])];
      const double lead = nearest ? sq(j) - sq(k) : sq(k) - sq(j);
      const double reach = 2.0 * delta * (r.candidates.col(j) - r.candidates.col(k)).norm();
      // A rounding allowance keeps a point the test cannot tell apart.
      if (j != k && lead > reach + 1e-12 * (1.0 + sq(j))) continue;
      r.candidates.col(kept++) = r.candidates.col(j);
    }
    r.candidates.conservativeResize(2, kept);
  }

  const FrameMobility& mobility_;
  std::vector<BoreData> data_;
  std::vector<Rotated> rotated_;
  double shift_gain_ = 1.0;
};

/// Which parts of the motion a mobility leaves free, and whether the unmoved frame is one of
/// the allowed motions: C's simulator fixed at basic holds the part at C, so the unmoved frame
/// is allowed only when C lies at its held distance (within C's own room).
struct Freedom {
  bool rotation_fixed = true;
  bool shift_fixed = true;
  bool unmoved_allowed = true;
};
Freedom freedom_of(const FrameMobility& mobility) {
  Freedom f;
  f.rotation_fixed = !mobility.rotation_free && !mobility.rotation_follows_c &&
                     !mobility.rotation_about_c && mobility.c_shift_allowance <= 0.0;
  f.shift_fixed = !mobility.translation_free && mobility.shift_allowance <= 0.0;
  f.unmoved_allowed =
      !mobility.rotation_about_c ||
      std::abs(mobility.c_location.norm() - mobility.c_held_distance) <= mobility.c_shift_allowance;
  return f;
}

/// The outer search shared by the position and the boundary problems: `solve_at(theta)` solves
/// the inner convex (position) or near-convex (boundary) problem at one rotation and returns an
/// InnerSolution whose `ratio` is minimised. A coarse scan of [-bracket, bracket] (0 is a
/// sample), then golden section around the best sample; the unmoved frame, worth `f0`, is kept
/// when nothing beats it and it is allowed. `iterations` counts the rotations examined.
template <class SolveAt>
FrameMotion search_rotation(const FrameMobility& mobility, const MobilityOptions& options,
                            SolveAt&& solve_at, double f0, bool unmoved_allowed, double bracket,
                            double theta_tolerance, int& iterations) {
  FrameMotion best;  // the unmoved frame, when allowed
  double best_ratio = unmoved_allowed ? f0 : infinity;
  const auto consider = [&](double theta, const InnerSolution& s) {
    if (s.ratio < best_ratio) {
      best_ratio = s.ratio;
      best.rotation_rad = theta;
      best.shift = s.shift;
    }
  };
  if (bracket <= 0.0) {
    consider(0.0, solve_at(0.0));
    if (!std::isfinite(best_ratio)) {  // C held at the end of the room: the only motion
      const Eigen::Vector2d p = origin_about_c(mobility, 0.0);
      best.shift = p * std::min(1.0, mobility.shift_allowance / std::max(p.norm(), 1e-300));
    }
    return best;
  }
  // Coarse scan (0 is a sample), then golden section around the best sample.
  constexpr int half_samples = 16;
  const double step = bracket / half_samples;
  int best_k = 0;
  double best_scan = infinity;
  iterations = 0;
  for (int k = -half_samples; k <= half_samples; ++k) {
    const InnerSolution s = solve_at(k * step);
    ++iterations;
    consider(k * step, s);
    if (s.ratio < best_scan) {
      best_scan = s.ratio;
      best_k = k;
    }
  }
  const double lo = std::max(-bracket, (best_k - 1) * step);
  const double hi = std::min(bracket, (best_k + 1) * step);
  // `consider` keeps the best motion seen, so the search's own return value is not needed.
  detail::golden_minimum(
      [&](double t) {
        ++iterations;
        const InnerSolution s = solve_at(t);
        consider(t, s);
        return s.ratio;
      },
      lo, hi, theta_tolerance, options.max_iterations);
  return best;
}

/// Polish of the searches' answer, where the problem is smooth: the golden sections compare
/// function values, so they locate a smooth minimum only to about the square root of rounding,
/// and the figures of bores that do not bind move with the argument. At a minimax optimum
/// with active points A (the points whose ratio f_k = w_k |v_k(x)| equals the worst, t), the
/// first-order conditions are
///     f_k(x) = t (k in A),   sum_A lambda_k grad f_k(x) = 0,   sum_A lambda_k = 1,
/// with lambda_k >= 0 (Madsen & Schjaer-Jacobsen, "Linearly constrained minimax optimization",
/// Math. Programming 14, 1978; Nocedal & Wright, Numerical Optimization, 2nd ed., 12.3 and
/// 18.1): a square system in (x, t, lambda), solved by Newton's method with the Hessian of
/// the Lagrangian, sum lambda_k grad^2 f_k, from the analytic derivatives of the deviations
/// (the rotation's second derivative by a central difference of the analytic Jacobian, which
/// only affects the rate of convergence, not the point converged to). The active set starts
/// as the points within 1e-6 of the worst at the searches' answer; a negative multiplier
/// drops a point, a point beyond t joins the set, and the system is solved again. Free
/// coordinates only (`free`: s_x, s_y, theta); the answer is returned when it converged, is
/// no worse than the start, and keeps the shift within `shift_limit` (infinite when the
/// translation is free); otherwise nothing, and the searches' answer stands. A singular
/// system (a flat set of equally good motions, e.g. one bore and a free translation) returns
/// nothing with `tie_break` off.
///
/// With `tie_break` on, the objective is t + eps S(x) instead of t, S the sum of the squared
/// ratios of every evaluated point of the pattern (the binding ones and the others), eps small:
/// the tie-break among equally good motions (docs/evaluation.md). Along a flat set t does not
/// change and eps S is strictly convex, so the system is regular and its solution is the motion
/// of the set with the least S; across the set t grows at first order (the set's points are
/// sharp minimax points there), an exact penalty for the eps S term (Fletcher, Practical Methods
/// of Optimization, 2nd ed., 1987, 14.3, from memory for the section), so the solution stays on
/// the set: a lexicographic second stage (Nocedal & Wright, 2nd ed., on multiobjective
/// programming by priorities). eps = 1e-6 t / S at the start: the secondary term is a millionth
/// of the worst ratio. The solution is a function of the part alone; it may lie far along the
/// set from the searches' answer, so only its worst ratio is compared with theirs.
std::optional<FrameMotion> polish_motion(const PatternModel& model, const FrameMotion& start,
                                         const std::array<bool, 3>& free, double shift_limit,
                                         bool tie_break = false) {
  std::vector<int> vars;
  for (int j = 0; j < 3; ++j)
    if (free[j]) vars.push_back(j);
  const int n = static_cast<int>(vars.size());
  const std::size_t count = model.point_count();
  if (n == 0 || count == 0) return std::nullopt;
  const Eigen::Vector3d x0(start.shift.x(), start.shift.y(), start.rotation_rad);
  const auto ratio = [&](std::size_t k, const Eigen::Vector3d& x) {
    return model.point_weight(k) * model.deviation(k, x, nullptr).norm();
  };
  const auto worst = [&](const Eigen::Vector3d& x) {
    double f = 0.0;
    for (std::size_t k = 0; k < count; ++k) f = std::max(f, ratio(k, x));
    return f;
  };
  const double f_start = worst(x0);
  if (!(f_start > 0.0)) return std::nullopt;
  // Ratio, gradient and Hessian of point k in the free coordinates; false where the ratio is
  // not smooth (the deviation vanishes).
  constexpr double theta_step = 1e-6;
  const auto evaluate = [&](std::size_t k, const Eigen::Vector3d& x, double& f,
                            Eigen::VectorXd& g, Eigen::MatrixXd& h) {
    Eigen::Matrix<double, 2, 3> j;
    const Eigen::Vector2d v = model.deviation(k, x, &j);
    const double w = model.point_weight(k), r = v.norm();
    if (!(r > 1e-12)) return false;
    const Eigen::Vector2d u = v / r;
    Eigen::Matrix3d full = j.transpose() * (Eigen::Matrix2d::Identity() - u * u.transpose()) * j / r;
    if (free[2]) {
      Eigen::Matrix<double, 2, 3> jp, jm;
      const Eigen::Vector3d step(0.0, 0.0, theta_step);
      model.deviation(k, x + step, &jp);
      model.deviation(k, x - step, &jm);
      const Eigen::Vector3d dj = ((jp - jm) / (2.0 * theta_step)).transpose() * u;
      for (int a = 0; a < 2; ++a) {
        full(a, 2) += dj(a);
        full(2, a) += dj(a);
      }
      full(2, 2) += dj(2);
    }
    const Eigen::Vector3d grad = j.transpose() * u;
    f = w * r;
    g.resize(n);
    h.resize(n, n);
    for (int a = 0; a < n; ++a) {
      g(a) = w * grad(vars[a]);
      for (int b = 0; b < n; ++b) h(a, b) = w * full(vars[a], vars[b]);
    }
    return true;
  };

  // The tie-break's secondary objective eps S(x), S = sum_k (w_k |v_k(x)|)^2: its gradient and
  // Gauss-Newton Hessian (the fixed point depends on the gradient only) in the free coordinates.
  double eps = 0.0;
  if (tie_break) {
    double s0 = 0.0;
    for (std::size_t k = 0; k < count; ++k) s0 += ratio(k, x0) * ratio(k, x0);
    if (!(s0 > 0.0)) return std::nullopt;
    eps = 1e-6 * f_start / s0;
  }
  const auto secondary = [&](const Eigen::Vector3d& x, Eigen::VectorXd& g, Eigen::MatrixXd& h) {
    Eigen::Vector3d full_g = Eigen::Vector3d::Zero();
    Eigen::Matrix3d full_h = Eigen::Matrix3d::Zero();
    Eigen::Matrix<double, 2, 3> j;
    for (std::size_t k = 0; k < count; ++k) {
      const Eigen::Vector2d v = model.deviation(k, x, &j);
      const double w2 = model.point_weight(k) * model.point_weight(k);
      full_g += 2.0 * w2 * j.transpose() * v;
      full_h += 2.0 * w2 * j.transpose() * j;
    }
    g.resize(n);
    h.resize(n, n);
    for (int a = 0; a < n; ++a) {
      g(a) = eps * full_g(vars[a]);
      for (int b = 0; b < n; ++b) h(a, b) = eps * full_h(vars[a], vars[b]);
    }
  };

  std::vector<std::size_t> active;
  for (std::size_t k = 0; k < count; ++k)
    if (ratio(k, x0) >= f_start * (1.0 - 1e-6)) active.push_back(k);
  for (int round = 0; round < 12; ++round) {
    const int m = static_cast<int>(active.size());
    if (m == 0 || m > n + 1) return std::nullopt;
    const int size = n + 1 + m;
    Eigen::Vector3d x = x0;
    double t = f_start;
    Eigen::VectorXd lambda = Eigen::VectorXd::Constant(m, 1.0 / m);
    // Converged once a step is below 1e-9 (mm, or 1e-11 rad) and one more step is taken: the
    // convergence is quadratic, so that step is at the level of rounding.
    bool close = false, converged = false;
    for (int iteration = 0; iteration < 40 && !converged; ++iteration) {
      converged = close;
      Eigen::MatrixXd system = Eigen::MatrixXd::Zero(size, size);
      Eigen::VectorXd residual = Eigen::VectorXd::Zero(size);
      for (int i = 0; i < m; ++i) {
        double f;
        Eigen::VectorXd g;
        Eigen::MatrixXd h;
        if (!evaluate(active[i], x, f, g, h)) return std::nullopt;
        residual(i) = f - t;
        system.block(i, 0, 1, n) = g.transpose();
        system(i, n) = -1.0;
        residual.segment(m, n) += lambda(i) * g;
        system.block(m, 0, n, n) += lambda(i) * h;
        system.block(m, n + 1 + i, n, 1) = g;
        system(m + n, n + 1 + i) = 1.0;
      }
      residual(m + n) = lambda.sum() - 1.0;
      if (tie_break) {
        Eigen::VectorXd g;
        Eigen::MatrixXd h;
        secondary(x, g, h);
        residual.segment(m, n) += g;
        system.block(m, 0, n, n) += h;
      }
      Eigen::FullPivLU<Eigen::MatrixXd> lu(system);
      // A flat set makes the system singular, and rounding would hide it at the default
      // threshold (a tiny pivot, and a step along the flat set as long as its inverse).
      lu.setThreshold(1e-10);
      if (lu.rank() < size) return std::nullopt;
      const Eigen::VectorXd step = lu.solve(-residual);
      for (int a = 0; a < n; ++a) x(vars[a]) += step(a);
      t += step(n);
      lambda += step.tail(m);
      double largest = 0.0;
      for (int a = 0; a < n; ++a)
        largest = std::max(largest, std::abs(step(a)) / (vars[a] == 2 ? 1e-2 : 1.0));
      close = largest <= 1e-9;
    }
    if (!converged) return std::nullopt;
    Eigen::Index most_negative = 0;
    if (lambda.minCoeff(&most_negative) < -1e-9) {
      active.erase(active.begin() + most_negative);
      continue;
    }
    std::size_t beyond = count;
    double beyond_ratio = t * (1.0 + 1e-12);
    for (std::size_t k = 0; k < count; ++k) {
      if (std::find(active.begin(), active.end(), k) != active.end()) continue;
      const double f = ratio(k, x);
      if (f > beyond_ratio) {
        beyond_ratio = f;
        beyond = k;
      }
    }
    if (beyond < count) {
      active.push_back(beyond);
      std::sort(active.begin(), active.end());
      continue;
    }
    FrameMotion polished;
    polished.shift = x.head<2>();
    polished.rotation_rad = x.z();
    if (polished.shift.norm() > shift_limit) return std::nullopt;
    // The searches place the motion to about the square root of rounding; a polish that went
    // far from them found another stationary point, and the searches' answer stands.
    if (!tie_break && ((x - x0).head<2>().norm() > 1e-3 || std::abs(x.z() - x0.z()) > 1e-5))
      return std::nullopt;
    if (!(worst(x) <= f_start * (1.0 + 1e-12))) return std::nullopt;
    return polished;
  }
  return std::nullopt;
}

std::string mm(double value) { return detail::format_number(value, 4); }

}  // namespace

std::string_view tertiary_simulator_name(TertiarySimulator simulator) noexcept {
  switch (simulator) {
    case TertiarySimulator::fixed_at_basic: return "fixed_at_basic";
    case TertiarySimulator::translating: return "translating";
    case TertiarySimulator::none: break;
  }
  return "none";
}

std::string FrameMobility::description() const {
  std::vector<std::string> parts;
  if (translation_free) parts.push_back("no datum B: translation in A free");
  if (rotation_free) parts.push_back("no datum C: rotation about the frame's z axis free");
  if (shift_allowance > 0.0) parts.push_back("datum B at MMB: shift up to " + mm(shift_allowance) + " mm");
  if (rotation_follows_c)
    parts.push_back("rotation follows datum C (RMB), its simulator translating along its basic "
                    "direction");
  if (rotation_about_c)
    parts.push_back("datum C's simulator fixed at its basic location, " + mm(c_held_distance) +
                    " mm from B: the part turns about C's axis within datum B's clearance");
  if (c_shift_allowance > 0.0 && c_width)
    parts.push_back(std::string("datum C (") + (c_width->internal ? "slot" : "tab") +
                    ") at MMB: its centre plane may move up to " + mm(c_shift_allowance) +
                    " mm off the simulator's, less as the frame turns");
  else if (c_shift_allowance > 0.0 && rotation_about_c)
    parts.push_back("datum C at MMB: its axis may move up to " + mm(c_shift_allowance) +
                    " mm off its simulator's");
  else if (c_shift_allowance > 0.0)
    parts.push_back("datum C at MMB: C may move up to " + mm(c_shift_allowance) + " mm off its basic direction");
  for (const std::string& note : notes) parts.push_back(note);
  if (parts.empty()) return "frame fully fixed";
  std::string text = parts.front();
  for (std::size_t k = 1; k < parts.size(); ++k) text += "; " + parts[k];
  return text;
}

FrameMobility mobility_of(const std::vector<DatumReference>& datums, const DatumFrameResult& frame,
                          const std::optional<Eigen::Vector2d>& c_basic_location) {
  FrameMobility m;
  const DatumReference* b = find_reference(datums, 'B');
  const DatumReference* c = find_reference(datums, 'C');
  m.translation_free = b == nullptr;
  m.rotation_free = c == nullptr;
  if (b && !frame.b) throw FitError("datum B is referenced but the frame has no datum B");
  if (c && !frame.c_feature && !frame.c_plane && !frame.c_width)
    throw FitError("datum C is referenced but the frame has no datum C");
  if (b && b->boundary == MaterialBoundary::mmb)
    m.shift_allowance = mmb_allowance(*frame.b, frame.b->mating_size);
  if (b && b->boundary == MaterialBoundary::lmb)
    m.notes.push_back("datum B at LMB: shift not applied (conservative)");
  if (c && (frame.c_feature || frame.c_width)) {
    if (frame.c_width) {
      // A slot or tab: located by its centre on its centre line (its points' centroid
      // projected there), which the frame's clocking put on the basic ray.
      const ClockingWidthResult& w = *frame.c_width;
      m.c_location = frame.frame.point_to_frame(w.centre_on_a).head<2>();
      if (c->boundary == MaterialBoundary::mmb) m.c_shift_allowance = mmb_allowance(w, w.mating_width);
      const std::optional<double> mmb = mmb_size_of(w.kind, w.size, w.mmb_size);
      if (m.c_shift_allowance > 0.0 && mmb) {
        FrameMobility::WidthSimulator simulator;
        simulator.internal = !is_external(w.kind);
        simulator.mmb_width = *mmb;
        const auto face_hull = [&](const Eigen::Matrix3Xd& face) {
          std::vector<Eigen::Vector2d> in_frame;
          for (Eigen::Index i = 0; i < face.cols(); ++i)
            in_frame.push_back(frame.frame.point_to_frame(face.col(i)).head<2>());
          return hull_vertices(std::move(in_frame));
        };
        simulator.positive_face = face_hull(w.positive_face);
        simulator.negative_face = face_hull(w.negative_face);
        m.c_width = std::move(simulator);
      }
    } else {
      m.c_location = frame.frame.point_to_frame(frame.c_feature->axis_on_a).head<2>();
      if (c->boundary == MaterialBoundary::mmb)
        m.c_shift_allowance = mmb_allowance(*frame.c_feature, frame.c_feature->mating_size);
    }
    if (c->boundary == MaterialBoundary::lmb)
      m.notes.push_back("datum C at LMB: rotation allowance not applied (conservative)");
    // The reading of C's simulator. Fixed at basic is modelled for a bore or pin; a slot or tab
    // keeps the translating reading.
    const bool modelled = !frame.c_width;
    m.c_simulator = c->translating || !modelled ? TertiarySimulator::translating
                                                : TertiarySimulator::fixed_at_basic;
    // With no room of its own, C holds the rotation exactly: it follows a shifting frame
    // (translating), or the part turns about it (fixed at basic). With room at MMB, C's axis
    // stays within it of its simulator: off C's basic ray (translating), or off its basic
    // location (fixed at basic).
    if (m.c_shift_allowance > 0.0 && m.c_simulator == TertiarySimulator::fixed_at_basic)
      m.rotation_about_c = true;
    if (m.c_shift_allowance == 0.0 && m.shift_allowance > 0.0) {
      m.rotation_follows_c = m.c_simulator == TertiarySimulator::translating;
      m.rotation_about_c = m.c_simulator == TertiarySimulator::fixed_at_basic;
    }
    if (!c->translating && !modelled && (m.shift_allowance > 0.0 || m.c_shift_allowance > 0.0))
      m.notes.push_back(std::string("datum C (") +
                        std::string(feature_kind_name(frame.c_width->kind)) +
                        ") keeps the translating reading: a width simulator fixed at basic is "
                        "not modelled");
    if ((m.rotation_follows_c || m.rotation_about_c || m.c_shift_allowance > 0.0) &&
        m.c_location.norm() <= 1e-9)
      throw FitError(frame.c_width
                         ? "datum C's centre lies on datum B's axis: it cannot clock the frame"
                         : "datum C's axis coincides with datum B's: it cannot clock the frame");
    if (m.rotation_about_c) {
      if (!c_basic_location || !(c_basic_location->norm() > 0.0))
        throw FitError("datum C's simulator is fixed at its basic location, which is not given "
                       "(give C's basic location, or reference C as C(T) to let it translate)");
      // C's simulator centres C (RMB) or clears it (MMB) when the room allows; beyond it, it
      // meets C with the room used up along C's direction, the part held there.
      const double basic = c_basic_location->norm(), actual = m.c_location.norm();
      const double room = m.shift_allowance + m.c_shift_allowance;
      m.c_held_distance = std::clamp(basic, actual - room, actual + room);
      if (m.c_held_distance != basic)
        m.notes.push_back("datum C lies " + mm(std::abs(actual - basic)) +
                          " mm off its basic distance from B, beyond the room of B and C: C's "
                          "simulator meets C with the room used up, no motion left");
    }
  } else if (c && m.shift_allowance > 0.0) {
    m.notes.push_back("datum C (plane) keeps its direction while B shifts; its simulator fixed at "
                      "basic, which would keep the part in contact, is not modelled");
  }
  return m;
}

MobilityResult best_frame_motion(const std::vector<const BoreResult*>& bores,
                                 const std::vector<const PlanBore*>& plans,
                                 const FrameMobility& mobility, const MobilityOptions& options) {
  if (bores.size() != plans.size())
    throw FitError("datum mobility: bores and plans are not parallel");
  for (std::size_t i = 0; i < bores.size(); ++i)
    if (!bores[i] || !plans[i]) throw FitError("datum mobility: a bore is missing");
  MobilityResult result;
  const auto finish = [&](const FrameMotion& motion) {
    result.motion = motion;
    result.positions.clear();
    result.worst_ratio = 0.0;
    for (std::size_t i = 0; i < bores.size(); ++i) {
      result.positions.push_back(position_after_frame_motion(*bores[i], *plans[i], motion));
      const PositionResult& p = result.positions.back();
      result.worst_ratio = std::max(result.worst_ratio, p.value / p.allowed);
    }
    return result;
  };
  if (bores.empty()) return result;
  const PatternModel model(bores);
  std::vector<Term> terms;
  model.terms_at(0.0, terms);
  const double f0 = worst_ratio(terms, Eigen::Vector2d::Zero());
  result.iterations = 1;
  const Freedom freedom = freedom_of(mobility);
  const bool rotation_fixed = freedom.rotation_fixed, shift_fixed = freedom.shift_fixed;
  const bool unmoved_allowed = freedom.unmoved_allowed;
  if ((rotation_fixed && shift_fixed) || (f0 == 0.0 && unmoved_allowed))
    return finish(FrameMotion{});

  // Argument tolerances from the Lipschitz constants of F: |dF/ds| <= max w |M|, and a
  // rotation moves a term by at most its lever arm (plus the largest shift) per radian.
  double ls = 0.0, arm = 0.0;
  for (const Term& t : terms) ls = std::max(ls, t.weight * t.m.norm());
  // Turning about C also moves the origin by |c| per radian.
  const double about_c_arm = mobility.rotation_about_c ? mobility.c_location.norm() : 0.0;
  for (const auto& [q, w] : model.levers())
    arm = std::max(arm, w * (q.norm() + about_c_arm + 1.0));
  const double s_tolerance = std::max(options.tolerance / std::max(ls, 1e-300), 1e-15);
  const double theta_tolerance = std::max(options.tolerance / std::max(arm, 1e-300), 1e-16);
  const InnerSolver inner(mobility, options, s_tolerance);

  const auto solve_at = [&](double theta) {
    model.terms_at(theta, terms);
    return inner.solve(RatioObjective{terms}, theta);
  };
  const double bracket = rotation_fixed ? 0.0 : rotation_bracket(model, mobility, f0);
  const FrameMotion searched = search_rotation(mobility, options, solve_at, f0, unmoved_allowed,
                                               bracket, theta_tolerance, result.iterations);
  // The polish, where the allowed set is open about the answer: the shift free or within B's
  // disk, the rotation free or fixed, and no datum C that ties the two together.
  const bool c_ties = mobility.rotation_follows_c || mobility.rotation_about_c ||
                      mobility.c_shift_allowance > 0.0 || mobility.c_width;
  if (!c_ties) {
    const bool shift_free = !shift_fixed;
    const std::array<bool, 3> free{shift_free, shift_free, !rotation_fixed};
    const double limit = mobility.translation_free ? infinity : mobility.shift_allowance;
    if (const std::optional<FrameMotion> polished =
            polish_motion(model, searched, free, limit))
      return finish(*polished);
    // Not an isolated optimum (or the polish failed): among the equally good motions, the one
    // with the least sum of squared ratios.
    if (const std::optional<FrameMotion> chosen =
            polish_motion(model, searched, free, limit, true))
      return finish(*chosen);
  }
  return finish(searched);
}

BoundaryMobilityResult best_boundary_motion(const std::vector<const BoreResult*>& bores,
                                            const FrameMobility& mobility,
                                            const MobilityOptions& options) {
  for (const BoreResult* bore : bores)
    if (!bore) throw FitError("datum mobility: a bore is missing");
  BoundaryMobilityResult result;
  const auto finish = [&](const FrameMotion& motion) {
    result.motion = motion;
    result.boundaries.clear();
    result.worst_margin = infinity;
    for (const BoreResult* bore : bores) {
      result.boundaries.push_back(virtual_condition_after_frame_motion(*bore, motion));
      const VirtualConditionResult& v = result.boundaries.back();
      result.worst_margin =
          std::min(result.worst_margin, v.condition == MaterialCondition::lmc
                                            ? v.boundary - v.clearance
                                            : v.clearance - v.boundary);
    }
    return result;
  };
  if (bores.empty()) return result;
  BoundaryModel model(bores, mobility);
  model.at_rotation(0.0);
  const double f0 = model(Eigen::Vector2d::Zero());
  result.iterations = 1;
  const Freedom freedom = freedom_of(mobility);
  const bool rotation_fixed = freedom.rotation_fixed, shift_fixed = freedom.shift_fixed;
  const bool unmoved_allowed = freedom.unmoved_allowed;
  if (rotation_fixed && shift_fixed) return finish(FrameMotion{});

  // Argument tolerances from the rates of change of the objective, as best_frame_motion's.
  model.measure_shift_gain();
  const double about_c_arm = mobility.rotation_about_c ? 2.0 * mobility.c_location.norm() : 0.0;
  const double s_tolerance =
      std::max(options.tolerance / std::max(model.shift_lipschitz(), 1e-300), 1e-15);
  const double theta_tolerance =
      std::max(options.tolerance / std::max(model.rotation_arm() + about_c_arm, 1e-300), 1e-16);
  const InnerSolver inner(mobility, options, s_tolerance);
  const auto solve_at = [&](double theta) {
    model.at_rotation(theta);
    return inner.solve(model, theta);
  };
  // A free rotation is searched over the whole turn: unlike the position's ratio, the
  // clearance gives no bound from the unmoved frame (an axis outside its bore may be anywhere).
  const double bracket =
      rotation_fixed ? 0.0 : simulator_rotation_bracket(mobility).value_or(pi);
  return finish(search_rotation(mobility, options, solve_at, f0, unmoved_allowed, bracket,
                                theta_tolerance, result.iterations));
}

}  // namespace cylzone
