#pragma once
// Checks of the library's input-error contract: exactly one cylzone::InputError whose what()
// reads "FILE:LINE: problem" ("FILE: problem" when the problem has no line).

#include <catch2/catch.hpp>
#include <cstddef>
#include <string>

#include "cylzone/core/errors.hpp"

namespace cylzone::testing {

/// Runs `action`, which must throw InputError naming `file` and `line` and whose message
/// contains `problem`. Any other outcome (no exception, another type) fails the test.
template <class Action>
void expect_input_error(Action&& action, const std::string& file, std::size_t line,
                        const std::string& problem) {
  try {
    action();
  } catch (const InputError& e) {
    CHECK(e.file() == file);
    CHECK(e.line() == line);
    const std::string prefix = line > 0 ? file + ":" + std::to_string(line) + ": " : file + ": ";
    CHECK_THAT(std::string(e.what()), Catch::Matchers::StartsWith(prefix));
    CHECK_THAT(std::string(e.what()), Catch::Matchers::Contains(problem));
    CHECK(std::string(e.what()).find('\n') == std::string::npos);  // one line
    return;
  }
  FAIL("expected an InputError containing \"" << problem << "\"; nothing was thrown");
}

}  // namespace cylzone::testing
