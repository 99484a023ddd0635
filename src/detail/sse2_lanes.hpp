// Private helper (not installed): reading back the two lanes of SSE2 sums that carry two
// scalar sums side by side (the fits' accumulation loops that pair an x term with a y term).
#pragma once

#if defined(__SSE2__)
#include <emmintrin.h>

namespace cylzone::detail {

/// The two lanes of each of three paired sums, low first: a's into a0, a1, b's, c's.
inline void split_lanes(__m128d a, __m128d b, __m128d c, double& a0, double& a1, double& b0,
                        double& b1, double& c0, double& c1) {
  a0 = _mm_cvtsd_f64(a);
  a1 = _mm_cvtsd_f64(_mm_unpackhi_pd(a, a));
  b0 = _mm_cvtsd_f64(b);
  b1 = _mm_cvtsd_f64(_mm_unpackhi_pd(b, b));
  c0 = _mm_cvtsd_f64(c);
  c1 = _mm_cvtsd_f64(_mm_unpackhi_pd(c, c));
}

}  // namespace cylzone::detail
#endif
