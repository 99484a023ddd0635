#pragma once
/// \file errors.hpp
/// Exceptions thrown at the library's boundaries. The numeric core never prints; it throws one of
/// these, and the command-line tool turns them into a one-line message and exit code 2.

#include <cstddef>
#include <stdexcept>
#include <string>
#include <string_view>

namespace cylzone {

/// Most characters of user-supplied text that a message quotes (after escaping).
inline constexpr std::size_t message_text_limit = 80;
/// Upper bound, in bytes, of `InputError::what()`, whatever its parts hold.
inline constexpr std::size_t message_limit = 400;

/// User-supplied text (a key, a value, a file name) made safe to show in a one-line message:
/// printable ASCII only. A backslash becomes `\\`, a double quote `\"`, tab, newline and carriage
/// return `\t`, `\n`, `\r`, and any other byte outside 0x20..0x7e (other control characters, ESC,
/// DEL, bytes of UTF-8 sequences) `\xHH`. At most `limit` characters of the escaped text are
/// kept; longer text is cut and followed by `..." (N bytes)` with N its original length.
/// The result is in double quotes: `"P1"`, `"a\nb"`, `"aaaa..." (1048576 bytes)`.
std::string quoted_for_message(std::string_view user_text,
                               std::size_t limit = message_text_limit);

/// Bad input data or a bad plan: carries the file, the 1-based line (0 when the problem is not
/// tied to a line), an optional key (for plan files) and the problem in words.
/// `what()` reads "FILE:LINE: key 'KEY': PROBLEM" (parts omitted when empty/zero) and is always
/// one line of printable ASCII of at most `message_limit` bytes: control characters and bytes
/// outside printable ASCII in any part are escaped (`\n`, `\x1b`), and an over-long file name,
/// key or problem is shortened with "...". The accessors return the parts as given.
class InputError : public std::runtime_error {
 public:
  InputError(std::string file, std::size_t line, std::string problem, std::string key = {});

  const std::string& file() const noexcept { return file_; }
  std::size_t line() const noexcept { return line_; }
  const std::string& key() const noexcept { return key_; }
  const std::string& problem() const noexcept { return problem_; }

 private:
  std::string file_;
  std::size_t line_;
  std::string key_;
  std::string problem_;
};

/// The points cannot determine the requested element (too few, collinear, one cross-section,
/// unbounded inscribed element, ...). The message says what was found, e.g. the axial span.
class FitError : public std::runtime_error {
 public:
  explicit FitError(const std::string& problem) : std::runtime_error(problem) {}
};

}  // namespace cylzone
