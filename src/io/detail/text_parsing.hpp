#pragma once
// Private helpers shared by the text readers (delimited text and the text mesh formats PLY,
// OBJ, OFF): locale-independent number parsing, the "is this binary?" sniff, and quoting of
// offending text in messages. Header-only; not installed.

#include <charconv>
#include <cmath>
#include <cstddef>
#include <optional>
#include <string>
#include <string_view>
#include <system_error>

#include "io/detail/short_decimal.hpp"

namespace cylzone::detail {

enum class NumberStatus { ok, not_a_number, not_finite, out_of_range };

/// Parses all of [first, last) as a decimal floating-point number with std::from_chars (after its
/// exact fast path, short_decimal.hpp, which gives the same bits), which is
/// locale-independent and correctly rounded, so it gives the same double as the C library's
/// strtod in the "C" locale. Two differences from bare from_chars make it match strtod on the
/// inputs a text file can hold: one leading '+' is accepted, and a value below the smallest
/// subnormal becomes a signed zero (from_chars reports it as out of range; strtod returns 0).
/// NaN and infinity ("nan", "inf", ...) are recognised and reported, never returned; overflow is
/// out_of_range. `value` is written only on ok.
inline NumberStatus parse_number(const char* first, const char* last, double& value) noexcept {
  const char* start = first;
  if (start != last && *start == '+') {
    ++start;
    if (start == last || *start == '-' || *start == '+') return NumberStatus::not_a_number;
  }
  double parsed = 0.0;
  // The exact fast path gives from_chars' bits and end wherever it answers (short_decimal.hpp).
  if (const char* end = parse_short_decimal(start, last, parsed)) {
    if (end != last) return NumberStatus::not_a_number;
    value = parsed;
    return NumberStatus::ok;
  }
  const auto [end, ec] = std::from_chars(start, last, parsed, std::chars_format::general);
  if (ec == std::errc::invalid_argument || end != last) return NumberStatus::not_a_number;
  if (ec == std::errc::result_out_of_range) {
    // Decide overflow against underflow from the decimal exponent of the leading significant
    // digit: the syntax is already known to be valid.
    const char* p = start;
    const bool negative = *p == '-';
    if (negative) ++p;
    long magnitude = 0;  // m in 0.d... x 10^m, to within one: enough, the limits are 10^+-308
    bool seen_point = false, seen_digit = false;
    for (; p != last && *p != 'e' && *p != 'E'; ++p) {
      if (*p == '.') {
        seen_point = true;
      } else if (!seen_digit && *p == '0') {
        if (seen_point) --magnitude;
      } else {
        seen_digit = true;
        if (!seen_point) ++magnitude;
      }
    }
    long exponent = 0;
    if (p != last) {
      // from_chars accepted the text, so the exponent is well formed; clamp to avoid overflow.
      ++p;
      const bool exponent_negative = p != last && *p == '-';
      if (p != last && (*p == '-' || *p == '+')) ++p;
      for (; p != last && exponent < 100000; ++p) exponent = exponent * 10 + (*p - '0');
      if (exponent_negative) exponent = -exponent;
    }
    if (magnitude + exponent < 0) {
      value = negative ? -0.0 : 0.0;
      return NumberStatus::ok;
    }
    return NumberStatus::out_of_range;
  }
  if (!std::isfinite(parsed)) return NumberStatus::not_finite;
  value = parsed;
  return NumberStatus::ok;
}

/// Offset of the first byte among the first `limit` that does not occur in text: NUL or an ASCII
/// control character other than tab, line feed, vertical tab, form feed and carriage return.
/// Bytes >= 0x80 pass (UTF-8 text in comments and headers).
inline std::optional<std::size_t> find_binary_byte(std::string_view data,
                                                   std::size_t limit = 4096) noexcept {
  const std::size_t n = data.size() < limit ? data.size() : limit;
  for (std::size_t i = 0; i < n; ++i) {
    const auto c = static_cast<unsigned char>(data[i]);
    if ((c < 0x20 && c != '\t' && c != '\n' && c != '\v' && c != '\f' && c != '\r') || c == 0x7f)
      return i;
  }
  return std::nullopt;
}

/// Text of a message fragment naming a byte: "byte 0x00 at offset 17".
inline std::string describe_byte(unsigned char byte, std::size_t offset) {
  static const char digits[] = "0123456789abcdef";
  std::string text = "byte 0x";
  text += digits[byte >> 4];
  text += digits[byte & 15];
  return text + " at offset " + std::to_string(offset);
}

/// `text` cut to `max_chars` with "..." and with anything but printable ASCII shown as '?', so
/// a message stays one printable line whatever the bytes (for names read from a file).
inline std::string printable_excerpt(std::string_view text, std::size_t max_chars = 40) {
  std::string out;
  for (std::size_t i = 0; i < text.size() && i < max_chars; ++i) {
    const auto c = static_cast<unsigned char>(text[i]);
    out += (c < 0x20 || c >= 0x7f) ? '?' : static_cast<char>(c);
  }
  if (text.size() > max_chars) out += "...";
  return out;
}

/// printable_excerpt() in single quotes, for quoting offending text in a message.
inline std::string quoted_excerpt(std::string_view text, std::size_t max_chars = 40) {
  return "'" + printable_excerpt(text, max_chars) + "'";
}

/// Message fragment for a number that did not parse; `status` is not ok.
inline std::string describe_number_problem(NumberStatus status, std::string_view text) {
  switch (status) {
    case NumberStatus::not_finite:
      return "is NaN or infinite: " + quoted_excerpt(text);
    case NumberStatus::out_of_range:
      return "is out of the range of a double: " + quoted_excerpt(text);
    default:
      return text.empty() ? std::string("is empty") : "is not a number: " + quoted_excerpt(text);
  }
}

inline bool is_blank(char c) noexcept {
  return c == ' ' || c == '\t' || c == '\r' || c == '\v' || c == '\f';
}

}  // namespace cylzone::detail
