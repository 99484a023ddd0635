#pragma once
// Private: a guess, to be checked, of where a value falls among sorted values that are often
// evenly spaced (a scanned bore's slabs: NearestLevelHint in evaluate/detail/nearest_level.hpp,
// section_members in fit/sections.cpp). Both callers check the guessed position by the
// comparisons that characterise it and search as before when it fails, so the guess only
// decides how fast the answer is found, never what it is (interpolation search's first
// probe, Knuth TAOCP vol. 3, 6.2.1, from memory for the section).

#include <cmath>
#include <cstddef>

namespace cylzone::detail {

/// Where the first value not below t would be among m sorted values if they were evenly
/// spaced from the first to the last: ceil((t - first) / step), within [0, m]. Only a guess,
/// for a caller that checks it (any position when the values are not evenly spaced or t is not
/// finite).
class EvenGuess {
 public:
  EvenGuess(const double* values, std::size_t m) : m_(m) {
    if (m >= 2) {
      first_ = values[0];
      per_step_ = static_cast<double>(m - 1) / (values[m - 1] - values[0]);
      if (!(per_step_ > 0.0) || !std::isfinite(per_step_) || !std::isfinite(first_)) per_step_ = 0.0;
    }
  }
  std::size_t lower_bound(double t) const {
    const double g = std::ceil((t - first_) * per_step_);
    return g > 0.0 ? (g < static_cast<double>(m_) ? static_cast<std::size_t>(g) : m_) : 0;
  }

 private:
  std::size_t m_;
  double first_ = 0.0;
  double per_step_ = 0.0;  // 0: every guess is 0
};

}  // namespace cylzone::detail
