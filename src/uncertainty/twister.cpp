// The block function of MT19937-64 behind detail::Twister64 (uncertainty/detail/twister.hpp
// states the method and its sources): one body of loops, built for the baseline processor and
// for AVX2, chosen by the processor at each block.
#include "uncertainty/detail/twister.hpp"

namespace cylzone::detail {
namespace {

using Word = std::uint64_t;

constexpr std::size_t n = twister_words, m = 156;
constexpr Word upper = ~Word{0} << 31;  // the top w - r = 33 bits
constexpr Word lower = ~upper;
constexpr Word a = 0xb5026f5aa96619e9ULL;

inline Word twist(Word high, Word low, Word far) noexcept {
  const Word y = (high & upper) | (low & lower);
  // A when the low bit is set, without a branch (the mask is all ones or zero).
  return far ^ (y >> 1) ^ (a & (Word{0} - (y & 1U)));
}

/// Branch-free loops without a dependence from one word to the next, which the compiler
/// vectorises for whichever processor the caller targets: integer operations, so the same
/// words in every lane width.
inline __attribute__((always_inline)) void refill_words(Word* state, Word* out) noexcept {
  // x_{i+n} = x_{i+m} xor ((x_i^u | x_{i+1}^l) A), in place, in the order of the recurrence.
  std::size_t i = 0;
  for (; i < n - m; ++i) state[i] = twist(state[i], state[i + 1], state[i + m]);
  for (; i < n - 1; ++i) state[i] = twist(state[i], state[i + 1], state[i + m - n]);
  state[n - 1] = twist(state[n - 1], state[0], state[m - 1]);
  // Tempering (u = 29, d = 0x5555555555555555, s = 17, b = 0x71d67fffeda60000, t = 37,
  // c = 0xfff7eee000000000, l = 43).
  for (std::size_t k = 0; k < n; ++k) {
    Word z = state[k];
    z ^= (z >> 29) & 0x5555555555555555ULL;
    z ^= (z << 17) & 0x71d67fffeda60000ULL;
    z ^= (z << 37) & 0xfff7eee000000000ULL;
    z ^= z >> 43;
    out[k] = z;
  }
}

}  // namespace

void twister_refill_baseline(std::uint64_t* state, std::uint64_t* out) noexcept {
  refill_words(state, out);
}

#if defined(__GNUC__) && defined(__x86_64__)
__attribute__((target("avx2"))) void twister_refill_avx2(std::uint64_t* state,
                                                         std::uint64_t* out) noexcept {
  refill_words(state, out);
}
#endif

void twister_refill(std::uint64_t* state, std::uint64_t* out) noexcept {
#if defined(__GNUC__) && defined(__x86_64__)
  // A property of the processor, asked once per block of 312 words.
  if (__builtin_cpu_supports("avx2")) {
    twister_refill_avx2(state, out);
    return;
  }
#endif
  twister_refill_baseline(state, out);
}

}  // namespace cylzone::detail
