#include "detail/fit_support.hpp"

#if defined(__SSE2__)
#include <emmintrin.h>
#endif

#include <Eigen/Eigenvalues>
#include <Eigen/Geometry>
#include <algorithm>
#include <array>
#include <cmath>
#include <cstdio>
#include <limits>
#include <stdexcept>
#include <vector>

#include "cylzone/core/errors.hpp"
#include "detail/sse2_lanes.hpp"

namespace cylzone::detail {

Eigen::Vector3d centroid(const Eigen::Matrix3Xd& points) {
  const Eigen::Index n = points.cols();
  if (n == 0) throw FitError("no points to fit");
  // Four interleaved partial sums: independent addition chains (several times faster than one)
  // and a fixed order of additions, hence the same result on every run.
  Eigen::Vector3d lane[4] = {Eigen::Vector3d::Zero(), Eigen::Vector3d::Zero(),
                             Eigen::Vector3d::Zero(), Eigen::Vector3d::Zero()};
  Eigen::Index i = 0;
  for (; i + 4 <= n; i += 4)
    for (int k = 0; k < 4; ++k) lane[k] += points.col(i + k);
  for (; i < n; ++i) lane[0] += points.col(i);
  return ((lane[0] + lane[1]) + (lane[2] + lane[3])) / static_cast<double>(n);
}

double data_scale(const Eigen::Matrix3Xd& points, const Eigen::Vector3d& centre) {
  if (points.cols() == 0) return 0.0;
  return std::sqrt((points.colwise() - centre).colwise().squaredNorm().maxCoeff());
}

double planar_scale(const Eigen::Matrix2Xd& uv) {
  if (uv.cols() == 0) return 0.0;
  // Evaluate the mean once: inside the column-wise expression Eigen would recompute it per column.
  const Eigen::Vector2d mean = uv.rowwise().mean();
  return (uv.colwise() - mean).colwise().norm().maxCoeff();
}

Eigen::Matrix3d basis_from_direction(const Eigen::Vector3d& direction) {
  const Eigen::Vector3d w = direction.normalized();
  // Start from the coordinate axis least parallel to w, so u is well conditioned.
  const Eigen::Vector3d seed =
      std::abs(w.x()) <= std::abs(w.y()) ? Eigen::Vector3d::UnitX() : Eigen::Vector3d::UnitY();
  const Eigen::Vector3d u = (seed - seed.dot(w) * w).normalized();
  const Eigen::Vector3d v = w.cross(u);
  Eigen::Matrix3d basis;
  basis << u, v, w;
  return basis;
}

Eigen::Matrix3Xd local_coordinates(const Eigen::Matrix3Xd& points, const Eigen::Vector3d& origin,
                                   const Eigen::Matrix3d& basis) {
  return basis.transpose() * (points.colwise() - origin);
}

void local_coordinates_into(const Eigen::Matrix3Xd& points, const Eigen::Vector3d& origin,
                            const Eigen::Matrix3d& basis, Eigen::Matrix3Xd& local) {
  // One plain loop, the operations of local_coordinates' product in its order: Eigen evaluates
  // basis^T (p - origin) with a fixed 3 x 3 factor coefficient by coefficient, w = p - origin
  // and then (b_0k w_0 + b_1k w_1) + b_2k w_2 for row k (column k of the basis), with w
  // recomputed for every row. Here w is formed once a point and the rows follow from it: the
  // same roundings (no FMA contraction: the build has no -mfma, and no -ffast-math), so the
  // same bits, signed zeros included (test_fit_support compares them with local_coordinates,
  // bit for bit, across sizes and with zero coordinates).
  const Eigen::Index n = points.cols();
  local.resize(3, n);
  const double b00 = basis(0, 0), b10 = basis(1, 0), b20 = basis(2, 0);
  const double b01 = basis(0, 1), b11 = basis(1, 1), b21 = basis(2, 1);
  const double b02 = basis(0, 2), b12 = basis(1, 2), b22 = basis(2, 2);
  const double ox = origin.x(), oy = origin.y(), oz = origin.z();
  const double* __restrict p = points.data();
  double* __restrict out = local.data();
  Eigen::Index i = 0;
#if defined(__SSE2__)
  {
    // Two points per operation: lane l holds point i + l and takes the scalar loop's
    // operations in its order (SSE2 rounds each lane as the scalar instruction does).
    const __m128d vb00 = _mm_set1_pd(b00), vb10 = _mm_set1_pd(b10), vb20 = _mm_set1_pd(b20),
                  vb01 = _mm_set1_pd(b01), vb11 = _mm_set1_pd(b11), vb21 = _mm_set1_pd(b21),
                  vb02 = _mm_set1_pd(b02), vb12 = _mm_set1_pd(b12), vb22 = _mm_set1_pd(b22),
                  vox = _mm_set1_pd(ox), voy = _mm_set1_pd(oy), voz = _mm_set1_pd(oz);
    for (; i + 2 <= n; i += 2) {
      const double* a = p + 3 * i;
      const __m128d wx = _mm_set_pd(a[3], a[0]) - vox, wy = _mm_set_pd(a[4], a[1]) - voy,
                    wz = _mm_set_pd(a[5], a[2]) - voz;
      const __m128d u = (vb00 * wx + vb10 * wy) + vb20 * wz;
      const __m128d v = (vb01 * wx + vb11 * wy) + vb21 * wz;
      const __m128d w = (vb02 * wx + vb12 * wy) + vb22 * wz;
      double* o = out + 3 * i;
      // (u0, v0, w0, u1, v1, w1): the columns of the two points.
      _mm_storeu_pd(o, _mm_unpacklo_pd(u, v));
      _mm_storeu_pd(o + 2, _mm_shuffle_pd(w, u, 2));  // (w0, u1)
      _mm_storeu_pd(o + 4, _mm_unpackhi_pd(v, w));
    }
  }
#endif
  for (; i < n; ++i) {
    const double wx = p[3 * i] - ox, wy = p[3 * i + 1] - oy, wz = p[3 * i + 2] - oz;
    out[3 * i] = (b00 * wx + b10 * wy) + b20 * wz;
    out[3 * i + 1] = (b01 * wx + b11 * wy) + b21 * wz;
    out[3 * i + 2] = (b02 * wx + b12 * wy) + b22 * wz;
  }
}

Eigen::Matrix2Xd planar_coordinates(const Eigen::Matrix3Xd& points, const Eigen::Vector3d& origin,
                                    const Eigen::Matrix3d& basis) {
  return basis.leftCols<2>().transpose() * (points.colwise() - origin);
}

Eigen::Vector3d canonical_direction(const Eigen::Vector3d& direction,
                                    const std::optional<Eigen::Vector3d>& hint) {
  // Every fitted direction passes through here: a NaN from an overflowed scatter matrix or
  // solve must stop the fit, not become the reported axis or normal.
  if (!direction.allFinite())
    throw FitError("coordinates too large: the fitted direction is not finite (its computation "
                   "overflowed double precision)");
  Eigen::Vector3d d = direction.normalized();
  constexpr double tiny = 1e-12;
  if (hint) {
    const double s = d.dot(*hint);
    if (std::abs(s) > tiny * hint->norm()) return s < 0 ? Eigen::Vector3d(-d) : d;
  }
  for (int k : {2, 1, 0}) {
    if (std::abs(d(k)) > tiny) return d(k) < 0 ? Eigen::Vector3d(-d) : d;
  }
  return d;
}

Axis canonical_axis(const Eigen::Vector3d& point_on_axis, const Eigen::Vector3d& direction,
                    const Eigen::Vector3d& centroid, const std::optional<Eigen::Vector3d>& hint) {
  Axis axis;
  axis.direction = canonical_direction(direction, hint);
  axis.point = point_on_axis + (centroid - point_on_axis).dot(axis.direction) * axis.direction;
  return axis;
}

std::pair<double, double> axial_extent(const Eigen::Matrix3Xd& points, const Axis& axis) {
  if (points.cols() == 0) return {0.0, 0.0};
  const Eigen::RowVectorXd t = axis.direction.transpose() * (points.colwise() - axis.point);
  return {t.minCoeff(), t.maxCoeff()};
}

Residuals make_residuals(Eigen::VectorXd values) {
  Residuals r;
  if (values.size() > 0) {
    r.rms = std::sqrt(values.squaredNorm() / static_cast<double>(values.size()));
    r.form = values.maxCoeff() - values.minCoeff();
  }
  // Every fit's residuals pass through here, and a non-finite element (centre, axis, normal,
  // radius) makes them non-finite too: this is where a fit that overflowed is stopped, rather
  // than reported as a number or a null. A non-finite value makes its square, and so the sum
  // of squares and the rms, NaN or infinite (the squares are never negative, so no infinity
  // cancels): the rms test decides for every value, with no pass of its own over them.
  if (!std::isfinite(r.rms) || !std::isfinite(r.form))
    throw FitError(
        "coordinates too large: the residuals overflow double precision (or a coordinate is "
        "not finite); the element cannot be determined");
  r.values = std::move(values);
  return r;
}

namespace {
constexpr double two_pi = 6.283185307179586476925286766559;
constexpr std::size_t coverage_buckets = std::size_t(1) << 15;

// Exact inverse of ArcCoverage's diamond angle: the direction it stands for, then its true
// angle in [0, 2 pi] (a pseudo-angle rounded up to 4 is the direction 2 pi).
double true_angle(double diamond) {
  if (diamond <= 1.0) return std::atan2(diamond, 1.0 - diamond);  // [0, pi/2]
  if (diamond < 3.0) {                                             // (pi/2, 3 pi/2)
    const double y = 2.0 - diamond;
    const double a = std::atan2(y, -(1.0 - std::abs(y)));
    return a < 0.0 ? a + two_pi : a;
  }
  const double y = diamond - 4.0;  // [3, 4] -> (3 pi/2, 2 pi], 4 itself (rounded) -> 2 pi
  return std::atan2(y, 1.0 + y) + two_pi;
}
}  // namespace

namespace {
constexpr double pi = 3.14159265358979323846;
constexpr double tan_pi_8 = 0.41421356237309504880;  // sqrt(2) - 1
// atan(s) = s sum_k (-1)^k w^k / (2k + 1), w = s^2; alternating, so the remainder after k = 17
// is below w^18 / 37 <= 4.5e-16 (relative) for w <= tan^2(pi/8) = 0.1716.
constexpr int atan_terms = 18;
constexpr std::array<double, atan_terms> atan_coefficient = [] {
  std::array<double, atan_terms> c{};
  for (int k = 0; k < atan_terms; ++k) c[k] = (k % 2 == 0 ? 1.0 : -1.0) / (2 * k + 1);
  return c;
}();
}  // namespace

double polar_angle(double x, double y) noexcept {
  const double ax = std::abs(x), ay = std::abs(y);
  const double big = std::max(ax, ay);
  if (big == 0.0) return 0.0;
  const double t = std::min(ax, ay) / big;  // tan of the angle within the octant, in [0, 1]
  // atan(t) = pi/4 + atan((t - 1)/(t + 1)) brings the argument to |s| <= tan(pi/8).
  const bool upper = t > tan_pi_8;
  const double s = upper ? (t - 1.0) / (t + 1.0) : t;
  const double w = s * s;
  double series = atan_coefficient[atan_terms - 1];
  for (int k = atan_terms - 2; k >= 0; --k) series = atan_coefficient[k] + w * series;
  double a = s * series + (upper ? pi / 4.0 : 0.0);
  if (ay > ax) a = pi / 2.0 - a;
  if (x < 0.0) a = pi - a;
  if (y < 0.0) a = 2.0 * pi - a;
  return a;
}

void polar_angles(const double* xy, std::size_t n, double* angle) noexcept {
  // Two lanes (the x86-64 baseline's SSE2 width; portable vector extensions of GCC and Clang):
  // each lane runs polar_angle's operations in its order, IEEE-rounded the same (no
  // contraction into fused multiply-adds: the baseline has none), and each branch becomes a
  // select, so every lane is polar_angle's result to the bit (test_fit_support checks it).
  typedef double Lane2 __attribute__((vector_size(16)));
  using Mask2 = decltype(Lane2{} < Lane2{});  // a comparison's lanes: all ones or zero
  const auto select = [](Mask2 m, Lane2 a, Lane2 b) {
    return reinterpret_cast<Lane2>((m & reinterpret_cast<Mask2>(a)) |
                                   (~m & reinterpret_cast<Mask2>(b)));
  };
  const auto splat = [](double v) { return Lane2{v, v}; };
  const Mask2 magnitude = ~reinterpret_cast<Mask2>(splat(-0.0));  // all bits but the sign
  const Lane2 zero = splat(0.0), one = splat(1.0);
  std::size_t k = 0;
  for (; k + 2 <= n; k += 2) {
    const Lane2 x = {xy[2 * k], xy[2 * k + 2]}, y = {xy[2 * k + 1], xy[2 * k + 3]};
    const Lane2 ax = reinterpret_cast<Lane2>(reinterpret_cast<Mask2>(x) & magnitude);  // std::abs
    const Lane2 ay = reinterpret_cast<Lane2>(reinterpret_cast<Mask2>(y) & magnitude);
    const Lane2 big = select(ax < ay, ay, ax);    // std::max(ax, ay)
    const Lane2 small = select(ay < ax, ay, ax);  // std::min(ax, ay)
    const Mask2 centre = big == zero;
    // The centre's lanes divide by one (no 0/0) and are set to 0 at the end, as polar_angle
    // returns early there.
    const Lane2 t = small / select(centre, one, big);
    const Mask2 upper = t > splat(tan_pi_8);
    const Lane2 s = select(upper, (t - one) / (t + one), t);
    const Lane2 w = s * s;
    Lane2 series = splat(atan_coefficient[atan_terms - 1]);
    for (int j = atan_terms - 2; j >= 0; --j) series = splat(atan_coefficient[j]) + w * series;
    Lane2 a = s * series + select(upper, splat(pi / 4.0), zero);
    a = select(ay > ax, splat(pi / 2.0) - a, a);
    a = select(x < zero, splat(pi) - a, a);
    a = select(y < zero, splat(2.0 * pi) - a, a);
    a = select(centre, zero, a);
    angle[k] = a[0];
    angle[k + 1] = a[1];
  }
  for (; k < n; ++k) angle[k] = polar_angle(xy[2 * k], xy[2 * k + 1]);
}

ArcCoverage::ArcCoverage(std::size_t expected_points)
    : exact_(expected_points <= coverage_buckets) {
  // Exact range: 1.5 buckets per point (see the header: then no gap within a bucket can be the
  // largest); beyond it a fixed 2^15.
  const std::size_t buckets =
      exact_ ? std::max<std::size_t>(2, expected_points + (expected_points + 1) / 2)
             : coverage_buckets;
  buckets_ = buckets;
  per_unit_ = static_cast<double>(buckets) / 4.0;
  // Interleaved (low, high) pairs: one cache line per update.
  bounds_.reset(new double[2 * buckets]);
  for (std::size_t b = 0; b < buckets; ++b) {
    bounds_[2 * b] = std::numeric_limits<double>::infinity();
    bounds_[2 * b + 1] = -std::numeric_limits<double>::infinity();
  }
  if (exact_) ends_.reset(new Ends[buckets]);
}

void ArcCoverage::merge(const ArcCoverage& other) {
  if (other.buckets_ != buckets_ || other.exact_ != exact_)
    throw std::invalid_argument("ArcCoverage::merge: different bucket layouts");
  for (std::size_t k = 0; k < 2 * buckets_; k += 2) {
    if (exact_) {
      const Ends& e = other.ends_[k / 2];
      if (other.bounds_[k] < bounds_[k]) {
        ends_[k / 2].low_x = e.low_x;
        ends_[k / 2].low_y = e.low_y;
      }
      if (other.bounds_[k + 1] > bounds_[k + 1]) {
        ends_[k / 2].high_x = e.high_x;
        ends_[k / 2].high_y = e.high_y;
      }
    }
    bounds_[k] = std::min(bounds_[k], other.bounds_[k]);
    bounds_[k + 1] = std::max(bounds_[k + 1], other.bounds_[k + 1]);
  }
  count_ += other.count_;
}

namespace {
/// The libm angle of (x, y) in [0, 2 pi], as the largest gap of sorted angles takes it.
/// The libm angle of (x, y) in [0, 2 pi], as the largest gap of sorted angles takes it, kept on
/// the side of the +x axis its pseudo-angle `diamond` puts it: a direction within rounding of
/// the axis may have its pseudo-angle at one end of [0, 4] and its atan2 at the other end of
/// [0, 2 pi] (a subnormal offset), which would make a gap a full turn too wide.
double libm_angle(double x, double y, double diamond) {
  double a = std::atan2(y, x);
  a = a < 0.0 ? a + two_pi : a;
  if (diamond < 1.0 && a > 1.5 * 3.14159265358979323846) return a - two_pi;
  if (diamond > 3.0 && a < 0.5 * 3.14159265358979323846) return a + two_pi;
  return a;
}
}  // namespace

double ArcCoverage::degrees() const {
  if (count_ < 2) return 0.0;
  const std::size_t buckets = buckets_;
  const double* bound = bounds_.get();
  std::size_t first_bucket = 0;
  while (!(bound[2 * first_bucket] <= bound[2 * first_bucket + 1])) ++first_bucket;
  // Pseudo-gaps between neighbouring non-empty buckets (and the wrap-around gap). About half
  // the buckets are empty, at random: selects, not branches.
  const double first = bound[2 * first_bucket];
  double previous = bound[2 * first_bucket + 1], largest_pseudo = 0.0;
  for (std::size_t k = first_bucket + 1; k < buckets; ++k) {
    const double low = bound[2 * k], high = bound[2 * k + 1];
    const bool filled = low <= high;
    largest_pseudo = filled ? std::max(largest_pseudo, low - previous) : largest_pseudo;
    previous = filled ? high : previous;
  }
  const double wrap_pseudo = first + 4.0 - previous;
  largest_pseudo = std::max(largest_pseudo, wrap_pseudo);
  // A true gap lies between 1 and 2 times its pseudo-gap (the slope of the true angle against
  // the pseudo-angle is within [1, 2]), so only gaps of at least half the largest pseudo-gap
  // can be the largest true gap (less a margin for the pseudo-angles' rounding); only their
  // ends are converted.
  const double candidate = 0.5 * largest_pseudo - 1e-12;
  // The true gap from the highest point of bucket `below` to the lowest of `above`, whose angle
  // is taken `turn` (0 or 2 pi) further round.
  const auto true_gap = [&](std::size_t below, std::size_t above, double below_pseudo,
                            double above_pseudo, double turn) {
    if (!exact_) return true_angle(above_pseudo) + turn - true_angle(below_pseudo);
    const Ends& low = ends_[below];
    const Ends& high = ends_[above];
    return libm_angle(high.low_x, high.low_y, above_pseudo) + turn -
           libm_angle(low.high_x, low.high_y, below_pseudo);
  };
  struct Candidate {
    std::size_t below, above;
    double below_pseudo, above_pseudo, turn;
    double key;   // monotone in the gap (exact range), below
    bool ranked;  // key set; otherwise always converted
  };
  // The candidates in order of their gaps round the circle: the first `inline_candidates` on
  // the stack, more (a ring of many evenly spaced points) moved to the heap. The fits call this
  // at every step of their iterations on a few dozen points, where an allocation per call cost
  // more than the rest of the count.
  constexpr std::size_t inline_candidates = 64;
  std::array<Candidate, inline_candidates> fixed;
  std::vector<Candidate> grown;
  std::size_t candidate_count = 0;
  const auto push = [&](const Candidate& c) {
    if (candidate_count < inline_candidates) {
      fixed[candidate_count] = c;
    } else {
      if (grown.empty()) {
        grown.reserve(std::min<std::size_t>(count_, 4 * inline_candidates));
        grown.assign(fixed.begin(), fixed.end());
      }
      grown.push_back(c);
    }
    ++candidate_count;
  };
  previous = bound[2 * first_bucket + 1];
  std::size_t previous_bucket = first_bucket;
  for (std::size_t k = first_bucket + 1; k < buckets; ++k) {
    const double low = bound[2 * k], high = bound[2 * k + 1];
    const bool filled = low <= high;
    if (filled && low - previous >= candidate)  // rare: predicted
      push({previous_bucket, k, previous, low, 0.0, 0.0, false});
    previous = filled ? high : previous;
    previous_bucket = filled ? k : previous_bucket;
  }
  if (wrap_pseudo >= candidate)
    push({previous_bucket, first_bucket, previous, first, two_pi, 0.0, false});
  Candidate* const candidates_begin =
      candidate_count <= inline_candidates ? fixed.data() : grown.data();
  Candidate* const candidates_end = candidates_begin + candidate_count;
  // Evenly spaced directions (a probed ring) make every gap a candidate, two atan2 each. In the
  // exact range the candidates are first ranked without trigonometry: the gap from direction
  // L to direction H turns by theta with (cos, sin) proportional to (L.H, L x H), and that
  // vector's diamond angle is monotone in theta on [0, 2 pi) with slope between 1/2 and 1, off
  // by rounding only (a few 1e-16). Only the candidates within `margin` of the largest key can
  // hold the largest libm gap: if G_i <= G_j (libm, each within 2e-15 of its theta), then
  // key_i - key_j <= 1e-14, far below the margin. A candidate whose pseudo-gap reaches 3 (a
  // true gap possibly near 2 pi, where the diamond angle wraps) is not ranked but always
  // converted, as is every candidate when there are two or fewer. So the result is the same
  // bits as converting every candidate.
  double best_key = -std::numeric_limits<double>::infinity();
  if (exact_ && candidate_count > 2) {
    for (Candidate* c_at = candidates_begin; c_at != candidates_end; ++c_at) {
      Candidate& c = *c_at;
      const double pseudo_gap = c.above_pseudo + (c.turn > 0.0 ? 4.0 : 0.0) - c.below_pseudo;
      if (pseudo_gap >= 3.0) continue;
      const Ends& l = ends_[c.below];
      const Ends& h = ends_[c.above];
      const double along = l.high_x * h.low_x + l.high_y * h.low_y;
      const double across = l.high_x * h.low_y - l.high_y * h.low_x;
      const double p = across / (std::abs(along) + std::abs(across));
      double key = std::signbit(along) ? 2.0 - p : p;
      key = key < 0.0 ? key + 4.0 : key;
      // A pseudo-gap below 3 is a true gap below 6 rad, a key below 3.775: one above 3.8 could
      // only be a turn read the wrong way round (not seen; left unranked, to be safe).
      if (key > 3.8) continue;
      c.key = key;
      c.ranked = true;
      best_key = std::max(best_key, key);
    }
  }
  constexpr double margin = 1e-12;
  double largest = 0.0;
  for (const Candidate* c = candidates_begin; c != candidates_end; ++c)
    if (!c->ranked || c->key >= best_key - margin)
      largest = std::max(largest,
                         true_gap(c->below, c->above, c->below_pseudo, c->above_pseudo, c->turn));
  return (two_pi - largest) * 360.0 / two_pi;
}

double angular_coverage_deg(const Eigen::Matrix3Xd& points, const Eigen::Vector3d& centre,
                            const Eigen::Matrix3d& basis) {
  ArcCoverage coverage(static_cast<std::size_t>(points.cols()));
  const Eigen::Vector3d u = basis.col(0), v = basis.col(1);
  for (Eigen::Index i = 0; i < points.cols(); ++i) {
    const Eigen::Vector3d d = points.col(i) - centre;
    coverage.add(d.dot(u), d.dot(v));
  }
  return coverage.degrees();
}

void require_point_count(std::size_t n, std::size_t needed, const char* element) {
  if (n < needed)
    throw FitError(std::string("a ") + element + " needs at least " + std::to_string(needed) +
                   " points, got " + std::to_string(n));
}

Eigen::MatrixXd covariance_from_normal_matrix(const Eigen::MatrixXd& jtj, double ssr,
                                              std::size_t n) {
  const auto p = static_cast<std::size_t>(jtj.rows());
  const double sigma2 = n > p ? ssr / static_cast<double>(n - p) : 0.0;
  // jtj is symmetric positive definite for a non-degenerate fit; LDLT is stable and cheap.
  const Eigen::MatrixXd inverse =
      jtj.ldlt().solve(Eigen::MatrixXd::Identity(jtj.rows(), jtj.cols()));
  return sigma2 * inverse;
}

void warn_on_coverage(FitSummary& summary, double coverage_deg, const FitOptions& options) {
  // FitOptions::result_coverage off: the coverage may not have been measured (left 0).
  if (options.result_coverage && coverage_deg < options.coverage_warning_deg)
    summary.warnings.push_back("points cover only " + format_number(coverage_deg, 1) +
                               " degrees of arc; radius and centre are poorly determined");
}

std::string format_number(double value, int decimals) {
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, "%.*f", decimals, value);
  return buffer;
}

Eigen::Matrix3d scatter_matrix(const Eigen::Matrix3Xd& points, const Eigen::Vector3d& centre) {
  // Six independent sums of the upper triangle; one pass, no centred copy of the points. Each
  // sum adds its products in point order; with SSE2 the six sums ride in three registers of
  // two (xx, xy), (xz, yy), (yz, zz), each lane the scalar loop's multiplication and addition
  // (SSE2 rounds each lane as the scalar instruction does), so the same bits.
  double xx = 0, xy = 0, xz = 0, yy = 0, yz = 0, zz = 0;
  const Eigen::Index n = points.cols();
  const double* p = points.data();
  const double cx = centre.x(), cy = centre.y(), cz = centre.z();
  Eigen::Index i = 0;
#if defined(__SSE2__)
  {
    const __m128d cxy = _mm_set_pd(cy, cx), cz2 = _mm_set1_pd(cz);
    __m128d xx_xy = _mm_setzero_pd(), xz_yy = _mm_setzero_pd(), yz_zz = _mm_setzero_pd();
    for (; i < n; ++i) {
      const __m128d d = _mm_sub_pd(_mm_loadu_pd(p + 3 * i), cxy);  // (x, y)
      const __m128d z = _mm_sub_pd(_mm_load1_pd(p + 3 * i + 2), cz2);  // (z, z)
      xx_xy = _mm_add_pd(xx_xy, _mm_mul_pd(_mm_unpacklo_pd(d, d), d));       // x (x, y)
      xz_yy = _mm_add_pd(xz_yy, _mm_mul_pd(d, _mm_move_sd(d, z)));           // (x, y) (z, y)
      yz_zz = _mm_add_pd(yz_zz, _mm_mul_pd(_mm_shuffle_pd(d, z, 1), z));     // (y, z) z
    }
    split_lanes(xx_xy, xz_yy, yz_zz, xx, xy, xz, yy, yz, zz);
  }
#endif
  for (; i < n; ++i) {
    const double x = p[3 * i] - cx;
    const double y = p[3 * i + 1] - cy;
    const double z = p[3 * i + 2] - cz;
    xx += x * x;
    xy += x * y;
    xz += x * z;
    yy += y * y;
    yz += y * z;
    zz += z * z;
  }
  Eigen::Matrix3d s;
  s << xx, xy, xz, xy, yy, yz, xz, yz, zz;
  return s;
}

PrincipalAxes principal_axes(const Eigen::Matrix3Xd& points, const Eigen::Vector3d& centre) {
  PrincipalAxes axes;
  const Eigen::SelfAdjointEigenSolver<Eigen::Matrix3d> eigen(scatter_matrix(points, centre));
  axes.directions = eigen.eigenvectors();
  // The eigenvalues resolve a spread only down to ~sqrt(eps) of the largest; the eigenvectors
  // are accurate to ~eps, so the spreads are measured by projecting the points on them (an
  // exactly planar or collinear set then shows rounding-level spread, as it must).
  // The operations of Eigen's (D^T d).cwiseAbs2() and d.squaredNorm() for d = p - centre, in
  // their order: the projections on the first two directions as (t_k0 d0 + t_k1 d1) + t_k2 d2,
  // on the third as t_20 d0 + (t_21 d1 + t_22 d2) (Eigen's vectorised rows, then its scalar
  // sum of the last), |d|^2 as (d0^2 + d1^2) + d2^2; each spread summed in point order and the
  // largest |d|^2 kept as std::max keeps it. Two points per SSE2 operation (each lane rounds as
  // the scalar instruction does), so the same bits as the Eigen expressions
  // (test_fit_support compares them with a copy of that code).
  const Eigen::Matrix3d dt = axes.directions.transpose();
  const double t00 = dt(0, 0), t01 = dt(0, 1), t02 = dt(0, 2);
  const double t10 = dt(1, 0), t11 = dt(1, 1), t12 = dt(1, 2);
  const double t20 = dt(2, 0), t21 = dt(2, 1), t22 = dt(2, 2);
  const double cx = centre.x(), cy = centre.y(), cz = centre.z();
  const Eigen::Index n = points.cols();
  const double* p = points.data();
  double s0 = 0.0, s1 = 0.0, s2 = 0.0, scale2 = 0.0;
  Eigen::Index i = 0;
#if defined(__SSE2__)
  {
    // The coefficients and the centre, one per register in both lanes.
    __m128d t[3][3];
    for (int k = 0; k < 3; ++k)
      for (int j = 0; j < 3; ++j) t[k][j] = _mm_set1_pd(dt(k, j));
    const __m128d c[3] = {_mm_set1_pd(cx), _mm_set1_pd(cy), _mm_set1_pd(cz)};
    for (; i + 2 <= n; i += 2) {
      const double* a = p + 3 * i;
      __m128d d[3];  // coordinate j of points i and i + 1, less the centre's
      for (int j = 0; j < 3; ++j) d[j] = _mm_set_pd(a[3 + j], a[j]) - c[j];
      const __m128d u = (t[0][0] * d[0] + t[0][1] * d[1]) + t[0][2] * d[2];
      const __m128d v = (t[1][0] * d[0] + t[1][1] * d[1]) + t[1][2] * d[2];
      const __m128d w = t[2][0] * d[0] + (t[2][1] * d[1] + t[2][2] * d[2]);
      const __m128d uu = u * u, vv = v * v, ww = w * w;
      const __m128d r2 = (d[0] * d[0] + d[1] * d[1]) + d[2] * d[2];
      s0 = (s0 + uu[0]) + uu[1];
      s1 = (s1 + vv[0]) + vv[1];
      s2 = (s2 + ww[0]) + ww[1];
      scale2 = std::max(std::max(scale2, r2[0]), r2[1]);
    }
  }
#endif
  for (; i < n; ++i) {
    const double dx = p[3 * i] - cx, dy = p[3 * i + 1] - cy, dz = p[3 * i + 2] - cz;
    const double u = (t00 * dx + t01 * dy) + t02 * dz;
    const double v = (t10 * dx + t11 * dy) + t12 * dz;
    const double w = t20 * dx + (t21 * dy + t22 * dz);
    s0 += u * u;
    s1 += v * v;
    s2 += w * w;
    scale2 = std::max(scale2, (dx * dx + dy * dy) + dz * dz);
  }
  const double count = static_cast<double>(std::max<Eigen::Index>(n, 1));
  axes.rms = (Eigen::Vector3d(s0, s1, s2) / count).cwiseSqrt();
  axes.scale = std::sqrt(scale2);
  return axes;
}

namespace {

[[noreturn]] void throw_powers_overflow(double spread, const char* element) {
  char text[32];
  std::snprintf(text, sizeof text, "%.3g", spread);
  throw FitError(std::string("coordinates too large: the points lie up to ") + text +
                 " mm from their centroid, and the squared (and fourth-power) distances the "
                 "fits sum overflow double precision; a " + element + " cannot be fitted");
}

}  // namespace

double require_distinct_points(const Eigen::Matrix3Xd& points, const Eigen::Vector3d& centroid,
                               const char* element) {
  // A NaN or an infinity in any coordinate reaches the centroid; a finite centroid with a
  // non-finite size means the squared distances themselves overflowed.
  if (!centroid.allFinite())
    throw FitError(std::string("coordinates too large or not finite: their mean overflows "
                               "double precision; a ") +
                   element + " cannot be fitted");
  const double magnitude = std::max(1.0, centroid.cwiseAbs().maxCoeff());
  const double scale = data_scale(points, centroid);
  // data_scale squares the offsets: when that overflowed, the message quotes the largest
  // coordinate offset instead, which is finite.
  if (!std::isfinite(scale))
    throw_powers_overflow((points.colwise() - centroid).cwiseAbs().maxCoeff(), element);
  require_finite_sums(scale, static_cast<std::size_t>(points.cols()), element);
  if (scale <= 1e-12 * magnitude)
    throw FitError("all " + std::to_string(points.cols()) + " points coincide; a " + element +
                   " needs distinct points");
  return scale;
}

void require_finite_sums(double scale, std::size_t count, const char* element) {
  // The fits sum up to `count` centred squared distances (scatter matrices, normal equations,
  // sums of squared residuals) and, in the algebraic circle and sphere starts and the
  // cylinder's normal equations, their squares; with any sum infinite every result derived from
  // it is NaN or a false "not determined", so the set is refused here, in words, first.
  const double squares = scale * scale;
  const double bound = squares * squares * static_cast<double>(std::max<std::size_t>(count, 1));
  if (!std::isfinite(bound)) throw_powers_overflow(scale, element);
}

Eigen::Vector3d checked_direction(const Eigen::Vector3d& direction, const char* what) {
  const double norm = direction.norm();
  if (!(norm > 0.0) || !std::isfinite(norm))
    throw FitError(std::string(what) + " must be a finite, non-zero vector");
  return direction / norm;
}

std::string iteration_message(FitStatus status, int iterations, const FitOptions& options) {
  if (status == FitStatus::converged)
    return "converged in " + std::to_string(iterations) +
           (iterations == 1 ? " iteration" : " iterations");
  return "stopped at the iteration limit (" + std::to_string(options.max_iterations) +
         "); the element is the best found, not proven optimal";
}


}  // namespace cylzone::detail
