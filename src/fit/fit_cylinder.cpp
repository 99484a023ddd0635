// Least-squares cylinders (Forbes 1989, NPL DITC 140/89, section 6; Shakarji 1998, J. Res. NIST
// 103(6), section on cylinders). The points are centred at their centroid; in a frame rotated so
// that the trial axis is z and whose origin is the axis point, the distances are
// d_i = sqrt(x_i^2 + y_i^2) - r and, at zero shift and tilt, the Jacobian row with respect to
// (shift_u, shift_v, tilt_u, tilt_v, radius) is (-x/rho, -y/rho, -x z/rho, -y z/rho, -1).
// Each Gauss-Newton step moves and tilts the axis, which is then re-rotated and re-centred.
//
// Speed (bench/bench_fit_cylinder.cpp): every iteration is one pass over the points that
// accumulates J^T J (5x5) and J^T d directly, without storing J, in four SIMD lanes (AVX2 when
// the processor has it, chosen at run time) and in fixed-size chunks summed in a fixed order, so
// the result depends neither on the instruction set nor on how many threads (FitOptions::threads)
// ran the chunks. Starting axes are screened on a deterministic subsample and only
// the best is refined on all points.
#include <Eigen/Eigenvalues>
#include <algorithm>
#include <array>
#include <cmath>
#include <limits>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "cylzone/core/errors.hpp"
#include "cylzone/fit/fit_cylinder.hpp"
#include "fit/detail/circle_2d.hpp"
#include "detail/fit_support.hpp"
#include "detail/parallel.hpp"

#if defined(__GNUC__) && defined(__x86_64__)
#include <immintrin.h>
#define CYLZONE_X86_LANES 1
#else
#define CYLZONE_X86_LANES 0
#endif

namespace cylzone {
namespace {

using Vector5d = Eigen::Matrix<double, 5, 1>;
using Matrix5d = Eigen::Matrix<double, 5, 5>;

/// Axis and radius in coordinates centred at the points' centroid. `point` is kept at the foot
/// of the perpendicular from the origin (the centroid), as the canonical form requires.
struct AxisState {
  Eigen::Vector3d point = Eigen::Vector3d::Zero();
  Eigen::Vector3d direction = Eigen::Vector3d::UnitZ();
  double radius = 0.0;
};

// ------------------------------------------------------------------ the accumulation pass

constexpr int sum_count = 19;
using Sums = std::array<double, sum_count>;

/// The rotated frame of one pass: local = basis^T (p - origin).
struct PassFrame {
  Eigen::Matrix3d basis;
  Eigen::Vector3d origin;  ///< global coordinates (centroid + axis point)
  double radius;
};

// Four points at a time in GCC/Clang vector lanes. Every instruction set runs the same four
// lanes with the same operations (no fused multiply-add), so results are identical to the last
// bit whichever path the processor takes. The vectors never cross a non-inlined call, so the
// ABI notes GCC gives for 32-byte vectors on SSE2 do not apply (silenced for this file: GCC
// emits them at the end of the translation unit).
#pragma GCC diagnostic ignored "-Wpsabi"
typedef double Lanes __attribute__((vector_size(32)));

/// Points p[0..3] (xyz interleaved) in the pass frame's local coordinates, four lanes at once.
inline __attribute__((always_inline)) void local_lanes(const double* p, const PassFrame& f,
                                                       Lanes& x, Lanes& y, Lanes& z) {
  const Lanes px = Lanes{p[0], p[3], p[6], p[9]} - f.origin.x();
  const Lanes py = Lanes{p[1], p[4], p[7], p[10]} - f.origin.y();
  const Lanes pz = Lanes{p[2], p[5], p[8], p[11]} - f.origin.z();
  x = f.basis(0, 0) * px + f.basis(1, 0) * py + f.basis(2, 0) * pz;
  y = f.basis(0, 1) * px + f.basis(1, 1) * py + f.basis(2, 1) * pz;
  z = f.basis(0, 2) * px + f.basis(1, 2) * py + f.basis(2, 2) * pz;
}

// sqrt of each lane: a single instruction through the intrinsics, independent of whether the
// compiler must keep errno for std::sqrt (-fno-math-errno). The lanes go in and out by
// reference: Clang refuses a 32-byte vector passed by value to a function compiled without
// AVX (the baseline), as that would change the calling convention.
#if CYLZONE_X86_LANES
struct BaselineSqrt {
  void operator()(const Lanes& s, Lanes& out) const {
    const __m128d lo = _mm_sqrt_pd(__m128d{s[0], s[1]});
    const __m128d hi = _mm_sqrt_pd(__m128d{s[2], s[3]});
    out = Lanes{lo[0], lo[1], hi[0], hi[1]};
  }
};
struct Avx2Sqrt {
  __attribute__((target("avx2"))) void operator()(const Lanes& s, Lanes& out) const {
    out = _mm256_sqrt_pd(s);
  }
};
#else
struct BaselineSqrt {
  void operator()(const Lanes& s, Lanes& out) const {
    out = Lanes{std::sqrt(s[0]), std::sqrt(s[1]), std::sqrt(s[2]), std::sqrt(s[3])};
  }
};
#endif

/// Sums over points [begin, end) of the interleaved xyz array, in this order:
///  0..2  j0 j0, j0 j1, j1 j1      3..5  z * (same)      6..8  z^2 * (same)
///  9..12 j0, j1, z j0, z j1       13..16 d * (j0, j1, z j0, z j1)     17 d    18 d^2
/// with j0 = -x/rho, j1 = -y/rho, d = rho - r. The order of additions depends on (begin, end)
/// only.
template <class Sqrt>
inline __attribute__((always_inline)) Sums accumulate_lanes(const double* xyz, Eigen::Index begin,
                                                            Eigen::Index end, const PassFrame& f) {
  const double r = f.radius;
  const Sqrt lane_sqrt{};
  Lanes acc[sum_count] = {};
  Eigen::Index i = begin;
  for (; i + 4 <= end; i += 4) {
    Lanes x, y, z;
    local_lanes(xyz + 3 * i, f, x, y, z);
    Lanes rho;
    lane_sqrt(x * x + y * y, rho);
    const Lanes inv = 1.0 / rho;
    const Lanes d = rho - r;
    const Lanes j0 = -x * inv, j1 = -y * inv;
    const Lanes a = j0 * j0, b = j0 * j1, c = j1 * j1;
    const Lanes za = z * a, zb = z * b, zc = z * c;
    const Lanes zj0 = z * j0, zj1 = z * j1;
    acc[0] += a;
    acc[1] += b;
    acc[2] += c;
    acc[3] += za;
    acc[4] += zb;
    acc[5] += zc;
    acc[6] += z * za;
    acc[7] += z * zb;
    acc[8] += z * zc;
    acc[9] += j0;
    acc[10] += j1;
    acc[11] += zj0;
    acc[12] += zj1;
    acc[13] += d * j0;
    acc[14] += d * j1;
    acc[15] += d * zj0;
    acc[16] += d * zj1;
    acc[17] += d;
    acc[18] += d * d;
  }
  Sums s;
  for (int k = 0; k < sum_count; ++k) s[k] = ((acc[k][0] + acc[k][1]) + acc[k][2]) + acc[k][3];
  for (; i < end; ++i) {  // the last few points, one at a time
    const Eigen::Vector3d q = f.basis.transpose() * (Eigen::Map<const Eigen::Vector3d>(xyz + 3 * i) - f.origin);
    const double x = q.x(), y = q.y(), z = q.z();
    const double rho = std::sqrt(x * x + y * y), inv = 1.0 / rho, d = rho - r;
    const double j0 = -x * inv, j1 = -y * inv;
    const double t[sum_count] = {j0 * j0, j0 * j1, j1 * j1, z * j0 * j0, z * j0 * j1, z * j1 * j1,
                                 z * z * j0 * j0, z * z * j0 * j1, z * z * j1 * j1, j0, j1, z * j0,
                                 z * j1, d * j0, d * j1, d * z * j0, d * z * j1, d, d * d};
    for (int k = 0; k < sum_count; ++k) s[k] += t[k];
  }
  return s;
}

__attribute__((flatten)) Sums accumulate_baseline(const double* xyz, Eigen::Index begin,
                                                  Eigen::Index end, const PassFrame& f) {
  return accumulate_lanes<BaselineSqrt>(xyz, begin, end, f);
}
#if CYLZONE_X86_LANES
__attribute__((flatten, target("avx2"))) Sums accumulate_avx2(const double* xyz,
                                                              Eigen::Index begin,
                                                              Eigen::Index end,
                                                              const PassFrame& f) {
  return accumulate_lanes<Avx2Sqrt>(xyz, begin, end, f);
}
#endif

/// The final pass over points [begin, end): residual d_i = rho_i - r written to `residuals`,
/// each point's in-plane offset added to `coverage`, the range of the axial coordinate returned.
template <class Sqrt>
inline __attribute__((always_inline)) std::pair<double, double> finish_lanes(
    const double* xyz, Eigen::Index begin, Eigen::Index end, const PassFrame& f,
    double* residuals, detail::ArcCoverage& coverage) {
  const double r = f.radius;
  const Sqrt lane_sqrt{};
  constexpr double inf = std::numeric_limits<double>::infinity();
  Lanes lo = {inf, inf, inf, inf}, hi = -lo;
  Eigen::Index i = begin;
  for (; i + 4 <= end; i += 4) {
    Lanes x, y, z;
    local_lanes(xyz + 3 * i, f, x, y, z);
    Lanes rho;
    lane_sqrt(x * x + y * y, rho);
    const Lanes d = rho - r;
    for (int l = 0; l < 4; ++l) {
      residuals[i + l] = d[l];
      coverage.add(x[l], y[l]);
    }
    lo = z < lo ? z : lo;
    hi = z > hi ? z : hi;
  }
  double low = std::min(std::min(lo[0], lo[1]), std::min(lo[2], lo[3]));
  double high = std::max(std::max(hi[0], hi[1]), std::max(hi[2], hi[3]));
  for (; i < end; ++i) {  // the last few points, one at a time
    const Eigen::Vector3d q =
        f.basis.transpose() * (Eigen::Map<const Eigen::Vector3d>(xyz + 3 * i) - f.origin);
    residuals[i] = std::sqrt(q.x() * q.x() + q.y() * q.y()) - r;
    coverage.add(q.x(), q.y());
    low = std::min(low, q.z());
    high = std::max(high, q.z());
  }
  return {low, high};
}

using FinishFunction = std::pair<double, double> (*)(const double*, Eigen::Index, Eigen::Index,
                                                     const PassFrame&, double*,
                                                     detail::ArcCoverage&);

__attribute__((flatten)) std::pair<double, double> finish_baseline(
    const double* xyz, Eigen::Index begin, Eigen::Index end, const PassFrame& f,
    double* residuals, detail::ArcCoverage& coverage) {
  return finish_lanes<BaselineSqrt>(xyz, begin, end, f, residuals, coverage);
}
#if CYLZONE_X86_LANES
__attribute__((flatten, target("avx2"))) std::pair<double, double> finish_avx2(
    const double* xyz, Eigen::Index begin, Eigen::Index end, const PassFrame& f,
    double* residuals, detail::ArcCoverage& coverage) {
  return finish_lanes<Avx2Sqrt>(xyz, begin, end, f, residuals, coverage);
}
#endif

using AccumulateFunction = Sums (*)(const double*, Eigen::Index, Eigen::Index, const PassFrame&);

/// The kernels for this processor: AVX2 when it has it, else the baseline (SSE2 on x86-64).
struct LaneKernels {
  AccumulateFunction accumulate;
  FinishFunction finish;
};

LaneKernels select_kernels() {
#if CYLZONE_X86_LANES
  __builtin_cpu_init();
  if (__builtin_cpu_supports("avx2")) return {accumulate_avx2, finish_avx2};
#endif
  return {accumulate_baseline, finish_baseline};
}

/// Points are summed in chunks of this many; chunk sums are added in order (deterministic and,
/// as a pairwise-like summation, more accurate than one long running sum).
constexpr Eigen::Index chunk_points = 8192;
/// Below this many points a pass runs on the calling thread only (a thread costs ~50 us);
/// above it, on up to FitOptions::threads (the chunks, and so the result, stay the same).
constexpr Eigen::Index threaded_points = 200000;

std::size_t pass_threads(Eigen::Index n, const FitOptions& options) {
  return n < threaded_points ? 1 : std::max<std::size_t>(1, options.threads);
}

/// One Gauss-Newton pass over a point set, with its chunk buffer allocated once.
class NormalEquations {
 public:
  NormalEquations(const Eigen::Matrix3Xd& points, const FitOptions& options)
      : points_(points),
        chunk_sums_(static_cast<std::size_t>((points.cols() + chunk_points - 1) / chunk_points)),
        threads_(pass_threads(points.cols(), options)),
        accumulate_(select_kernels().accumulate) {}

  /// Sum of squares at `state` (centred coordinates about `centroid`), J^T J and J^T d.
  double operator()(const AxisState& state, const Eigen::Vector3d& centroid, Matrix5d& jtj,
                    Vector5d& jtr) {
    const PassFrame frame{detail::basis_from_direction(state.direction), centroid + state.point,
                          state.radius};
    const Eigen::Index n = points_.cols();
    detail::parallel_for(chunk_sums_.size(), threads_, [&](std::size_t chunk, std::size_t) {
      const auto c = static_cast<Eigen::Index>(chunk);
      chunk_sums_[chunk] =
          accumulate_(points_.data(), c * chunk_points, std::min(n, (c + 1) * chunk_points), frame);
    });
    Sums s{};
    for (const Sums& part : chunk_sums_)
      for (int k = 0; k < sum_count; ++k) s[k] += part[k];
    jtj << s[0], s[1], s[3], s[4], -s[9],  //
        s[1], s[2], s[4], s[5], -s[10],     //
        s[3], s[4], s[6], s[7], -s[11],     //
        s[4], s[5], s[7], s[8], -s[12],     //
        -s[9], -s[10], -s[11], -s[12], static_cast<double>(n);
    jtr << s[13], s[14], s[15], s[16], -s[17];
    return s[18];
  }

 private:
  const Eigen::Matrix3Xd& points_;
  std::vector<Sums> chunk_sums_;
  std::size_t threads_;
  AccumulateFunction accumulate_;
};

/// Applies a step (shift_u, shift_v, tilt_u, tilt_v, radius) taken in the frame of `state`.
AxisState apply_step(const AxisState& state, const Vector5d& step,
                     const std::optional<Eigen::Vector3d>& hint) {
  const Eigen::Matrix3d basis = detail::basis_from_direction(state.direction);
  AxisState next;
  next.direction = detail::canonical_direction(
      basis * Eigen::Vector3d(step(2), step(3), 1.0), hint);
  next.point = state.point + basis.leftCols<2>() * step.head<2>();
  next.point -= next.point.dot(next.direction) * next.direction;  // re-centre on the centroid
  next.radius = state.radius + step(4);
  return next;
}

struct GaussNewtonRun {
  AxisState state;
  detail::GaussNewtonResult<5> outcome;
};

GaussNewtonRun refine(const Eigen::Matrix3Xd& points, const Eigen::Vector3d& centroid,
                      AxisState start, double scale, const FitOptions& options) {
  NormalEquations equations(points, options);
  auto evaluate = [&](const AxisState& s, Matrix5d& jtj, Vector5d& jtr) {
    return equations(s, centroid, jtj, jtr);
  };
  auto apply = [&](const AxisState& s, const Vector5d& step) {
    return apply_step(s, step, options.axis_hint);
  };
  Vector5d weights;
  weights << 1.0, 1.0, scale, scale, 1.0;  // a tilt moves the axis by tilt * scale at the ends
  GaussNewtonRun run;
  run.outcome = detail::gauss_newton<5>(
      start, evaluate, apply, weights, scale, options,
      "the cylinder is not determined by the points (the normal equations are singular)");
  run.state = start;
  return run;
}

// ------------------------------------------------------------------ starting axes

/// A deterministic subsample of about `target` points: one per stratum of equal size, at an
/// offset within the stratum stepped by the golden ratio, so a fixed stride cannot alias with
/// the points-per-level of a scan (every level then contributes points at many angles).
Eigen::Matrix3Xd subsample(const Eigen::Matrix3Xd& points, Eigen::Index target) {
  const Eigen::Index n = points.cols();
  Eigen::Matrix3Xd s(3, target);
  const double stratum = static_cast<double>(n) / static_cast<double>(target);
  constexpr double golden = 0.61803398874989484820;
  double offset = 0.5;
  for (Eigen::Index k = 0; k < target; ++k) {
    const auto i = std::min<Eigen::Index>(
        n - 1, static_cast<Eigen::Index>((static_cast<double>(k) + offset) * stratum));
    s.col(k) = points.col(i);
    offset += golden;
    if (offset >= 1.0) offset -= 1.0;
  }
  return s;
}

/// Start from direction `w`: the algebraic circle of the points projected along it (one pass;
/// the cylinder iterations refine it, and for a wrong direction a geometric circle would only
/// crawl toward a meaningless answer).
AxisState start_from_direction(const Eigen::Matrix3Xd& points, const Eigen::Vector3d& centroid,
                               const Eigen::Vector3d& w, const FitOptions& options) {
  const Eigen::Matrix3d basis = detail::basis_from_direction(w);
  const detail::Circle2dFit circle =
      detail::fit_circle_2d_algebraic(detail::planar_coordinates(points, centroid, basis));
  AxisState s;
  s.direction = detail::canonical_direction(w, options.axis_hint);
  s.point = basis.leftCols<2>() * circle.centre;
  s.point -= s.point.dot(s.direction) * s.direction;
  s.radius = circle.radius;
  return s;
}

std::string cross_section_message(double span, double radius) {
  return "the points lie in one cross-section (axial span " + detail::format_number(span, 6) +
         " mm, radius " + detail::format_number(radius, 6) +
         " mm): the cylinder axis direction cannot be determined; probe at least two levels "
         "along the bore, or fit a circle, or give a fixed direction";
}

/// Radius of the circle through a planar set, for the cross-section message; 0 if none.
double radius_in_plane(const Eigen::Matrix3Xd& points, const Eigen::Vector3d& centroid,
                       const Eigen::Vector3d& normal) {
  try {
    const Eigen::Matrix3d basis = detail::basis_from_direction(normal);
    return detail::fit_circle_2d_least_squares(detail::planar_coordinates(points, centroid, basis),
                                               FitOptions{})
        .radius;
  } catch (const FitError&) {
    return 0.0;
  }
}

// ------------------------------------------------------------------ result

/// Residuals, extent and angular coverage in one (threaded, chunked) pass at the final axis,
/// the frame of the covariance.
struct FinalPass {
  Eigen::VectorXd residuals;
  double extent_min = 0.0, extent_max = 0.0;
  double coverage_deg = 0.0;
};

FinalPass final_pass(const Eigen::Matrix3Xd& points, const Axis& axis, const Eigen::Matrix3d& basis,
                     double radius, const FitOptions& options) {
  FinalPass f;
  const Eigen::Index n = points.cols();
  f.residuals.resize(n);
  const Eigen::Index chunks = (n + chunk_points - 1) / chunk_points;
  std::vector<std::pair<double, double>> z_range(static_cast<std::size_t>(chunks));
  const std::size_t workers =
      detail::worker_count(static_cast<std::size_t>(chunks), pass_threads(n, options));
  // Coverage keeps a per-bin min/max, which any grouping of the points gives alike: one per
  // worker, merged.
  std::vector<detail::ArcCoverage> coverage;
  coverage.reserve(workers);
  for (std::size_t w = 0; w < workers; ++w) coverage.emplace_back(static_cast<std::size_t>(n));
  const PassFrame frame{basis, axis.point, radius};
  const FinishFunction finish = select_kernels().finish;
  detail::parallel_for(static_cast<std::size_t>(chunks), workers, [&](std::size_t chunk, std::size_t w) {
    const auto c = static_cast<Eigen::Index>(chunk);
    z_range[chunk] = finish(points.data(), c * chunk_points, std::min(n, (c + 1) * chunk_points),
                            frame, f.residuals.data(), coverage[w]);
  });
  for (std::size_t w = 1; w < workers; ++w) coverage[0].merge(coverage[w]);
  f.coverage_deg = coverage[0].degrees();
  f.extent_min = std::numeric_limits<double>::infinity();
  f.extent_max = -f.extent_min;
  for (const auto& [lo, hi] : z_range) {
    f.extent_min = std::min(f.extent_min, lo);
    f.extent_max = std::max(f.extent_max, hi);
  }
  return f;
}

/// What a fit computes at its solution: everything (the fit), or the axis alone
/// (fit_cylinder_least_squares_axis: no residual pass, coverage, covariance or messages).
enum class FitResult { full, axis_only };

/// True when no residual at the solution can overflow in make_residuals (its rms or form): each
/// |rho_i - r| <= |p_i - centroid| + |axis point - centroid| + |r| <= B, with B the data's
/// `scale` + |state.point| + |r| (state.point is relative to the centroid and the axis point
/// is its foot, no farther), so n (2B)^2 finite bounds the sum of squares, a factor 4 above
/// any rounding. Then make_residuals cannot throw, and an axis-only result skips it with the
/// same outcome; otherwise the residuals are computed, and refused, as in the full fit.
bool residuals_bounded(const AxisState& state, double scale, Eigen::Index n) {
  const double bound = 2.0 * (scale + state.point.norm() + std::abs(state.radius));
  return std::isfinite(bound * bound * static_cast<double>(std::max<Eigen::Index>(n, 1)));
}

CylinderFit make_result(const Eigen::Matrix3Xd& points, const Eigen::Vector3d& centroid,
                        const AxisState& state, const Matrix5d& jtj, double scale,
                        const FitOptions& options, FitResult result) {
  CylinderFit fit;
  const std::size_t n = static_cast<std::size_t>(points.cols());
  fit.axis = detail::canonical_axis(centroid + state.point, state.direction, centroid,
                                    options.axis_hint);
  fit.radius = state.radius;
  fit.summary.method = FitMethod::least_squares;
  fit.summary.point_count = n;
  if (result == FitResult::axis_only && residuals_bounded(state, scale, points.cols())) return fit;
  const Eigen::Matrix3d basis = detail::basis_from_direction(fit.axis.direction);
  FinalPass pass = final_pass(points, fit.axis, basis, fit.radius, options);
  fit.extent_min = pass.extent_min;
  fit.extent_max = pass.extent_max;
  fit.residuals = detail::make_residuals(std::move(pass.residuals));
  fit.angular_coverage_deg = pass.coverage_deg;
  if (options.result_coverage) {  // reported only (FitOptions::result_coverage)
    fit.covariance.basis = basis;
    fit.covariance.matrix =
        detail::covariance_from_normal_matrix(jtj, fit.residuals.values.squaredNorm(), n);
  }
  return fit;
}

/// All points in one plane cannot fix the axis direction: a planar set fits mirror-image
/// cylinders about its plane equally well. "In one plane" means: no farther from their
/// least-squares plane (rms `plane_rms`) than a few times the cylinder's own rms residual
/// (noise and form). Decided on the screening set, which is all points of small clouds and an
/// even subsample of large ones. The message gives the span along the fitted axis.
void require_axial_spread(const Eigen::Matrix3Xd& screen, const AxisState& state,
                          const Eigen::Vector3d& centroid, double plane_rms, double ssr) {
  constexpr double planar_noise_factor = 3.0;
  const double rms = std::sqrt(ssr / static_cast<double>(screen.cols()));
  if (plane_rms > planar_noise_factor * rms) return;
  const Axis axis{centroid + state.point, state.direction};
  const auto [lo, hi] = detail::axial_extent(screen, axis);
  // Planar in two ways: one level across the bore (the fitted axis crosses the points' plane),
  // or a narrow strip along it (the fitted axis lies in that plane). Name the one that applies.
  const Eigen::Vector3d plane_normal = detail::principal_axes(screen, centroid).directions.col(0);
  if (std::abs(plane_normal.dot(state.direction)) < 0.5) {
    const double coverage = detail::angular_coverage_deg(
        screen, axis.point, detail::basis_from_direction(axis.direction));
    throw FitError("the points cover only " + detail::format_number(coverage, 1) +
                   " degrees of arc (axial span " + detail::format_number(hi - lo, 6) +
                   " mm): within their noise they lie in one plane, so the cylinder's radius and "
                   "axis cannot be told apart from a plane; probe a wider arc of the bore, or "
                   "fit a plane");
  }
  throw FitError(cross_section_message(hi - lo, state.radius));
}

CylinderFit fit_free_axis(const Eigen::Matrix3Xd& points, const Eigen::Matrix3Xd* vectors,
                          const FitOptions& options, FitResult result = FitResult::full) {
  const auto n = static_cast<std::size_t>(points.cols());
  detail::require_point_count(n, 5, "cylinder");
  const Eigen::Vector3d centroid = detail::centroid(points);
  const double scale = detail::require_distinct_points(points, centroid, "cylinder");

  // Screening set: all points when few, else a subsample (its solution is within the noise of
  // the full one, so a few full-data iterations finish the job).
  constexpr Eigen::Index screening_points = 4096;
  const bool screened = points.cols() > 3 * screening_points;
  const Eigen::Matrix3Xd sample = screened ? subsample(points, screening_points) : Eigen::Matrix3Xd();
  const Eigen::Matrix3Xd& screen = screened ? sample : points;

  const detail::PrincipalAxes axes = detail::principal_axes(screen, centroid);
  if (axes.rms(0) <= detail::degenerate_spread_ratio * axes.rms(2))
    throw FitError(cross_section_message(
        2.0 * std::sqrt(3.0) * axes.rms(0),
        radius_in_plane(screen, centroid, axes.directions.col(0))));

  if (options.start) {
    // From an earlier fit of nearly the same points: Gauss-Newton from its axis and radius on
    // all points, to the same convergence test; the screening of several starting axes below
    // is what it saves. Where that does not converge to a cylinder, the screening decides.
    try {
      AxisState start;
      start.direction = detail::canonical_direction(
          detail::checked_direction(options.start->axis.direction, "start axis"),
          options.axis_hint);
      start.point = options.start->axis.point - centroid;
      start.point -= start.point.dot(start.direction) * start.direction;
      start.radius = options.start->radius;
      GaussNewtonRun run = refine(points, centroid, start, scale, options);
      if (run.outcome.status == FitStatus::converged && run.state.radius > 0.0 &&
          std::isfinite(run.outcome.ssr)) {
        require_axial_spread(screen, run.state, centroid, axes.rms(0),
                             screened ? run.outcome.ssr * static_cast<double>(screen.cols()) /
                                            static_cast<double>(points.cols())
                                      : run.outcome.ssr);
        CylinderFit fit = make_result(points, centroid, run.state, run.outcome.normal_matrix,
                                      scale, options, result);
        fit.summary.status = run.outcome.status;
        fit.summary.iterations = run.outcome.iterations;
        fit.summary.start = StartOutcome::held;
        if (result == FitResult::axis_only) return fit;
        if (options.result_messages)
          fit.summary.message =
              detail::iteration_message(run.outcome.status, run.outcome.iterations, options) +
              " (started from an earlier fit)";
        detail::warn_on_coverage(fit.summary, fit.angular_coverage_deg, options);
        return fit;
      }
    } catch (const FitError&) {
      // the screening below decides (and raises the error if the points cannot fix a cylinder)
    }
    return detail::fit_from_own_start(
        options, [&](const FitOptions& own) { return fit_free_axis(points, vectors, own, result); });
  }

  std::vector<Eigen::Vector3d> directions = {axes.directions.col(2), axes.directions.col(1),
                                             axes.directions.col(0)};
  if (options.axis_hint) directions.push_back(detail::checked_direction(*options.axis_hint, "axis hint"));
  if (vectors && options.use_point_vectors && vectors->cols() == points.cols()) {
    // Surface vectors are perpendicular to the axis: the axis is the direction least correlated
    // with them, the eigenvector of the smallest eigenvalue of sum n n^T.
    const Eigen::Matrix3d nnt = *vectors * vectors->transpose();
    const Eigen::SelfAdjointEigenSolver<Eigen::Matrix3d> eigen(nnt);
    if (eigen.info() == Eigen::Success && eigen.eigenvalues()(2) > 0.0)
      directions.push_back(eigen.eigenvectors().col(0));
  }

  // Every start runs a few iterations on the screening set; only the best continues. Starts
  // far from the solution (an axis across the bore) would otherwise crawl to the limit.
  FitOptions screen_options = options;
  screen_options.max_iterations = std::min(options.max_iterations, 10);
  constexpr int probe_iterations = 3;
  constexpr double abandon_factor = 1e3;
  if (screened) screen_options.step_tolerance = std::max(options.step_tolerance, 1e-10);
  bool found = false;
  std::size_t best_start = 0;
  GaussNewtonRun best;
  std::string last_error;
  for (std::size_t k = 0; k < directions.size(); ++k) {
    try {
      const AxisState start = start_from_direction(screen, centroid, directions[k], options);
      GaussNewtonRun run;
      if (found) {
        // Probe: a start still far worse than a converged one after a few iterations is in
        // another (worse) basin; finishing it would only confirm that.
        FitOptions probe = screen_options;
        probe.max_iterations = std::min(screen_options.max_iterations, probe_iterations);
        run = refine(screen, centroid, start, scale, probe);
        if (run.outcome.ssr > abandon_factor * best.outcome.ssr) continue;
        if (run.outcome.status == FitStatus::iteration_limit) {
          FitOptions rest = screen_options;
          rest.max_iterations = screen_options.max_iterations - run.outcome.iterations;
          const int done = run.outcome.iterations;
          run = refine(screen, centroid, run.state, scale, rest);
          run.outcome.iterations += done;
        }
      } else {
        run = refine(screen, centroid, start, scale, screen_options);
      }
      if (!(run.state.radius > 0.0) || !std::isfinite(run.outcome.ssr)) continue;
      if (!found || run.outcome.ssr < best.outcome.ssr) {
        best = run;
        best_start = k;
        found = true;
      }
    } catch (const FitError& e) {
      last_error = e.what();  // this start failed; others may not
    }
  }
  if (!found) {
    // Nearly planar sets make every start singular: say so in the trade's terms.
    if (axes.rms(0) <= 1e-6 * axes.rms(2))
      throw FitError(cross_section_message(
          2.0 * std::sqrt(3.0) * axes.rms(0),
          radius_in_plane(screen, centroid, axes.directions.col(0))));
    throw FitError("the cylinder is not determined by the points: no starting axis converged (" +
                   last_error + ")");
  }
  require_axial_spread(screen, best.state, centroid, axes.rms(0), best.outcome.ssr);
  int iterations = best.outcome.iterations;
  if (screened || best.outcome.status == FitStatus::iteration_limit) {
    FitOptions rest = options;
    if (!screened) rest.max_iterations = std::max(0, options.max_iterations - iterations);
    best = refine(points, centroid, best.state, scale, rest);
    iterations += best.outcome.iterations;
  }
  if (!(best.state.radius > 0.0))
    throw FitError("no least-squares cylinder exists for these points (the radius tends to zero)");

  CylinderFit fit = make_result(points, centroid, best.state, best.outcome.normal_matrix, scale,
                                options, result);
  fit.summary.status = best.outcome.status;
  fit.summary.iterations = iterations;
  if (result == FitResult::axis_only) return fit;
  if (options.result_messages)
    fit.summary.message =
        detail::iteration_message(best.outcome.status, iterations, options) + " (start " +
        std::to_string(best_start + 1) + " of " + std::to_string(directions.size()) +
        (screened ? ", screened on " + std::to_string(screening_points) + " points)" : ")");
  detail::warn_on_coverage(fit.summary, fit.angular_coverage_deg, options);
  return fit;
}

CylinderFit fit_fixed_direction(const Eigen::Matrix3Xd& points, const FitOptions& options) {
  const auto n = static_cast<std::size_t>(points.cols());
  detail::require_point_count(n, 3, "cylinder with a fixed direction");
  const Eigen::Vector3d centroid = detail::centroid(points);
  detail::require_distinct_points(points, centroid, "cylinder");
  const Eigen::Vector3d w = detail::canonical_direction(
      detail::checked_direction(*options.fixed_direction, "fixed direction"), options.axis_hint);
  const Eigen::Matrix3d basis = detail::basis_from_direction(w);
  const detail::Circle2dFit circle = detail::fit_circle_2d_least_squares(
      detail::planar_coordinates(points, centroid, basis), options);

  CylinderFit fit;
  fit.axis = detail::canonical_axis(centroid + basis.leftCols<2>() * circle.centre, w, centroid,
                                    options.axis_hint);
  fit.radius = circle.radius;
  FinalPass pass = final_pass(points, fit.axis, basis, fit.radius, options);
  fit.extent_min = pass.extent_min;
  fit.extent_max = pass.extent_max;
  fit.residuals = detail::make_residuals(std::move(pass.residuals));
  fit.angular_coverage_deg = pass.coverage_deg;
  if (options.result_coverage) {  // reported only (FitOptions::result_coverage)
    fit.covariance.basis = basis;
    fit.covariance.matrix =
        detail::covariance_from_normal_matrix(circle.normal_matrix, circle.ssr, n);
  }
  fit.summary.method = FitMethod::least_squares;
  fit.summary.point_count = n;
  fit.summary.status = circle.status;
  fit.summary.iterations = circle.iterations;
  if (options.result_messages)
    fit.summary.message = detail::iteration_message(circle.status, circle.iterations, options) +
                          " (axis direction fixed)";
  detail::warn_on_coverage(fit.summary, fit.angular_coverage_deg, options);
  return fit;
}

}  // namespace

FitStart fit_start(const CylinderFit& fit) {
  FitStart start;
  start.axis = fit.axis;
  start.radius = fit.radius;
  start.form = fit.residuals.form;
  start.angular_coverage_deg = fit.angular_coverage_deg;
  start.point_count = fit.summary.point_count;
  start.contacts = fit.summary.contacts;
  return start;
}

namespace {

/// The four entry points' one dispatch: the point vectors' count checked, then the fixed or
/// the free axis (`result`: everything, or the axis alone).
CylinderFit least_squares(const Eigen::Matrix3Xd& points, const Eigen::Matrix3Xd* vectors,
                          const FitOptions& options, FitResult result) {
  if (vectors && vectors->cols() != 0 && vectors->cols() != points.cols())
    throw FitError("got " + std::to_string(vectors->cols()) + " point vectors for " +
                   std::to_string(points.cols()) + " points");
  if (options.fixed_direction) return fit_fixed_direction(points, options);
  return fit_free_axis(points, vectors, options, result);
}

}  // namespace

CylinderFit fit_cylinder_least_squares(const Eigen::Matrix3Xd& points, const FitOptions& options) {
  return least_squares(points, nullptr, options, FitResult::full);
}

CylinderFit fit_cylinder_least_squares(const Eigen::Matrix3Xd& points,
                                       const Eigen::Matrix3Xd& vectors,
                                       const FitOptions& options) {
  return least_squares(points, &vectors, options, FitResult::full);
}

Axis fit_cylinder_least_squares_axis(const Eigen::Matrix3Xd& points, const FitOptions& options) {
  return least_squares(points, nullptr, options, FitResult::axis_only).axis;
}

Axis fit_cylinder_least_squares_axis(const Eigen::Matrix3Xd& points,
                                     const Eigen::Matrix3Xd& vectors, const FitOptions& options) {
  return least_squares(points, &vectors, options, FitResult::axis_only).axis;
}

}  // namespace cylzone
