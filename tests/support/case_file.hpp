#pragma once
// Writes the cases a hidden Catch2 case prepares for a reference script (tests/reference/*.py)
// to the file named by an environment variable, through a temporary name and a rename, so the
// script (run next by ctest, as a fixture) never reads a partial file.

#include <catch2/catch.hpp>

#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <string>

namespace cylzone::testing {

/// Writes `text` to the file named by the environment variable `variable`; fails the test case
/// when the variable is not set or the file cannot be written. Returns the file's path.
inline std::filesystem::path write_case_file(const char* variable, const std::string& text) {
  const char* destination = std::getenv(variable);
  if (destination == nullptr) FAIL("set " << variable << " to the file to write");
  const std::filesystem::path file = destination;
  if (!file.parent_path().empty()) std::filesystem::create_directories(file.parent_path());
  const std::filesystem::path partial = file.string() + ".partial";
  {
    std::ofstream out(partial);
    out << text;
    REQUIRE(out.good());
  }
  std::filesystem::rename(partial, file);
  return file;
}

}  // namespace cylzone::testing
