#pragma once
// A fast exact path for the decimal numbers point files are made of, in front of
// std::from_chars. Header-only; not installed.
//
// Method (Clinger 1990, "How to read floating point numbers accurately", PLDI '90, the "fast
// path"): a decimal w x 10^q whose significand w is at most 2^53 and whose |q| is at most 22 is
// the quotient or product of two doubles that are both exact (every integer up to 2^53 is a
// double, and so is every power of ten up to 10^22, since 5^22 < 2^53). IEEE 754-2008 clause 5.1
// computes one multiplication or division as if exactly and then rounds it, so w * 10^q (or
// w / 10^-q) is the correctly rounded value of the decimal (to nearest, ties to even): the very
// double that libstdc++'s std::from_chars returns (it rounds correctly, as glibc's strtod does;
// C++17 [charconv.from.chars] itself allows either neighbour, so the tests check both against
// each other). This relies on binary64 arithmetic without excess precision (FLT_EVAL_METHOD 0,
// as on x86-64 with SSE2 and AArch64) in the default rounding mode, which the project never
// changes.
//
// Only the plain form is taken: an optional '-', digits with an optional '.', an optional
// exponent ('e' or 'E', optional sign, at least one digit), at most 19 significant digits. For
// everything else (more digits, a larger exponent, "inf", "nan", "1e" with no exponent digits,
// no digits at all) the function returns nullptr and the caller asks std::from_chars, so the
// two together accept exactly what from_chars accepts and give the same bits and end pointer.

#include <cfloat>
#include <cstddef>
#include <cstdint>
#include <cstring>

// One rounding per operation is what makes the fast path exact (see above).
static_assert(FLT_EVAL_METHOD == 0, "the decimal fast path needs double arithmetic without excess precision");

namespace cylzone::detail {

/// Where digits are read eight at a time: little-endian targets (x86-64, AArch64), where the
/// first character of a chunk is its lowest byte.
#if defined(__BYTE_ORDER__) && __BYTE_ORDER__ == __ORDER_LITTLE_ENDIAN__
inline constexpr bool short_decimal_swar = true;
#else
inline constexpr bool short_decimal_swar = false;
#endif

/// The run of decimal digits at the start of the 8 bytes at `p` (all readable): its length
/// (0 to 8) and value. SIMD within a register (common practice; the conversion of eight digits
/// with three multiplications as in Lemire 2021, "Number parsing at a gigabyte per second",
/// Software: Practice and Experience 51(8)): a byte is a digit when b ^ '0' <= 9; the run is
/// shifted to the top of the word so the bytes below it read as leading zeros.
inline unsigned eight_digit_run(const char* p, std::uint64_t& run_value) noexcept {
  std::uint64_t chunk = 0;
  std::memcpy(&chunk, p, sizeof chunk);
  const std::uint64_t t = chunk ^ 0x3030303030303030ull;  // digit bytes become 0..9
  // High bit of a byte set when t >= 10 there. A byte of t >= 0x8a carries into the bytes
  // above it, but it is flagged itself and only the lowest flagged byte is used.
  const std::uint64_t flags = ((t + 0x7676767676767676ull) | t) & 0x8080808080808080ull;
  const unsigned count = flags ? static_cast<unsigned>(__builtin_ctzll(flags)) / 8 : 8;
  if (count == 0) {
    run_value = 0;
    return 0;
  }
  std::uint64_t v = t << (8 * (8 - count));
  v = v * 10 + (v >> 8);  // pairs of digits
  v = (((v & 0x000000ff000000ffull) * (100 + (1000000ull << 32))) +
       (((v >> 16) & 0x000000ff000000ffull) * (1 + (10000ull << 32)))) >>
      32;
  run_value = v;
  return count;
}

/// Appends the digits at `p` to `significand` (wrapping modulo 2^64 past 19 digits, which the
/// caller refuses by the count) and returns the end of the digits.
inline const char* take_digits(const char* p, const char* last, std::uint64_t& significand) noexcept {
  static constexpr std::uint64_t scale[] = {1,      10,      100,      1000,     10000,
                                            100000, 1000000, 10000000, 100000000};
  if constexpr (short_decimal_swar) {
    while (last - p >= 8) {
      std::uint64_t run = 0;
      const unsigned count = eight_digit_run(p, run);
      significand = significand * scale[count] + run;
      p += count;
      if (count < 8) return p;
    }
  }
  for (; p != last && static_cast<unsigned>(*p - '0') < 10u; ++p)
    significand = significand * 10 + static_cast<unsigned>(*p - '0');
  return p;
}

/// Parses the longest plain decimal at `first` (see above) as std::from_chars with
/// chars_format::general would, when the fast path applies: stores the value and returns the end
/// of the number. Returns nullptr, leaving `value` alone, whenever the fast path does not apply
/// or the text is not a plain decimal; the caller then uses std::from_chars.
inline const char* parse_short_decimal(const char* first, const char* last, double& value) noexcept {
  // 10^0 .. 10^22: exactly representable as doubles (5^22 < 2^53).
  static constexpr double powers_of_ten[] = {1e0,  1e1,  1e2,  1e3,  1e4,  1e5,  1e6,  1e7,
                                             1e8,  1e9,  1e10, 1e11, 1e12, 1e13, 1e14, 1e15,
                                             1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22};
  constexpr std::uint64_t exact_limit = std::uint64_t{1} << 53;
  const auto digit = [](char c) { return static_cast<unsigned>(c - '0') < 10u; };
  const char* p = first;
  const bool negative = p != last && *p == '-';
  p += negative;
  std::uint64_t significand = 0;
  const char* const integer_begin = p;
  while (p != last && *p == '0') ++p;  // leading zeros change nothing
  const char* digits_begin = p;
  p = take_digits(p, last, significand);
  std::ptrdiff_t significant_digits = p - digits_begin;  // leading zeros not counted
  bool any_digit = p != integer_begin;
  std::ptrdiff_t exponent = 0;
  if (p != last && *p == '.') {
    ++p;
    const char* const fraction_begin = p;
    if (significant_digits == 0)
      while (p != last && *p == '0') ++p;  // zeros right after the point only scale the value
    digits_begin = p;
    p = take_digits(p, last, significand);
    significant_digits += p - digits_begin;
    exponent = -(p - fraction_begin);
    any_digit = any_digit || p != fraction_begin;
  }
  if (significant_digits > 19) return nullptr;  // the significand may have wrapped
  if (!any_digit) return nullptr;  // ".", "-", "inf", "nan", "": from_chars decides
  if (p != last && (*p | 0x20) == 'e') {  // 'e' or 'E' (ASCII case bit)
    const char* q = p + 1;
    bool exponent_negative = false;
    if (q != last && (*q == '-' || *q == '+')) {
      exponent_negative = *q == '-';
      ++q;
    }
    if (q == last || !digit(*q)) return nullptr;  // "1e", "1e+": from_chars stops before 'e'
    std::ptrdiff_t written = 0;
    for (; q != last && digit(*q); ++q) {
      if (written > 100000) return nullptr;  // far outside the fast path; no overflow either
      written = written * 10 + (*q - '0');
    }
    exponent += exponent_negative ? -written : written;
    p = q;
  }
  if (significand > exact_limit || exponent < -22 || exponent > 22) return nullptr;
  const double w = static_cast<double>(significand);
  const double magnitude = exponent < 0 ? w / powers_of_ten[-exponent] : w * powers_of_ten[exponent];
  value = negative ? -magnitude : magnitude;
  return p;
}

}  // namespace cylzone::detail
