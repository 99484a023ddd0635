// The zone models of the Chebyshev engine (fit/detail/chebyshev.hpp): orthogonal distances of
// the points to a circle, an axis and a plane, and their gradients with respect to a local
// parametrisation in length units; the engine never sees which element it is fitting.
#include <Eigen/Geometry>
#if defined(__SSE2__)
#include <emmintrin.h>
#endif
#include <algorithm>
#include <cmath>
#include <memory>
#include <utility>
#include <vector>

#include "detail/fit_support.hpp"
#include "fit/detail/chebyshev.hpp"

namespace cylzone::detail {

namespace {

// A derivative of |x| at a point on the axis / at the centre does not exist; any subgradient
// of norm <= 1 is valid there and 0 keeps such a point out of the linear model's way.
inline double inverse_or_zero(double x) { return x > 0.0 ? 1.0 / x : 0.0; }

// The size used to turn tilts into lengths: the data's extent, never zero.
double tilt_scale_from(double data_scale) { return data_scale > 0.0 ? data_scale : 1.0; }
double tilt_scale_of(const Eigen::Matrix3Xd& points, const Eigen::Vector3d& centroid) {
  return tilt_scale_from(data_scale(points, centroid));
}

}  // namespace

ModelPoints ModelPoints::subset(const std::vector<Eigen::Index>& indices) const {
  bool all = static_cast<Eigen::Index>(indices.size()) == view_->cols();
  for (std::size_t k = 0; all && k < indices.size(); ++k)
    all = indices[k] == static_cast<Eigen::Index>(k);
  if (all) return *this;
  return ModelPoints(Eigen::Matrix3Xd((*view_)(Eigen::all, indices)));
}

CircleZoneModel::CircleZoneModel(Eigen::Matrix2Xd points, const Eigen::Vector2d& start_centre)
    : points_(std::move(points)), centre_(start_centre) {
  centroid_ = points_.cols() > 0 ? Eigen::Vector2d(points_.rowwise().mean())
                                 : Eigen::Vector2d::Zero();
  local_ = points_.colwise() - centre_;
}

void CircleZoneModel::evaluate(const Eigen::VectorXd& step, Eigen::VectorXd& distances,
                               Eigen::MatrixXd* gradients) const {
  const Eigen::Index n = local_.cols();
  const Eigen::Vector2d a = step.head<2>();
  distances.resize(n);
  if (gradients) gradients->resize(n, 2);
  for (Eigen::Index i = 0; i < n; ++i) {
    const Eigen::Vector2d w = local_.col(i) - a;
    const double d = w.norm();
    distances(i) = d;
    if (gradients) gradients->row(i) = -w.transpose() * inverse_or_zero(d);  // -(q - c)/|q - c|
  }
}

void CircleZoneModel::move(const Eigen::VectorXd& step) {
  centre_ += step.head<2>();
  local_ = points_.colwise() - centre_;
}

// The subsets are built member by member: copying the whole model first would cost
// O(all points) for a copy of a few.
std::unique_ptr<ZoneModel> CircleZoneModel::subset(const std::vector<Eigen::Index>& indices) const {
  std::unique_ptr<CircleZoneModel> copy(new CircleZoneModel());
  copy->points_ = points_(Eigen::all, indices);
  copy->centroid_ = centroid_;
  copy->centre_ = centre_;
  copy->local_ = local_(Eigen::all, indices);
  return copy;
}

double CircleZoneModel::location_offset() const { return (centre_ - centroid_).norm(); }

DisplacementGauge CircleZoneModel::displacement_gauge() const {
  DisplacementGauge gauge;  // the centre's shift is the parameter itself
  gauge.functionals = Eigen::MatrixXd::Identity(2, 2);
  return gauge;
}

Eigen::VectorXd CircleZoneModel::displacements(const Eigen::VectorXd& step,
                                               const Eigen::VectorXd&,
                                               const Eigen::VectorXd&) const {
  return step.head<2>();
}

Eigen::VectorXd CircleZoneModel::step_to(const ZoneModel& other) const {
  return dynamic_cast<const CircleZoneModel&>(other).centre_ - centre_;
}

AxisZoneModel::AxisZoneModel(const Eigen::Matrix3Xd& points, const Axis& start)
    : points_(points) {
  centroid_ = detail::centroid(*points_);
  tilt_scale_ = tilt_scale_of(*points_, centroid_);
  set_frame(start.point, start.direction);
}

AxisZoneModel::AxisZoneModel(const Eigen::Matrix3Xd& points, const Axis& start,
                             const Eigen::Vector3d& centroid, double data_scale)
    : points_(points), centroid_(centroid), tilt_scale_(tilt_scale_from(data_scale)) {
  set_frame(start.point, start.direction);
}

void AxisZoneModel::set_frame(const Eigen::Vector3d& point_on_axis,
                              const Eigen::Vector3d& direction) {
  const Eigen::Vector3d w = direction.normalized();
  origin_ = point_on_axis + (centroid_ - point_on_axis).dot(w) * w;
  basis_ = basis_from_direction(w);
  local_coordinates_into(*points_, origin_, basis_, local_);
}

namespace {

/// The axis-zone distances' loop (axis_distances). With AtZero the step is +0.0 in every
/// entry, so a_u = a_v = b_u = b_v = +0.0 and |m| = |m|^3 = 1.0 exactly: the kernel is
/// instantiated with those literals in the same expressions, and the compiler drops only what
/// IEEE 754 makes an identity (x * 1.0, x / 1.0, x - 0.0 give x for every x, signed zeros
/// included; x * 0.0 and x + 0.0 are kept). The bits are the general kernel's; the zero step
/// (every descent's linearisation at the current element) is spared four divisions a point.
template <bool AtZero>
void axis_kernel(const double* __restrict q, Eigen::Index n, double au, double av, double bu,
                 double bv, double s, double inv_l, double* __restrict out,
                 double* __restrict g0) {
  if constexpr (AtZero) {
    au = av = bu = bv = 0.0;
    s = 1.0;
  }
  const double s3 = AtZero ? 1.0 : s * s * s;
  if (!g0) {
    Eigen::Index i = 0;
#if defined(__SSE2__)
    {  // two points per operation, as in the gradients' loop below
      const __m128d vau = _mm_set1_pd(au), vav = _mm_set1_pd(av), vbu = _mm_set1_pd(bu),
                    vbv = _mm_set1_pd(bv), vs = _mm_set1_pd(s), one = _mm_set1_pd(1.0),
                    zero = _mm_set1_pd(0.0);
      for (; i + 2 <= n; i += 2) {
        const double* p = q + 3 * i;
        const __m128d wx = _mm_set_pd(p[3], p[0]) - vau, wy = _mm_set_pd(p[4], p[1]) - vav,
                      wz = _mm_set_pd(p[5], p[2]) - zero;
        const __m128d cx = wy * one - wz * vbv, cy = wz * vbu - wx * one,
                      cz = wx * vbv - wy * vbu;
        _mm_storeu_pd(out + i, _mm_sqrt_pd(cx * cx + cy * cy + cz * cz) / vs);
      }
    }
#endif
    for (; i < n; ++i) {
      const double wx = q[3 * i] - au, wy = q[3 * i + 1] - av, wz = q[3 * i + 2] - 0.0;
      const double cx = wy * 1.0 - wz * bv, cy = wz * bu - wx * 1.0, cz = wx * bv - wy * bu;
      out[i] = std::sqrt(cx * cx + cy * cy + cz * cz) / s;
    }
    return;
  }
  double* __restrict g1 = g0 + n;
  double* __restrict g2 = g0 + 2 * n;
  double* __restrict g3 = g0 + 3 * n;
  Eigen::Index i = 0;
#if defined(__SSE2__)
  // Two points per operation: lane l holds point i + l and takes each of the scalar loop's
  // operations in its order (SSE2's add, sub, mul, div and sqrt round each lane as the scalar
  // instruction does), so the lanes hold the scalar loop's bits; inverse_or_zero is the
  // quotient masked where cn > 0 fails (0 and NaN give 0, as in the scalar test).
  {
    const __m128d vau = _mm_set1_pd(au), vav = _mm_set1_pd(av), vbu = _mm_set1_pd(bu),
                  vbv = _mm_set1_pd(bv), vs = _mm_set1_pd(s), vs3 = _mm_set1_pd(s3),
                  vl = _mm_set1_pd(inv_l), one = _mm_set1_pd(1.0), zero = _mm_set1_pd(0.0);
    for (; i + 2 <= n; i += 2) {
      const double* p = q + 3 * i;
      const __m128d wx = _mm_set_pd(p[3], p[0]) - vau, wy = _mm_set_pd(p[4], p[1]) - vav,
                    wz = _mm_set_pd(p[5], p[2]) - zero;
      const __m128d cx = wy * one - wz * vbv, cy = wz * vbu - wx * one, cz = wx * vbv - wy * vbu;
      const __m128d cn = _mm_sqrt_pd(cx * cx + cy * cy + cz * cz);
      _mm_storeu_pd(out + i, cn / vs);
      const __m128d k = _mm_and_pd(one / cn, _mm_cmpgt_pd(cn, zero)) / vs;
      _mm_storeu_pd(g0 + i, k * (cy - vbv * cz));
      _mm_storeu_pd(g1 + i, k * (-cx + vbu * cz));
      _mm_storeu_pd(g2 + i, (k * (wz * cy - wy * cz) - cn * vbu / vs3) * vl);
      _mm_storeu_pd(g3 + i, (k * (-wz * cx + wx * cz) - cn * vbv / vs3) * vl);
    }
  }
#endif
  for (; i < n; ++i) {
    const double wx = q[3 * i] - au, wy = q[3 * i + 1] - av, wz = q[3 * i + 2] - 0.0;
    const double cx = wy * 1.0 - wz * bv, cy = wz * bu - wx * 1.0, cz = wx * bv - wy * bu;
    const double cn = std::sqrt(cx * cx + cy * cy + cz * cz);
    out[i] = cn / s;
    const double k = inverse_or_zero(cn) / s;
    g0[i] = k * (cy - bv * cz);
    g1[i] = k * (-cx + bu * cz);
    g2[i] = (k * (wz * cy - wy * cz) - cn * bu / s3) * inv_l;
    g3[i] = (k * (-wz * cx + wx * cz) - cn * bv / s3) * inv_l;
  }
}

/// +0.0 exactly (not -0.0): the only zero for which the literal 0.0 gives the same bits.
inline bool positive_zero(double x) { return x == 0.0 && !std::signbit(x); }

}  // namespace

void axis_distances(const Eigen::Matrix3Xd& local, double tilt_scale, const Eigen::VectorXd& step,
                    Eigen::VectorXd& distances, Eigen::MatrixXd* gradients) {
  // The axis through a = (shift_u, shift_v, 0) along m = (b_u, b_v, 1), b = tilt / L:
  // d = |(q - a) x m| / |m|. |c| with c = (q - a) x m keeps full precision where
  // |q - a|^2 - ((q - a).m)^2 / |m|^2 would cancel. Derivatives: dc/da_u = (0, 1, -b_v),
  // dc/da_v = (-1, 0, b_u), dc/db_u = (0, w_z, -w_y), dc/db_v = (-w_z, 0, w_x) with w = q - a,
  // and d|m|/db = b / |m|. At zero step they reduce to Forbes' (NPL DITC 140/89):
  // -(x, y)/d and -z (x, y)/d.
  const double bu = step(2) / tilt_scale, bv = step(3) / tilt_scale;
  const Eigen::Vector3d m(bu, bv, 1.0);
  const double s = m.norm();
  const double inv_l = 1.0 / tilt_scale;
  const Eigen::Index n = local.cols();
  distances.resize(n);
  if (gradients) gradients->resize(n, 4);
  // One plain loop over the points' coordinates (3 per point) into the columns of the
  // results: the same operations in the same order per point as Eigen's w = q - a, c = w x m
  // and |c| = sqrt(c_x^2 + c_y^2 + c_z^2), summed left to right (tests/test_fit_chebyshev.cpp
  // compares them bit for bit), without the temporaries, so the compiler can keep it in
  // registers. No reassociation (no -ffast-math): the bits are the expression's.
  const double au = step(0), av = step(1);
  double* g0 = gradients ? gradients->data() : nullptr;
  // b = +0.0 / L is +0.0 for L > 0 (tilt_scale_of never gives less) and |(0, 0, 1)| is 1.0.
  const bool at_zero = positive_zero(au) && positive_zero(av) && positive_zero(bu) &&
                       positive_zero(bv) && s == 1.0;
  if (at_zero)
    axis_kernel<true>(local.data(), n, au, av, bu, bv, s, inv_l, distances.data(), g0);
  else
    axis_kernel<false>(local.data(), n, au, av, bu, bv, s, inv_l, distances.data(), g0);
}

void AxisZoneModel::evaluate(const Eigen::VectorXd& step, Eigen::VectorXd& distances,
                             Eigen::MatrixXd* gradients) const {
  axis_distances(local_, tilt_scale_, step, distances, gradients);
}

void AxisZoneModel::move(const Eigen::VectorXd& step) {
  const Eigen::Vector3d point = origin_ + basis_ * Eigen::Vector3d(step(0), step(1), 0.0);
  const Eigen::Vector3d dir =
      basis_ * Eigen::Vector3d(step(2) / tilt_scale_, step(3) / tilt_scale_, 1.0);
  set_frame(point, dir);
}

std::unique_ptr<ZoneModel> AxisZoneModel::subset(const std::vector<Eigen::Index>& indices) const {
  std::unique_ptr<AxisZoneModel> copy(new AxisZoneModel());
  copy->points_ = points_.subset(indices);
  copy->centroid_ = centroid_;
  copy->tilt_scale_ = tilt_scale_;
  copy->origin_ = origin_;
  copy->basis_ = basis_;
  copy->local_ = local_(Eigen::all, indices);
  return copy;
}

double AxisZoneModel::location_offset() const { return (centroid_ - origin_).norm(); }

Axis AxisZoneModel::axis() const { return Axis{origin_, basis_.col(2)}; }

DisplacementGauge AxisZoneModel::displacement_gauge() const {
  // The displaced axis passes through (shift, 0) along (tilt / L, 1): it meets the plane z = t
  // (the cross-section at station t) at shift + t tilt / L, exactly. Reference points: the
  // axis at both ends of the points' extent, where a position or perpendicularity zone is
  // decided for a straight axis.
  DisplacementGauge gauge;
  gauge.functionals = Eigen::MatrixXd::Zero(4, 4);
  const double ends[2] = {local_.row(2).minCoeff(), local_.row(2).maxCoeff()};
  for (int e = 0; e < 2; ++e) {
    gauge.functionals(2 * e, 0) = 1.0;
    gauge.functionals(2 * e, 2) = ends[e] / tilt_scale_;
    gauge.functionals(2 * e + 1, 1) = 1.0;
    gauge.functionals(2 * e + 1, 3) = ends[e] / tilt_scale_;
  }
  return gauge;
}

Eigen::VectorXd AxisZoneModel::displacements(const Eigen::VectorXd& step,
                                             const Eigen::VectorXd&,
                                             const Eigen::VectorXd&) const {
  return displacement_gauge().functionals * step;  // exact, see displacement_gauge
}

Eigen::VectorXd AxisZoneModel::step_to(const ZoneModel& other) const {
  // The other axis in this frame, written as this parametrisation's axis through (shift, 0)
  // along (tilt / L, 1): where it meets the plane w = 0, and its direction scaled to w = 1.
  const auto& o = dynamic_cast<const AxisZoneModel&>(other);
  const Eigen::Vector3d m = basis_.transpose() * o.basis_.col(2);
  const Eigen::Vector3d q = basis_.transpose() * (o.origin_ - origin_);
  const Eigen::Vector3d at_zero = q - (q.z() / m.z()) * m;
  Eigen::VectorXd step(4);
  step << at_zero.x(), at_zero.y(), tilt_scale_ * m.x() / m.z(), tilt_scale_ * m.y() / m.z();
  return step;
}

PlaneZoneModel::PlaneZoneModel(const Eigen::Matrix3Xd& points,
                               const Eigen::Vector3d& start_normal)
    : points_(points) {
  centroid_ = detail::centroid(*points_);
  tilt_scale_ = tilt_scale_of(*points_, centroid_);
  set_frame(start_normal);
}

void PlaneZoneModel::set_frame(const Eigen::Vector3d& normal) {
  basis_ = basis_from_direction(normal);
  local_coordinates_into(*points_, centroid_, basis_, local_);
}

Eigen::Matrix2d PlaneZoneModel::box() const {
  Eigen::Matrix2d b;  // columns: lowest and highest in-plane coordinates
  b.col(0) = local_.topRows<2>().rowwise().minCoeff();
  b.col(1) = local_.topRows<2>().rowwise().maxCoeff();
  return b;
}

DisplacementGauge PlaneZoneModel::displacement_gauge() const {
  // The displaced mid-plane {q : q.m / |m| = mid} with m = (b, 1), b = slope / L, has height
  // z = mid |m| - b.(X, Y) above the in-plane point (X, Y); to first order its change is the
  // change of mid minus b.(X, Y). Reference points: the corners of the points' box.
  DisplacementGauge gauge;
  gauge.dimension = 1;
  gauge.offset_weight = 1.0;
  gauge.functionals.resize(4, 2);
  const Eigen::Matrix2d b = box();
  for (int c = 0; c < 4; ++c) {
    gauge.functionals(c, 0) = -b(0, c & 1) / tilt_scale_;
    gauge.functionals(c, 1) = -b(1, (c >> 1) & 1) / tilt_scale_;
  }
  return gauge;
}

Eigen::VectorXd PlaneZoneModel::displacements(const Eigen::VectorXd& step,
                                              const Eigen::VectorXd& distances_at_step,
                                              const Eigen::VectorXd& distances_here) const {
  const Eigen::Vector2d b = step.head<2>() / tilt_scale_;
  const double norm = std::sqrt(1.0 + b.squaredNorm());
  auto mid = [](const Eigen::VectorXd& s) { return 0.5 * (s.maxCoeff() + s.minCoeff()); };
  const double mid_step = mid(distances_at_step), mid_here = mid(distances_here);
  const Eigen::Matrix2d corners = box();
  Eigen::VectorXd out(4);
  for (int c = 0; c < 4; ++c) {
    const Eigen::Vector2d corner(corners(0, c & 1), corners(1, (c >> 1) & 1));
    out(c) = mid_step * norm - b.dot(corner) - mid_here;
  }
  return out;
}

void PlaneZoneModel::evaluate(const Eigen::VectorXd& step, Eigen::VectorXd& distances,
                              Eigen::MatrixXd* gradients) const {
  // s_i = q_i.m / |m| with m = (b_u, b_v, 1), b = slope / L; ds/db = q_xy / |m| - s_i b / |m|^2.
  const Eigen::Vector3d m(step(0) / tilt_scale_, step(1) / tilt_scale_, 1.0);
  const double norm = m.norm();
  distances = (m.transpose() * local_).transpose() / norm;
  if (!gradients) return;
  gradients->resize(local_.cols(), 2);
  for (int k = 0; k < 2; ++k)
    gradients->col(k) =
        (local_.row(k).transpose() / norm - distances * (m(k) / (norm * norm))) / tilt_scale_;
}

std::unique_ptr<ZoneModel> PlaneZoneModel::subset(const std::vector<Eigen::Index>& indices) const {
  std::unique_ptr<PlaneZoneModel> copy(new PlaneZoneModel());
  copy->points_ = points_.subset(indices);
  copy->centroid_ = centroid_;
  copy->tilt_scale_ = tilt_scale_;
  copy->basis_ = basis_;
  copy->local_ = local_(Eigen::all, indices);
  return copy;
}

Eigen::VectorXd PlaneZoneModel::step_to(const ZoneModel& other) const {
  // The other normal in this frame, scaled to a unit third component (either sense).
  const Eigen::Vector3d m =
      basis_.transpose() * dynamic_cast<const PlaneZoneModel&>(other).basis_.col(2);
  return Eigen::Vector2d(m.x() / m.z(), m.y() / m.z()) * tilt_scale_;
}

void PlaneZoneModel::move(const Eigen::VectorXd& step) {
  set_frame(basis_ * Eigen::Vector3d(step(0) / tilt_scale_, step(1) / tilt_scale_, 1.0));
}

}  // namespace cylzone::detail
