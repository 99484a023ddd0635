#pragma once
// Private helpers of delimited text, shared by the point reader (read_delimited.cpp) and the
// summary reader of the audit (audit/summary.cpp): content lines without comments and blanks,
// the separator of a line, and its fields. Header-only; not installed.

#include <algorithm>
#include <cstddef>
#include <cstring>
#include <string>
#include <string_view>
#include <vector>

#include "io/detail/text_parsing.hpp"

#if defined(__SSE2__)
#include <emmintrin.h>
#endif

namespace cylzone::detail {

enum class Separator { comma, semicolon, tab, whitespace };

struct Line {
  const char* begin = nullptr;  ///< first non-blank character
  const char* end = nullptr;    ///< one past the last non-blank character before any comment
  std::size_t number = 0;       ///< 1-based
};

/// Number of '\n' bytes in [begin, end): std::count's answer, sixteen bytes a step with SSE2
/// (part of every x86-64 processor) where available. Each byte-wise compare adds 1 (as -1 - -1)
/// to a byte counter per lane; the counters are summed with psadbw before any can pass 255.
inline std::size_t count_line_feeds(const char* begin, const char* end) noexcept {
  std::size_t total = 0;
  const char* p = begin;
#if defined(__SSE2__)
  const __m128i line_feed = _mm_set1_epi8('\n');
  while (end - p >= 16) {
    const std::ptrdiff_t steps = std::min<std::ptrdiff_t>((end - p) / 16, 255);
    __m128i counters = _mm_setzero_si128();
    for (std::ptrdiff_t i = 0; i < steps; ++i, p += 16) {
      const __m128i bytes = _mm_loadu_si128(reinterpret_cast<const __m128i*>(p));
      counters = _mm_sub_epi8(counters, _mm_cmpeq_epi8(bytes, line_feed));
    }
    const __m128i sums = _mm_sad_epu8(counters, _mm_setzero_si128());
    total += static_cast<std::size_t>(_mm_cvtsi128_si32(sums)) +
             static_cast<std::size_t>(_mm_cvtsi128_si32(_mm_srli_si128(sums, 8)));
  }
#endif
  return total + static_cast<std::size_t>(std::count(p, end, '\n'));
}

/// Walks the content lines: strips the line end (LF or CRLF), a `#` comment and surrounding
/// blanks, and skips lines left empty.
class ContentLines {
 public:
  ContentLines(const char* begin, const char* end) : pos_(begin), end_(end) {}

  bool next(Line& line) {
    while (pos_ != end_) {
      ++number_;
      const char* start = pos_;
      const auto* newline =
          static_cast<const char*>(std::memchr(start, '\n', static_cast<std::size_t>(end_ - start)));
      const char* stop = newline ? newline : end_;
      pos_ = newline ? newline + 1 : end_;
      if (const auto* hash = static_cast<const char*>(
              std::memchr(start, '#', static_cast<std::size_t>(stop - start))))
        stop = hash;
      while (start != stop && detail::is_blank(*start)) ++start;
      while (stop != start && detail::is_blank(stop[-1])) --stop;
      if (start == stop) continue;
      line = Line{start, stop, number_};
      return true;
    }
    return false;
  }

  /// Start of the next raw line (not yet walked).
  const char* position() const noexcept { return pos_; }

  /// Steps over the next raw line, which the caller has read itself and found to end just
  /// before `next` (the byte after its LF, or the end); returns its 1-based number.
  std::size_t skip_line(const char* next) noexcept {
    pos_ = next;
    return ++number_;
  }

 private:
  const char* pos_;
  const char* end_;
  std::size_t number_ = 0;
};

/// The separator of a line: a semicolon anywhere wins (a file in the decimal-comma convention
/// separates by ';'), then comma, then tab when the tab-separated fields hold no blanks (else the
/// tabs are just blanks among others), else runs of blanks.
inline Separator detect_separator(const Line& line) {
  const std::string_view text(line.begin, static_cast<std::size_t>(line.end - line.begin));
  if (text.find(';') != std::string_view::npos) return Separator::semicolon;
  if (text.find(',') != std::string_view::npos) return Separator::comma;
  if (text.find('\t') == std::string_view::npos) return Separator::whitespace;
  for (std::size_t start = 0; start <= text.size();) {
    const std::size_t tab = std::min(text.find('\t', start), text.size());
    std::string_view field = text.substr(start, tab - start);
    while (!field.empty() && detail::is_blank(field.front())) field.remove_prefix(1);
    while (!field.empty() && detail::is_blank(field.back())) field.remove_suffix(1);
    if (std::any_of(field.begin(), field.end(), detail::is_blank)) return Separator::whitespace;
    start = tab + 1;
  }
  return Separator::tab;
}

inline std::string separator_name(Separator separator) {
  switch (separator) {
    case Separator::comma: return "','";
    case Separator::semicolon: return "';'";
    case Separator::tab: return "tab";
    case Separator::whitespace: return "blanks";
  }
  return {};
}

/// Splits a content line into fields (blanks around each trimmed). With a character separator an
/// empty field stays (so "1,,3" is seen as having an empty field) and a field wholly in double
/// quotes loses them (RFC 4180 section 2 allows any field to be quoted).
inline void split_fields(const Line& line, Separator separator, std::vector<std::string_view>& fields) {
  fields.clear();
  const char* p = line.begin;
  if (separator == Separator::whitespace) {
    while (p != line.end) {
      const char* start = p;
      while (p != line.end && !detail::is_blank(*p)) ++p;
      fields.emplace_back(start, static_cast<std::size_t>(p - start));
      while (p != line.end && detail::is_blank(*p)) ++p;
    }
    return;
  }
  const char mark = separator == Separator::comma ? ',' : separator == Separator::semicolon ? ';' : '\t';
  for (;;) {
    const auto* next =
        static_cast<const char*>(std::memchr(p, mark, static_cast<std::size_t>(line.end - p)));
    const char* stop = next ? next : line.end;
    const char* start = p;
    while (start != stop && detail::is_blank(*start)) ++start;
    const char* finish = stop;
    while (finish != start && detail::is_blank(finish[-1])) --finish;
    if (finish - start >= 2 && *start == '"' && finish[-1] == '"') {
      ++start;
      --finish;
    }
    fields.emplace_back(start, static_cast<std::size_t>(finish - start));
    if (!next) return;
    p = next + 1;
  }
}

}  // namespace cylzone::detail
