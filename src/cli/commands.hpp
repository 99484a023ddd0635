#pragma once
// Sub-commands of the cylzone tool. Each add_*_command registers its options with CLI11 and
// sets `result.run` to the action that runs after parsing succeeded.
#include <CLI/CLI.hpp>
#include <functional>
#include <string>

namespace cylzone::cli {

inline constexpr int exit_success = 0;
inline constexpr int exit_nonconforming = 1;
inline constexpr int exit_input_error = 2;
/// Not every characteristic could be decided (e.g. a decision rule that counts the measurement
/// uncertainty proved neither conformance nor non-conformance), and none is proven not to conform.
inline constexpr int exit_not_proven = 3;

struct CommandResult {
  std::function<int()> run;
  std::string context;  ///< prefix for fit errors, e.g. "points.csv: "
};

void add_fit_command(CLI::App& app, CommandResult& result);
void add_check_command(CLI::App& app, CommandResult& result);

}  // namespace cylzone::cli
