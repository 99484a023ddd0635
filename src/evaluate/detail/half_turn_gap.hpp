#pragma once
// Private: whether the directions of planar points leave a gap of half a turn or more, decided
// without their angles wherever the answer is clear (surrounds_axis, bore_evaluation.cpp).
//
// The method: a direction (x, y) has the pseudo-angle ("diamond angle") d = y / (|x| + |y|) on
// the side x >= 0 (taken mod 4, into [3, 4) below the x axis) and 2 - y / (|x| + |y|) on the
// side x < 0. It increases with the true angle theta, d theta / d d lies in [1, 2] (in the first
// quadrant d = sin / (sin + cos), whose derivative is 1 / (1 + sin 2 theta)), and the opposite
// direction has d + 2 (mod 4). So between two neighbouring directions, a true gap G and its
// pseudo-gap g satisfy |pi - G| >= |2 - g| with the same sign (the rest of the half turn past
// the gap is an arc of pseudo-length |2 - g|). Hence when the largest pseudo-gap is below
// 2 - margin every true gap is below pi - margin, and when it is above 2 + margin some true gap
// is above pi + margin. The angles the caller would otherwise sort (polar_angle, within 1e-15
// rad of atan2) and the pseudo-angles here (a few 1e-16 from exact) move a gap by far less than
// the margin (1e-9), so in both cases the sorted angles' largest gap is on the same side of pi:
// the decision is the same. Within the margin, or with a point at the centre (no direction),
// the answer is `undecided` and the caller takes the angles.
//
// The largest pseudo-gap is found without a sort: 16 buckets of width 1/4 keep their lowest and
// highest pseudo-angle; consecutive sorted values in one bucket are less than 1/4 apart, so any
// gap near 2 lies between one bucket's highest value and the next filled bucket's lowest.

#include <algorithm>
#include <array>
#include <cmath>
#include <cstddef>
#include <limits>

namespace cylzone::detail {

class HalfTurnGap {
 public:
  enum class Verdict { below, not_below, undecided };

  /// A direction (x, y) from the centre.
  void add(double x, double y) {
    ++count_;
    const double scale = std::abs(x) + std::abs(y);
    if (!(scale > 0.0) || !std::isfinite(scale)) {  // the centre itself, or beyond range
      centre_ = true;
      return;
    }
    const double p = y / scale;
    double d = std::signbit(x) ? 2.0 - p : p;
    d = d < 0.0 ? d + 4.0 : d;
    const std::size_t b = std::min<std::size_t>(buckets - 1, static_cast<std::size_t>(d * 4.0));
    low_[b] = std::min(low_[b], d);
    high_[b] = std::max(high_[b], d);
  }

  std::size_t count() const { return count_; }

  /// Whether the largest gap between the directions (the wrap-around one included) is below
  /// half a turn, as the sorted angles of the same directions decide it; `undecided` within
  /// the margin. Needs at least one direction.
  Verdict verdict() const {
    if (centre_) return Verdict::undecided;
    std::size_t first = 0;
    while (first < buckets && !(low_[first] <= high_[first])) ++first;
    if (first == buckets) return Verdict::undecided;
    double previous = high_[first], largest = 0.0;
    for (std::size_t b = first + 1; b < buckets; ++b) {
      if (!(low_[b] <= high_[b])) continue;
      largest = std::max(largest, low_[b] - previous);
      previous = high_[b];
    }
    largest = std::max(largest, low_[first] + 4.0 - previous);
    if (largest < 2.0 - margin) return Verdict::below;
    if (largest > 2.0 + margin) return Verdict::not_below;
    return Verdict::undecided;
  }

 private:
  static constexpr std::size_t buckets = 16;
  static constexpr double margin = 1e-9;
  std::array<double, buckets> low_ = filled(std::numeric_limits<double>::infinity());
  std::array<double, buckets> high_ = filled(-std::numeric_limits<double>::infinity());
  std::size_t count_ = 0;
  bool centre_ = false;

  static constexpr std::array<double, buckets> filled(double v) {
    std::array<double, buckets> a{};
    for (double& x : a) x = v;
    return a;
  }
};

}  // namespace cylzone::detail
