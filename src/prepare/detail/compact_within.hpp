#pragma once
// A query's squared distances to a block's candidates and the slots of those within a bound,
// in slot order: all_nearest's inner loop (neighbour_index.cpp). Header-only so that the test
// compares the vectorised forms with the one-at-a-time loops they replaced. Not installed.

#include <cstddef>
#include <cstdint>

#if defined(__SSE2__)
#include <emmintrin.h>
#endif
#if defined(__x86_64__) && (defined(__GNUC__) || defined(__clang__))
#include <immintrin.h>
#define CYLZONE_HAVE_AVX2_PATH 1
#endif

namespace cylzone::detail {

/// Squared Euclidean distance in 3D from query `a` to point (x, y, z), summed in a fixed order:
/// dx^2, then + dy^2, then + dz^2 (each a rounded IEEE operation, no fused multiply-add).
inline double squared_distance(const double* a, double x, double y, double z) {
  const double d0 = a[0] - x, d1 = a[1] - y, d2 = a[2] - z;
  double sum = d0 * d0;
  sum += d1 * d1;
  sum += d2 * d2;
  return sum;
}

/// Writes into `passing` the slots j in [first, m) with d[j] <= bound, in increasing order,
/// after the `passed` already there; returns the new count. One at a time without a branch per
/// value (whether one passes is unpredictable): every slot is written at the next free place
/// and the count advances only when it passes. `passing` holds m entries. A NaN never passes.
inline std::size_t compact_within_serial(const double* d, std::size_t first, std::size_t m,
                                         double bound, std::uint32_t* passing,
                                         std::size_t passed = 0) {
  for (std::size_t j = first; j < m; ++j) {
    passing[passed] = static_cast<std::uint32_t>(j);
    passed += d[j] <= bound ? 1 : 0;
  }
  return passed;
}

/// Extra entries `passing` must hold beyond m for compact_within and distances_within (they
/// store four slots at a time).
constexpr std::size_t compact_slack = 4;

/// Row `mask`: the positions of mask's set bits, lowest first (the rest 0, never counted), and
/// their number: left-packing by a table (common practice).
alignas(16) inline constexpr std::uint32_t packed_slots[16][4] = {
    {0, 0, 0, 0}, {0, 0, 0, 0}, {1, 0, 0, 0}, {0, 1, 0, 0}, {2, 0, 0, 0}, {0, 2, 0, 0},
    {1, 2, 0, 0}, {0, 1, 2, 0}, {3, 0, 0, 0}, {0, 3, 0, 0}, {1, 3, 0, 0}, {0, 1, 3, 0},
    {2, 3, 0, 0}, {0, 2, 3, 0}, {1, 2, 3, 0}, {0, 1, 2, 3}};
inline constexpr std::uint8_t packed_count[16] = {0, 1, 1, 2, 1, 2, 2, 3,
                                                  1, 2, 2, 3, 2, 3, 3, 4};

/// The same slots in the same order as compact_within_serial(d, 0, m, bound, passing), four
/// values a step: two SSE2 comparisons d <= bound (the same IEEE comparison, false for a NaN)
/// give a 4-bit mask; the table's row holds the passing slots of the four packed to the front,
/// stored as one vector at the next free place, and the count advances by the row's count. The
/// slots beyond the count are scratch, as in the serial loop; `passing` holds m +
/// compact_slack entries. The last m mod 4 go one at a time; without SSE2 all of them.
inline std::size_t compact_within(const double* d, std::size_t m, double bound,
                                  std::uint32_t* passing) {
  std::size_t passed = 0, j = 0;
#if defined(__SSE2__)
  const __m128d b = _mm_set1_pd(bound);
  const __m128i four = _mm_set1_epi32(4);
  __m128i at = _mm_setzero_si128();  // j in each lane (m < 2^32: slots are 32-bit)
  for (; j + 4 <= m; j += 4) {
    const int low = _mm_movemask_pd(_mm_cmple_pd(_mm_loadu_pd(d + j), b));
    const int high = _mm_movemask_pd(_mm_cmple_pd(_mm_loadu_pd(d + j + 2), b));
    const unsigned mask = static_cast<unsigned>(low | high << 2);
    const __m128i slots =
        _mm_add_epi32(_mm_load_si128(reinterpret_cast<const __m128i*>(packed_slots[mask])), at);
    _mm_storeu_si128(reinterpret_cast<__m128i*>(passing + passed), slots);
    passed += packed_count[mask];
    at = _mm_add_epi32(at, four);
  }
#endif
  return compact_within_serial(d, j, m, bound, passing, passed);
}

/// The loops replaced (and the fall-back): d[j] = squared_distance(q, x[j], y[j], z[j]) for
/// j < m in one loop the compiler vectorises, then compact_within. Returns the count.
inline std::size_t distances_within_sse2(const double* q, const double* x, const double* y,
                                         const double* z, std::size_t m, double bound, double* d,
                                         std::uint32_t* passing) {
  for (std::size_t j = 0; j < m; ++j) d[j] = squared_distance(q, x[j], y[j], z[j]);
  return compact_within(d, m, bound, passing);
}

#if defined(CYLZONE_HAVE_AVX2_PATH)
/// The same distances (bit for bit) and slots as distances_within_sse2, four candidates a step
/// in one pass over 256-bit AVX registers: the same subtractions, products and sums in the
/// same order as squared_distance (AVX arithmetic is IEEE like SSE2's; no fused multiply-add
/// is enabled here or written), the comparison on the sums still in registers, one 4-bit
/// mask, packed by the table. Only for a processor with AVX2 (distances_within checks).
__attribute__((target("avx2"))) inline std::size_t distances_within_avx2(
    const double* q, const double* x, const double* y, const double* z, std::size_t m,
    double bound, double* d, std::uint32_t* passing) {
  std::size_t passed = 0, j = 0;
  const __m256d q0 = _mm256_set1_pd(q[0]), q1 = _mm256_set1_pd(q[1]), q2 = _mm256_set1_pd(q[2]);
  const __m256d b = _mm256_set1_pd(bound);
  const __m128i four = _mm_set1_epi32(4);
  __m128i at = _mm_setzero_si128();
  for (; j + 4 <= m; j += 4) {
    const __m256d d0 = _mm256_sub_pd(q0, _mm256_loadu_pd(x + j));
    const __m256d d1 = _mm256_sub_pd(q1, _mm256_loadu_pd(y + j));
    const __m256d d2 = _mm256_sub_pd(q2, _mm256_loadu_pd(z + j));
    __m256d sum = _mm256_mul_pd(d0, d0);
    sum = _mm256_add_pd(sum, _mm256_mul_pd(d1, d1));
    sum = _mm256_add_pd(sum, _mm256_mul_pd(d2, d2));
    _mm256_storeu_pd(d + j, sum);
    const unsigned mask =
        static_cast<unsigned>(_mm256_movemask_pd(_mm256_cmp_pd(sum, b, _CMP_LE_OQ)));
    const __m128i slots =
        _mm_add_epi32(_mm_load_si128(reinterpret_cast<const __m128i*>(packed_slots[mask])), at);
    _mm_storeu_si128(reinterpret_cast<__m128i*>(passing + passed), slots);
    passed += packed_count[mask];
    at = _mm_add_epi32(at, four);
  }
  for (std::size_t t = j; t < m; ++t) d[t] = squared_distance(q, x[t], y[t], z[t]);
  return compact_within_serial(d, j, m, bound, passing, passed);
}
#endif

/// Whether distances_within takes the AVX2 path on this processor.
inline bool distances_within_uses_avx2() {
#if defined(CYLZONE_HAVE_AVX2_PATH)
  return __builtin_cpu_supports("avx2");
#else
  return false;
#endif
}

/// d[j] = squared_distance(q, x[j], y[j], z[j]) for j < m, and the slots j with d[j] <= bound
/// into `passing` in increasing order (m + compact_slack entries); returns their count. The
/// AVX2 path where the processor has it, else the SSE2 one: the same bits either way.
inline std::size_t distances_within(const double* q, const double* x, const double* y,
                                    const double* z, std::size_t m, double bound, double* d,
                                    std::uint32_t* passing) {
#if defined(CYLZONE_HAVE_AVX2_PATH)
  if (distances_within_uses_avx2()) return distances_within_avx2(q, x, y, z, m, bound, d, passing);
#endif
  return distances_within_sse2(q, x, y, z, m, bound, d, passing);
}

}  // namespace cylzone::detail
