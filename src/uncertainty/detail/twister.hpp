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
// tests/test_monte_carlo.cpp compares it with std::mt19937_64 output by output over many seeds
// and checks the standard's value of the 10000th output.

#include <cstddef>
#include <cstdint>

namespace cylzone::detail {

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
  static constexpr std::size_t n = 312, m = 156;
  static constexpr result_type upper = ~result_type{0} << 31;  // the top w - r = 33 bits
  static constexpr result_type lower = ~upper;
  static constexpr result_type a = 0xb5026f5aa96619e9ULL;

  static result_type twist(result_type high, result_type low, result_type far) noexcept {
    const result_type y = (high & upper) | (low & lower);
    // A when the low bit is set, without a branch (the mask is all ones or zero).
    return far ^ (y >> 1) ^ (a & (result_type{0} - (y & 1U)));
  }

  void refill() noexcept {
    // x_{i+n} = x_{i+m} xor ((x_i^u | x_{i+1}^l) A), in place, in the order of the recurrence.
    std::size_t i = 0;
    for (; i < n - m; ++i) state_[i] = twist(state_[i], state_[i + 1], state_[i + m]);
    for (; i < n - 1; ++i) state_[i] = twist(state_[i], state_[i + 1], state_[i + m - n]);
    state_[n - 1] = twist(state_[n - 1], state_[0], state_[m - 1]);
    // Tempering (u = 29, d = 0x5555555555555555, s = 17, b = 0x71d67fffeda60000, t = 37,
    // c = 0xfff7eee000000000, l = 43).
    for (std::size_t k = 0; k < n; ++k) {
      result_type z = state_[k];
      z ^= (z >> 29) & 0x5555555555555555ULL;
      z ^= (z << 17) & 0x71d67fffeda60000ULL;
      z ^= (z << 37) & 0xfff7eee000000000ULL;
      z ^= z >> 43;
      out_[k] = z;
    }
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
