#pragma once
// Sample statistics the forecast stage's simulations and comparisons share. Not installed.
// Sums run in the samples' order, so the same samples give the same bits.

#include <algorithm>
#include <cmath>
#include <cstddef>
#include <vector>

namespace cylzone::detail {

struct SampleMoments {
  double mean = 0.0;
  double sd = 0.0;  ///< sample standard deviation (n - 1); 0 for fewer than 2 samples
};

inline SampleMoments sample_moments(const std::vector<double>& v) {
  SampleMoments m;
  if (v.empty()) return m;
  for (double x : v) m.mean += x;
  m.mean /= static_cast<double>(v.size());
  if (v.size() < 2) return m;
  double ss = 0.0;
  for (double x : v) ss += (x - m.mean) * (x - m.mean);
  m.sd = std::sqrt(ss / static_cast<double>(v.size() - 1));
  return m;
}

/// The p quantile by linear interpolation between order statistics (Hyndman & Fan, "Sample
/// quantiles in statistical packages", Am. Stat. 50, 1996, definition 7). v not empty.
inline double sample_quantile(std::vector<double> v, double p) {
  std::sort(v.begin(), v.end());
  const double at = p * static_cast<double>(v.size() - 1);
  const std::size_t i = static_cast<std::size_t>(std::floor(at));
  if (i + 1 >= v.size()) return v.back();
  return v[i] + (at - static_cast<double>(i)) * (v[i + 1] - v[i]);
}

}  // namespace cylzone::detail
