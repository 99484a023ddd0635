#pragma once
// Private to the uncertainty stage: the random engine of the Monte Carlo study's trials.
//
// MT19937-64, the 64-bit Mersenne Twister (M. Matsumoto, T. Nishimura, "Mersenne twister: a
// 623-dimensionally equidistributed uniform pseudo-random number generator", ACM TOMACS 8
// (1998); the 64-bit parameters of T. Nishimura, ACM TOMACS 10 (2000); citations from memory)
// with the parameters, seeding and output of std::mt19937_64 (C++ [rand.eng.mers],
// [rand.predef]): the same sequence for the same seed, so the study's draws, and its published
// figures, are those of that engine.
// The difference is where the work is done: the state is twisted a block of 312 words at a
// time, as the standard library also does, and the whole block is tempered at once into an
// output buffer (a loop without branches that the compiler vectorises), instead of tempering
// one word, checking the index and storing it back at every call.
// The block's twist and tempering are integer operations lane by lane, so they run four words
// per AVX2 operation where the processor has it (src/uncertainty/twister.cpp), two per SSE2
// operation otherwise: the same words either way.
// tests/test_monte_carlo.cpp compares it with std::mt19937_64 output by output over many seeds
// and checks the standard's value of the 10000th output, and the two block functions word by
// word.

#include <cstddef>
#include <cstdint>

namespace cylzone::detail {

/// The words of MT19937-64's state and of its output block.
inline constexpr std::size_t twister_words = 312;

/// One block of MT19937-64: `state` (twister_words words) twisted in place in the order of the
/// recurrence, and every new word tempered into `out` (twister_words words). The baseline and
/// the AVX2 build of the same loops (on x86-64 with g++ or clang), and the one Twister64 uses:
/// AVX2 when the processor has it.
void twister_refill_baseline(std::uint64_t* state, std::uint64_t* out) noexcept;
#if defined(__GNUC__) && defined(__x86_64__)
void twister_refill_avx2(std::uint64_t* state, std::uint64_t* out) noexcept;
#endif
void twister_refill(std::uint64_t* state, std::uint64_t* out) noexcept;

class Twister64 {
 public:
  using result_type = std::uint64_t;
  static constexpr result_type min() noexcept { return 0; }
  static constexpr result_type max() noexcept { return ~result_type{0}; }

  /// The state std::mt19937_64(seed) starts from ([rand.eng.mers]: x_0 = seed,
  /// x_i = f (x_{i-1} xor (x_{i-1} >> 62)) + i, f = 6364136223846793005).
  explicit Twister64(result_type seed) noexcept {
    state_[0] = seed;
    for (std::size_t i = 1; i < n; ++i)
      state_[i] = 6364136223846793005ULL * (state_[i - 1] ^ (state_[i - 1] >> 62)) + i;
  }

  result_type operator()() noexcept {
    if (next_ == n) refill();
    return out_[next_++];
  }

 private:
  static constexpr std::size_t n = twister_words;

  void refill() noexcept {
    twister_refill(state_, out_);
    next_ = 0;
  }

  result_type state_[n];
  result_type out_[n];
  std::size_t next_ = n;
};

}  // namespace cylzone::detail

namespace cylzone {

/// standard_normals (uncertainty/monte_carlo.hpp) drawing from a Twister64: the same deviates
/// as from std::mt19937_64 with the same seed.
void standard_normals(detail::Twister64& rng, double* out, std::size_t count) noexcept;

}  // namespace cylzone
