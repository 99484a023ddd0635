#pragma once
/// \file errors.hpp
/// Exceptions thrown at the library's boundaries. The numeric core never prints; it throws one of
/// these, and the command-line tool turns them into a one-line message and exit code 2.

#include <cstddef>
#include <stdexcept>
#include <string>

namespace cylzone {

/// Bad input data or a bad plan: carries the file, the 1-based line (0 when the problem is not
/// tied to a line), an optional key (for plan files) and the problem in words.
/// `what()` reads "FILE:LINE: key 'KEY': PROBLEM" (parts omitted when empty/zero).
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
