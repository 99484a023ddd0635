#include "cylzone/core/errors.hpp"

#include <algorithm>
#include <utility>

namespace cylzone {
namespace {

// The escaped form of one byte: itself when printable ASCII (0x20..0x7e), else a C-style escape.
// `quote_specials` also escapes the backslash and the double quote, so that quoted user text is
// unambiguous; the parts of InputError's message are only made printable (their own quoted
// excerpts are already escaped and must not be escaped twice).
std::string escaped_byte(unsigned char c, bool quote_specials) {
  static constexpr char hex[] = "0123456789abcdef";
  if (quote_specials && (c == '\\' || c == '"')) return std::string{'\\', static_cast<char>(c)};
  if (c >= 0x20 && c <= 0x7e) return std::string(1, static_cast<char>(c));
  switch (c) {
    case '\n': return "\\n";
    case '\r': return "\\r";
    case '\t': return "\\t";
    default: return std::string{'\\', 'x', hex[c >> 4], hex[c & 0x0f]};
  }
}

// Escapes `text` and keeps at most `limit` characters of the result (whole escapes only).
// Returns the kept text and whether all of `text` was kept.
std::pair<std::string, bool> escaped_prefix(std::string_view text, std::size_t limit,
                                            bool quote_specials) {
  std::string out;
  out.reserve(std::min(text.size(), limit));
  for (const char ch : text) {
    const std::string piece = escaped_byte(static_cast<unsigned char>(ch), quote_specials);
    if (out.size() + piece.size() > limit) return {out, false};
    out += piece;
  }
  return {out, true};
}

// One part of the message: printable, at most `limit` characters, "..." marking a cut.
std::string printable_part(std::string_view text, std::size_t limit) {
  auto [kept, whole] = escaped_prefix(text, limit, false);
  if (whole) return kept;
  auto [shorter, unused] = escaped_prefix(text, limit > 3 ? limit - 3 : 0, false);
  (void)unused;
  return shorter + "...";
}

std::string compose(const std::string& file, std::size_t line, const std::string& key,
                    const std::string& problem) {
  // File and key get a fixed share so that the line number and the problem always show; the
  // problem gets what is left of message_limit.
  constexpr std::size_t file_limit = 120;
  constexpr std::size_t key_limit = 140;
  std::string text = file.empty() ? std::string("<input>") : printable_part(file, file_limit);
  if (line > 0) text += ":" + std::to_string(line);
  text += ": ";
  if (!key.empty()) text += "key '" + printable_part(key, key_limit) + "': ";
  return text + printable_part(problem, message_limit - text.size());
}

}  // namespace

std::string quoted_for_message(std::string_view user_text, std::size_t limit) {
  auto [kept, whole] = escaped_prefix(user_text, limit, true);
  if (whole) return "\"" + kept + "\"";
  return "\"" + kept + "...\" (" + std::to_string(user_text.size()) + " bytes)";
}

InputError::InputError(std::string file, std::size_t line, std::string problem, std::string key)
    : std::runtime_error(compose(file, line, key, problem)),
      file_(std::move(file)),
      line_(line),
      key_(std::move(key)),
      problem_(std::move(problem)) {}

}  // namespace cylzone
