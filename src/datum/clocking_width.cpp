// The related mating width of a slot or tab about a fixed axis: the method is described in
// detail/clocking_width.hpp; docs/datum-frame.md gives the datum convention around it.
#include "datum/detail/clocking_width.hpp"

#include <Eigen/Eigenvalues>
#include <algorithm>
#include <cmath>
#include <limits>
#include <optional>
#include <string>
#include <vector>

#include "cylzone/core/errors.hpp"
#include "detail/fit_support.hpp"
#include "detail/golden_section.hpp"

namespace cylzone::detail {
namespace {

constexpr double pi = 3.14159265358979323846;
// Samples of the coarse scan over the feasible interval of rotations.
constexpr int scan_samples = 128;
// Golden-section search stops below this interval, radians (a few units in the last place of
// an angle of order one); the closed-form polish then removes the rest.
constexpr double angle_tolerance = 1e-15;
constexpr int max_golden_iterations = 200;
// Half-width of the probe either side of the searched optimum that tells which two sinusoids
// are active there.
constexpr double active_probe = 1e-9;

// The point's coordinates in the starting frame: t along the starting centre line, d across
// it. Rotating the centre line by delta gives s d(delta) = s (d cos delta - t sin delta).
struct FacePoint {
  double t = 0.0;
  double d = 0.0;
  int face = 1;
  double value(double cos_delta, double sin_delta) const {
    return face * (d * cos_delta - t * sin_delta);
  }
};

// Angle reduced to (-pi/2, pi/2]: a centre line and its reverse are the same line.
double reduced_half_turn(double angle) {
  while (angle > 0.5 * pi) angle -= pi;
  while (angle <= -0.5 * pi) angle += pi;
  return angle;
}

class WidthObjective {
 public:
  WidthObjective(const std::vector<FacePoint>& points, bool internal)
      : points_(points), internal_(internal) {}

  // The half-width at rotation delta (slot: least s d, tab: largest) and the point reaching it.
  double half_width(double delta, std::size_t* active = nullptr) const {
    ++evaluations_;
    const double c = std::cos(delta), s = std::sin(delta);
    double best = internal_ ? std::numeric_limits<double>::infinity()
                            : -std::numeric_limits<double>::infinity();
    std::size_t at = 0;
    for (std::size_t i = 0; i < points_.size(); ++i) {
      const double v = points_[i].value(c, s);
      if (internal_ ? v < best : v > best) {
        best = v;
        at = i;
      }
    }
    if (active) *active = at;
    return best;
  }

  // The quantity minimised: a slot's half-width is maximised, a tab's minimised.
  double cost(double delta) const { return internal_ ? -half_width(delta) : half_width(delta); }

  int evaluations() const { return evaluations_; }

 private:
  const std::vector<FacePoint>& points_;
  bool internal_;
  mutable int evaluations_ = 0;
};

// Rounds of re-estimating the faces' common direction from a split. The split settles once the
// direction is good to the faces' gap over their length; on random slots it seldom changes
// after the first round and was not seen to after the second, so three leave a margin.
constexpr int split_refinements = 3;

// The two faces as two parallel lines. The points' offsets across `along` are sorted and split
// at the largest gap; `along` is then re-estimated as the principal direction of the points
// about their own face's centroid (the pooled within-face scatter, the common direction of two
// parallel least-squares lines), and the split repeated. Neither the faces' point counts nor
// their extents along the feature bias that direction, whereas the least-squares line through
// the origin leans toward the face with more points and can cut through it.
struct FaceSplit {
  std::vector<int> upper;  // 1 on the +(z x along) side of the largest gap, else 0
  double clearance = 0.0;  // the gap over the larger spread of a face across `along`
};

FaceSplit split_at_largest_gap(const Eigen::Matrix2Xd& points, Eigen::Vector2d along) {
  const std::size_t n = static_cast<std::size_t>(points.cols());
  std::vector<double> offset(n);
  std::vector<std::size_t> order(n);
  FaceSplit split;
  split.upper.assign(n, 0);
  for (int round = 0;; ++round) {
    const Eigen::Vector2d normal(-along.y(), along.x());
    for (std::size_t i = 0; i < n; ++i) {
      offset[i] = normal.dot(points.col(static_cast<Eigen::Index>(i)));
      order[i] = i;
    }
    std::sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) {
      return offset[a] < offset[b] || (offset[a] == offset[b] && a < b);
    });
    std::size_t cut = 0;  // the gap lies between order[cut] and order[cut + 1]
    for (std::size_t j = 1; j + 1 < n; ++j)
      if (offset[order[j + 1]] - offset[order[j]] > offset[order[cut + 1]] - offset[order[cut]])
        cut = j;
    for (std::size_t j = 0; j < n; ++j) split.upper[order[j]] = j > cut ? 1 : 0;
    if (round == split_refinements) {
      const double gap = offset[order[cut + 1]] - offset[order[cut]];
      const double spread = std::max(offset[order[cut]] - offset[order[0]],
                                     offset[order[n - 1]] - offset[order[cut + 1]]);
      split.clearance = gap / std::max(spread, std::numeric_limits<double>::min());
      return split;
    }
    Eigen::Vector2d sum[2] = {Eigen::Vector2d::Zero(), Eigen::Vector2d::Zero()};
    double count[2] = {0.0, 0.0};
    for (std::size_t i = 0; i < n; ++i) {
      sum[split.upper[i]] += points.col(static_cast<Eigen::Index>(i));
      count[split.upper[i]] += 1.0;
    }
    Eigen::Matrix2d scatter = Eigen::Matrix2d::Zero();
    for (std::size_t i = 0; i < n; ++i) {
      const Eigen::Vector2d r =
          points.col(static_cast<Eigen::Index>(i)) - sum[split.upper[i]] / count[split.upper[i]];
      scatter += r * r.transpose();
    }
    along = Eigen::SelfAdjointEigenSolver<Eigen::Matrix2d>(scatter).eigenvectors().col(1);
  }
}

// The starting centre line from the faces found as two parallel lines: of the splits reached
// from the candidate directions, those whose faces some line through the origin separates (every
// point of the left face at a larger angle from `toward` than every point of the right one), the
// cleanest (largest clearance); the start is then the line through the origin midway in angle
// between the two faces. Angles are measured from `toward`, the centroid's direction: when a
// line through the origin has every point in front of it, so has the centroid, and every point
// is then less than a half turn from it, so the angles do not wrap. None when no candidate split
// is so separated (the caller then keeps the least-squares start and its checks).
std::optional<Eigen::Vector2d> start_between_faces(const Eigen::Matrix2Xd& points,
                                                   const Eigen::Vector2d& toward,
                                                   const std::vector<Eigen::Vector2d>& directions) {
  const Eigen::Index n = points.cols();
  const Eigen::Vector2d left_of(-toward.y(), toward.x());
  std::vector<double> beta(static_cast<std::size_t>(n));
  for (Eigen::Index i = 0; i < n; ++i)
    beta[static_cast<std::size_t>(i)] =
        std::atan2(points.col(i).dot(left_of), points.col(i).dot(toward));
  std::optional<Eigen::Vector2d> start;
  double best_clearance = -1.0;
  for (const Eigen::Vector2d& direction : directions) {
    const FaceSplit split = split_at_largest_gap(points, direction);
    double mean[2] = {0.0, 0.0}, count[2] = {0.0, 0.0};
    for (std::size_t i = 0; i < beta.size(); ++i) {
      mean[split.upper[i]] += beta[i];
      count[split.upper[i]] += 1.0;
    }
    const int left = mean[1] / count[1] > mean[0] / count[0] ? 1 : 0;
    double lowest_left = std::numeric_limits<double>::infinity();
    double highest_right = -std::numeric_limits<double>::infinity();
    for (std::size_t i = 0; i < beta.size(); ++i) {
      if (split.upper[i] == left)
        lowest_left = std::min(lowest_left, beta[i]);
      else
        highest_right = std::max(highest_right, beta[i]);
    }
    if (!(highest_right < lowest_left) || !(split.clearance > best_clearance)) continue;
    best_clearance = split.clearance;
    const double middle = 0.5 * (highest_right + lowest_left);
    start = std::cos(middle) * toward + std::sin(middle) * left_of;
  }
  return start;
}

}  // namespace

WidthAboutAxis fit_width_about_origin(const Eigen::Matrix2Xd& points, bool internal) {
  const std::string feature = internal ? "slot" : "tab";
  const Eigen::Index n = points.cols();
  if (!points.allFinite()) throw FitError("a coordinate of the " + feature + " is not finite");
  if (n < 4)
    throw FitError("a " + feature + " needs at least 4 points, 2 on each face, got " +
                   std::to_string(n));
  const double scale = std::max(1.0, points.colwise().norm().maxCoeff());

  // The start: the direction of the centroid from the axis (the measured counterpart of C's
  // basic direction), refined by the least-squares line through the origin, i.e. the principal
  // direction of sum q q^T (of its two, the one nearer the centroid's direction, so that a
  // feature wider than it is long still starts along its centre line).
  const Eigen::Vector2d centroid = points.rowwise().mean();
  if (!(centroid.norm() > 1e-9 * scale))
    throw FitError("the centroid of its points lies on the axis of datum B (" +
                   format_number(centroid.norm(), 9) +
                   " mm from it), so the direction from B to the " + feature +
                   " cannot be told");
  const Eigen::Vector2d toward = centroid.normalized();
  const Eigen::SelfAdjointEigenSolver<Eigen::Matrix2d> eigen(points * points.transpose());
  Eigen::Vector2d u = eigen.eigenvectors().col(1);
  if (std::abs(eigen.eigenvectors().col(0).dot(toward)) > std::abs(u.dot(toward)))
    u = eigen.eigenvectors().col(0);
  if (u.dot(toward) < 0.0) u = -u;
  // The least-squares line through the origin tells the faces only when they have similar
  // point counts: it leans toward the face with more points and can cut through it, splitting
  // that face. So the faces are found as two parallel lines (start_between_faces), from the
  // least-squares direction, the centroid's direction and the points' principal axes about their
  // centroid, and the start is the line through the origin midway between them; the
  // least-squares line remains the start when no line through the origin separates them.
  {
    const Eigen::Matrix2Xd centred = points.colwise() - centroid;
    const Eigen::SelfAdjointEigenSolver<Eigen::Matrix2d> axes(centred * centred.transpose());
    if (const std::optional<Eigen::Vector2d> between = start_between_faces(
            points, toward,
            {u, toward, axes.eigenvectors().col(0), axes.eigenvectors().col(1)}))
      u = between->normalized();
  }
  const Eigen::Vector2d across(-u.y(), u.x());

  std::vector<FacePoint> face_points(static_cast<std::size_t>(n));
  const double band = 1e-9 * scale;
  Eigen::Index behind = 0, positive = 0, negative = 0;
  for (Eigen::Index i = 0; i < n; ++i) {
    FacePoint& p = face_points[static_cast<std::size_t>(i)];
    p.t = points.col(i).dot(u);
    p.d = points.col(i).dot(across);
    if (!(p.t > 0.0)) ++behind;
  }
  if (behind > 0)
    throw FitError("its points are not all on one side of datum B's axis: " +
                   std::to_string(behind) + " of " + std::to_string(n) +
                   " lie at or behind the line through B's axis across the direction to the " +
                   feature + "'s centroid, so the direction from B to the " + feature +
                   " cannot be told");
  for (Eigen::Index i = 0; i < n; ++i) {
    FacePoint& p = face_points[static_cast<std::size_t>(i)];
    if (!(std::abs(p.d) > band))
      throw FitError("point #" + std::to_string(i + 1) + " lies on the centre line through " +
                     "datum B's axis (" + format_number(std::abs(p.d), 12) +
                     " mm from it), so the faces of the " + feature + " are not separated");
    p.face = p.d > 0.0 ? 1 : -1;
    (p.face > 0 ? positive : negative) += 1;
  }
  // "Left" is the side of +across: counterclockwise about A's normal, which points out of the
  // material, so left as seen from outside the material looking from B toward C.
  for (const auto& [count, side] : {std::pair<Eigen::Index, const char*>{positive, "left"},
                                    std::pair<Eigen::Index, const char*>{negative, "right"}}) {
    // A face cannot be empty: every point lies ahead of B (t > 0), and for the least-squares
    // line through B sum t_i d_i = 0, so the d_i cannot all have one sign; the line midway
    // between two faces has points on both sides by construction.
    if (count < 2)
      throw FitError("the face " + std::string(side) + " of the centre line (seen from outside " +
                     "the material looking from B toward C) has " + std::to_string(count) +
                     " point; each face of a " + feature + " needs at least 2");
  }

  // Rotations keeping every point on its face's side: point i at angle alpha_i = atan2(d, t)
  // from the start (|alpha_i| < pi/2 as t > 0) stays there while the rotation has not reached
  // it, so the interval runs from the largest alpha of the right face to the least of the left.
  double lower = -0.5 * pi, upper = 0.5 * pi;
  for (const FacePoint& p : face_points) {
    const double alpha = std::atan2(p.d, p.t);
    if (p.face > 0)
      upper = std::min(upper, alpha);
    else
      lower = std::max(lower, alpha);
  }

  const WidthObjective objective(face_points, internal);
  // Coarse scan (needed for the tab, harmless for the slot), then golden section between the
  // neighbours of the best sample.
  const double step = (upper - lower) / scan_samples;
  int best_k = 0;
  double best_cost = std::numeric_limits<double>::infinity();
  for (int k = 0; k < scan_samples; ++k) {
    const double cost = objective.cost(lower + (k + 0.5) * step);
    if (cost < best_cost) {
      best_cost = cost;
      best_k = k;
    }
  }
  const double from = std::max(lower, lower + (best_k - 0.5) * step);
  const double to = std::min(upper, lower + (best_k + 1.5) * step);
  auto [delta, cost] = golden_minimum([&](double x) { return objective.cost(x); }, from, to,
                                      angle_tolerance, max_golden_iterations);

  // Closed-form polish. Either side of the optimum one sinusoid is active; where two differ,
  // the optimum is their crossing s_i (d_i c - t_i s) = s_j (d_j c - t_j s), i.e.
  // tan delta = (s_i d_i - s_j d_j) / (s_i t_i - s_j t_j); where they agree (a slot only), it is
  // that sinusoid's peak, tan delta = -t / d. The best candidate is kept when it is no worse
  // than the search's answer beyond the rounding of the objective (its terms are of the size of
  // the data): the search locates a smooth peak only to the square root of the rounding.
  std::size_t left = 0, right = 0;
  (void)objective.half_width(delta - active_probe, &left);
  (void)objective.half_width(delta + active_probe, &right);
  std::vector<double> candidates;
  const FacePoint& a = face_points[left];
  const FacePoint& b = face_points[right];
  if (left != right)
    candidates.push_back(reduced_half_turn(
        std::atan2(a.face * a.d - b.face * b.d, a.face * a.t - b.face * b.t)));
  if (internal)
    for (const FacePoint* p : {&a, &b}) candidates.push_back(-std::atan2(p->face * p->t, p->face * p->d));
  const double rounding = 16.0 * std::numeric_limits<double>::epsilon() * scale;
  double best_candidate = delta, candidate_cost = std::numeric_limits<double>::infinity();
  for (const double candidate : candidates) {
    if (!(candidate >= lower && candidate <= upper)) continue;
    const double c = objective.cost(candidate);
    if (c < candidate_cost) {
      candidate_cost = c;
      best_candidate = candidate;
    }
  }
  if (candidate_cost <= cost + rounding) {
    cost = candidate_cost;
    delta = best_candidate;
  }

  WidthAboutAxis result;
  result.start_angle = std::atan2(u.y(), u.x());
  result.angle = result.start_angle + delta;
  result.mating_width = 2.0 * objective.half_width(delta);
  result.face.resize(n);
  for (Eigen::Index i = 0; i < n; ++i) result.face(i) = face_points[static_cast<std::size_t>(i)].face;
  result.evaluations = objective.evaluations();
  return result;
}

}  // namespace cylzone::detail
