// Tests of io/detail/short_decimal.hpp, the exact fast path in front of std::from_chars. The
// reference is the computation it replaces: std::from_chars (chars_format::general) of the same
// text, which must give the same bits and the same end pointer wherever the fast path answers;
// glibc's strtod (ISO C 7.22.1.3, correctly rounded) and the IEEE 754 binary64 encodings of a
// few decimals (common practice) are checked too, so a from_chars fault cannot hide one of ours.
#include <catch2/catch.hpp>

#include <charconv>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <random>
#include <string>
#include <vector>

#include "io/detail/short_decimal.hpp"

namespace {

std::uint64_t bits(double value) {
  std::uint64_t b = 0;
  std::memcpy(&b, &value, sizeof b);
  return b;
}

struct Tally {
  std::size_t fast = 0;      ///< texts the fast path answered
  std::size_t declined = 0;  ///< texts left to from_chars
};

/// Checks one text: where the fast path answers, from_chars must accept the same characters and
/// give the same bits. Returns whether the fast path answered.
bool agrees_with_from_chars(const std::string& text, Tally& tally) {
  const char* first = text.data();
  const char* last = first + text.size();
  double fast = 12345.0;
  const char* end = cylzone::detail::parse_short_decimal(first, last, fast);
  if (!end) {
    CHECK(fast == 12345.0);  // untouched when declined
    ++tally.declined;
    return false;
  }
  ++tally.fast;
  double reference = 0.0;
  const auto result = std::from_chars(first, last, reference, std::chars_format::general);
  INFO("text: \"" << text << "\"");
  REQUIRE(result.ec == std::errc());
  REQUIRE(end == result.ptr);
  REQUIRE(bits(fast) == bits(reference));
  return true;
}

}  // namespace

TEST_CASE("short decimals: the plain forms of the trade, bit for bit with from_chars and strtod",
          "[read][short_decimal]") {
  // (text, IEEE 754 binary64 encoding; common practice: 0.1 is 0x3FB999999999999A, the nearest
  // double, 5.55e-18 above 0.1).
  const std::pair<const char*, std::uint64_t> known[] = {
      {"0.1", 0x3FB999999999999Aull},  {"-0.1", 0xBFB999999999999Aull},
      {"1", 0x3FF0000000000000ull},    {"-0", 0x8000000000000000ull},
      {"0", 0x0000000000000000ull},    {"-0.0e5", 0x8000000000000000ull},
      {"2.5", 0x4004000000000000ull},  {"1e22", 0x4480F0CF064DD592ull},
      {"0.3", 0x3FD3333333333333ull},  {"9007199254740992", 0x4340000000000000ull},
  };
  for (const auto& [text, encoding] : known) {
    INFO(text);
    const std::string s = text;
    double fast = 0.0;
    const char* end = cylzone::detail::parse_short_decimal(s.data(), s.data() + s.size(), fast);
    REQUIRE(end == s.data() + s.size());
    CHECK(bits(fast) == encoding);
    CHECK(bits(fast) == bits(std::strtod(s.c_str(), nullptr)));
  }
}

TEST_CASE("short decimals: forms outside the fast path are left to from_chars",
          "[read][short_decimal]") {
  // 2^53 + 1 cannot be a double, "1e23" needs a power of ten beyond 10^22 (its nearest double
  // is not 1e22 * 10), 20 significant digits overflow the significand, and the rest are not
  // plain decimals at all.
  for (const char* text :
       {"9007199254740993", "1e23", "12345678901234567890", "1e-23", "4.9e-324", "1e400",
        "2.2250738585072014e-308", "1.7976931348623157e308", "", "-", ".", "-.", "+1", "inf",
        "-inf", "nan", "NaN", "e5", ".e5", "1e", "1e+", "1E-", "-e1", " 1", "x1"}) {
    INFO(text);
    double value = 7.0;
    const std::string s = text;
    CHECK(cylzone::detail::parse_short_decimal(s.data(), s.data() + s.size(), value) == nullptr);
    CHECK(value == 7.0);
  }
}

TEST_CASE("short decimals: adversarial and edge texts agree with from_chars",
          "[read][short_decimal]") {
  Tally tally;
  const std::vector<std::string> bodies = {
      "0", "-0", "00000", "-000.000", "0.", "5.", "-5.", ".5", "-.5", "1.e5", "5.E-3",
      "000123.4500", "0.000000000000000000001", "0.0000000000000000000001",
      "-0.00000000000000000000000000000000000001", "1e0", "1e-0", "1e+0", "1E+22", "1e-22",
      "-1e22", "9007199254740992e22", "9007199254740992e-22", "9007199254740991",
      "9007199254740991.0", "900719925474099.1", "1234567890123456789", "123456789012345678",
      "0.123456789012345678", "1.23456789012345678", "12345678901234567.8",
      "0.0000001234567890123456789", "100000000000000000000", "1000000000000000000000e-21",
      "1e00000000000000000000000000022", "1e-00000000000000000000000000022",
      "1e9999999999999999999999999999", "7e-10", "3.14159265358979", "-273.15",
      "0.30000000000000004", "4.35", "8.675309", "2.675", "1.005", "0.5e1",
      // halfway-looking decimals: the division rounds them, IEEE 754 says how
      "1.00000000000000011102230246251565", "4503599627370496.5", "4503599627370497.5",
      "9007199254740993e-1", "2251799813685248.25",
  };
  // Whatever follows a number must not change how much of it is read.
  const std::vector<std::string> tails = {"", ",", ";", " ", "\t", "\n", "e", "E+", "e-x",
                                          ".", "..", "x", "#", "-1", "+"};
  for (const std::string& body : bodies)
    for (const std::string& tail : tails) agrees_with_from_chars(body + tail, tally);
  CHECK(tally.fast > bodies.size() * tails.size() / 2);  // most of these take the fast path
}

TEST_CASE("short decimals: printed doubles all take the fast path with from_chars' bits",
          "[read][short_decimal]") {
  // A CMM or scanner export prints coordinates with a fixed number of significant digits; the
  // fast path must answer all of those with up to 15 significant digits in the usual range
  // (|q| <= 22), and agree with from_chars on every precision up to 17.
  std::mt19937_64 rng(20261204);
  std::uniform_real_distribution<double> coordinate(-2000.0, 2000.0);
  std::uniform_int_distribution<int> scale(-6, 6);  // q within 22 for this seed
  Tally tally;
  char buffer[64];
  for (int i = 0; i < 400000; ++i) {
    const double value = coordinate(rng) * std::pow(10.0, scale(rng));
    for (const int precision : {6, 10, 15}) {
      std::snprintf(buffer, sizeof buffer, "%.*g", precision, value);
      REQUIRE(agrees_with_from_chars(buffer, tally));
    }
    std::snprintf(buffer, sizeof buffer, "%.*f", 4, value);
    agrees_with_from_chars(buffer, tally);
    std::snprintf(buffer, sizeof buffer, "%.*e", 16, value);
    agrees_with_from_chars(buffer, tally);
  }
  CHECK(tally.fast >= 1200000);
}

TEST_CASE("short decimals: random digit strings agree with from_chars", "[read][short_decimal]") {
  // Random significands of 0..24 digits around a point, with leading and trailing zeros, signs
  // and exponents up to three digits: the fast path either declines or gives from_chars' bits.
  std::mt19937_64 rng(90071992);
  std::uniform_int_distribution<int> length(0, 12);
  std::uniform_int_distribution<int> digit(0, 9);
  std::uniform_int_distribution<int> coin(0, 3);
  std::uniform_int_distribution<int> exponent(-40, 40);
  const char* tails[] = {"", ",", "\n", "e", "x"};
  Tally tally;
  std::string text;
  for (int i = 0; i < 1500000; ++i) {
    text.clear();
    if (coin(rng) == 0) text += '-';
    const int zeros = coin(rng) == 0 ? length(rng) : 0;
    text.append(static_cast<std::size_t>(zeros), '0');
    for (int d = length(rng); d > 0; --d) text += static_cast<char>('0' + digit(rng));
    if (coin(rng) != 0) {
      text += '.';
      for (int d = length(rng); d > 0; --d) text += static_cast<char>('0' + digit(rng));
      if (coin(rng) == 0) text.append(static_cast<std::size_t>(length(rng)), '0');
    }
    if (coin(rng) == 0) {
      text += coin(rng) == 0 ? 'E' : 'e';
      const int e = exponent(rng);
      if (e < 0 || coin(rng) == 0) text += e < 0 ? '-' : '+';
      text += std::to_string(e < 0 ? -e : e);
    }
    text += tails[static_cast<std::size_t>(i % 5)];
    agrees_with_from_chars(text, tally);
  }
  // Both outcomes must occur, or the generator tests only half of the contract.
  CHECK(tally.fast > 300000);
  CHECK(tally.declined > 100000);
}
