#pragma once
// Median, normal-consistent MAD scale and local excess, shared by the stray-point screen
// (stray_points.cpp) and the residual rejection's form guard (outlier_rejection.cpp). Not
// installed.

#include <algorithm>
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <vector>

#include <Eigen/Core>

#include <cstring>

#include "cylzone/prepare/neighbour_index.hpp"
#include "detail/parallel.hpp"

namespace cylzone::detail {

/// 1 / Phi^-1(3/4): makes the MAD a consistent estimate of a normal standard deviation
/// (Rousseeuw & Croux, J. Amer. Statist. Assoc. 88 (1993) 1273-1283, from memory; common
/// practice).
constexpr double mad_to_sigma = 1.4826;

/// Median of 8 values (v reordered): the mean of the 4th and 5th smallest, by the
/// 19-comparator sorting network for 8 inputs (Knuth, TAOCP vol. 3, section 5.3.4, from memory;
/// checked exhaustively by the 0-1 principle in tests/test_stray_points.cpp) less its two last
/// comparators, (1,2) and (5,6), which move no value into or out of positions 3 and 4: those
/// hold what any sort puts there, so the median is the same. Min and max without a branch.
inline double median_of_8(double* v) {
  static constexpr std::uint8_t network[17][2] = {
      {0, 2}, {1, 3}, {4, 6}, {5, 7}, {0, 4}, {1, 5}, {2, 6}, {3, 7}, {0, 1},
      {2, 3}, {4, 5}, {6, 7}, {2, 4}, {3, 5}, {1, 4}, {3, 6}, {3, 4}};
  for (const auto& pair : network) {
    const double low = std::min(v[pair[0]], v[pair[1]]);
    v[pair[1]] = std::max(v[pair[0]], v[pair[1]]);
    v[pair[0]] = low;
  }
  return 0.5 * (v[3] + v[4]);
}

/// Median of `values` (reordered in place); the mean of the two middle values for an even
/// count. `values` must not be empty.
inline double median_in_place(std::vector<double>& values) {
  const std::size_t n = values.size();
  if (n == 8) return median_of_8(values.data());  // the default neighbourhood (k = 8)
  if (n <= 32) {
    // A neighbourhood: insertion sort is cheaper than selection at this size.
    for (std::size_t i = 1; i < n; ++i)
      for (std::size_t j = i; j > 0 && values[j] < values[j - 1]; --j)
        std::swap(values[j], values[j - 1]);
    return n % 2 == 1 ? values[n / 2] : 0.5 * (values[n / 2 - 1] + values[n / 2]);
  }
  const auto middle = values.begin() + static_cast<std::ptrdiff_t>(n / 2);
  std::nth_element(values.begin(), middle, values.end());
  const double upper = *middle;
  if (n % 2 == 1) return upper;
  // After nth_element everything before `middle` is <= it: the lower middle is their largest.
  const double lower = *std::max_element(values.begin(), middle);
  return 0.5 * (lower + upper);
}

/// The centre (median) and robust scale (1.4826 x median absolute deviation from it) of
/// `values` (taken by value: reordered). `values` must not be empty.
struct RobustSpread {
  double centre = 0.0;
  double scale = 0.0;
};
inline RobustSpread robust_spread(std::vector<double> values) {
  RobustSpread s;
  s.centre = median_in_place(values);
  for (double& v : values) v = std::abs(v - s.centre);
  s.scale = mad_to_sigma * median_in_place(values);
  return s;
}

/// The median of `values` as median_in_place defines it (the same value; of two middle zeros
/// the sign of the mean may differ, which no use of it sees: deviations are taken with abs),
/// on up to `threads` threads: from 4 x 2^16 values on, a radix selection (common practice)
/// counts the values by the top 16 bits of an order-preserving integer key (per worker,
/// summed: counts do not depend on the split), keeps only those in the bucket(s) holding the
/// middle rank(s), and selects among them; on one thread too, where its two passes cost less
/// than nth_element over all values. Exact, so the result does not depend on the thread count.
/// `values` must not be empty; it is not changed.
inline double median_parallel(const std::vector<double>& values, std::size_t threads) {
  const std::size_t n = values.size();
  constexpr std::size_t chunk = std::size_t{1} << 16;
  const std::size_t chunks = (n + chunk - 1) / chunk;
  if (chunks < 4) {
    std::vector<double> copy(values);
    return median_in_place(copy);
  }
  // Finite doubles in the order of their keys: the sign bit set for non-negative values, every
  // bit flipped for negative ones (-0 before +0, which compare equal as values).
  const auto bucket = [](double v) {
    std::uint64_t bits;
    std::memcpy(&bits, &v, sizeof bits);
    bits = (bits >> 63) != 0 ? ~bits : bits | (std::uint64_t{1} << 63);
    return static_cast<std::size_t>(bits >> 48);
  };
  const std::size_t workers = worker_count(chunks, threads);
  std::vector<std::vector<std::size_t>> tally(workers, std::vector<std::size_t>(std::size_t{1} << 16, 0));
  parallel_for(chunks, threads, [&](std::size_t c, std::size_t w) {
    std::vector<std::size_t>& t = tally[w];
    for (std::size_t i = c * chunk, last = std::min(n, i + chunk); i < last; ++i) ++t[bucket(values[i])];
  });
  // The buckets of the middle ranks (adjacent ranks: any bucket between them is empty).
  const std::size_t upper = n / 2, lower = n % 2 == 1 ? upper : upper - 1;
  std::size_t below = 0, first = 0, last = 0, seen = 0;
  bool found_lower = false;
  for (std::size_t b = 0; b < (std::size_t{1} << 16); ++b) {
    std::size_t count = 0;
    for (const std::vector<std::size_t>& t : tally) count += t[b];
    if (!found_lower && seen + count > lower) {
      found_lower = true;
      first = b;
      below = seen;
    }
    if (seen + count > upper) {
      last = b;
      break;
    }
    seen += count;
  }
  std::vector<std::vector<double>> kept(workers);
  parallel_for(chunks, threads, [&](std::size_t c, std::size_t w) {
    for (std::size_t i = c * chunk, end = std::min(n, i + chunk); i < end; ++i) {
      const std::size_t b = bucket(values[i]);
      if (b >= first && b <= last) kept[w].push_back(values[i]);
    }
  });
  std::vector<double> middle;
  for (const std::vector<double>& k : kept) middle.insert(middle.end(), k.begin(), k.end());
  // Ranks within `middle`: its values are those of global ranks [below, below + size).
  const auto at = middle.begin() + static_cast<std::ptrdiff_t>(upper - below);
  std::nth_element(middle.begin(), at, middle.end());
  const double high = *at;
  if (n % 2 == 1) return high;
  const double low = *std::max_element(middle.begin(), at);  // lower <= upper - 1 >= below
  return 0.5 * (low + high);
}

/// robust_spread on up to `threads` threads (median_parallel): the same centre and scale.
inline RobustSpread robust_spread(const std::vector<double>& values, std::size_t threads) {
  RobustSpread s;
  s.centre = median_parallel(values, threads);
  std::vector<double> deviation(values.size());
  const std::size_t chunks = (values.size() + 4095) / 4096;
  parallel_for(chunks, threads, [&](std::size_t c, std::size_t) {
    for (std::size_t i = c * 4096, last = std::min(values.size(), i + 4096); i < last; ++i)
      deviation[i] = std::abs(values[i] - s.centre);
  });
  s.scale = mad_to_sigma * median_parallel(deviation, threads);
  return s;
}

/// Residual i minus the median residual of its `count` neighbours (input indices);
/// `buffer` is scratch space. count must be at least 1.
inline double excess_over(const Eigen::VectorXd& residuals, std::size_t i,
                          const std::uint32_t* neighbours, std::size_t count,
                          std::vector<double>& buffer) {
  if (count == 8) {  // the default neighbourhood: no buffer (median_in_place does the same)
    double v[8];
    for (std::size_t j = 0; j < 8; ++j) v[j] = residuals(static_cast<Eigen::Index>(neighbours[j]));
    return residuals(static_cast<Eigen::Index>(i)) - median_of_8(v);
  }
  buffer.resize(count);
  for (std::size_t j = 0; j < count; ++j)
    buffer[j] = residuals(static_cast<Eigen::Index>(neighbours[j]));
  return residuals(static_cast<Eigen::Index>(i)) - median_in_place(buffer);
}

/// The local excess of point i (stray_points.hpp): its residual minus the median residual of
/// its nearest neighbours in `index`, found with `query`; `buffer` is scratch space. The index
/// must hold at least two points.
inline double local_excess(const NeighbourIndex& index, NeighbourIndex::Query& query,
                           const Eigen::VectorXd& residuals, std::size_t i,
                           std::vector<double>& buffer) {
  const std::vector<std::uint32_t>& nearest = query.of_point(index, i);
  return excess_over(residuals, i, nearest.data(), nearest.size(), buffer);
}

}  // namespace cylzone::detail
