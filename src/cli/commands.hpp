#pragma once
// Sub-commands of the cylzone tool. Each add_*_command registers its options with CLI11 and
// sets `result.run` to the action that runs after parsing succeeded.
#include <CLI/CLI.hpp>
#include <filesystem>
#include <cstddef>
#include <functional>
#include <optional>
#include <vector>
#include <string>
#include <string_view>

namespace cylzone::cli {

inline constexpr int exit_success = 0;
inline constexpr int exit_nonconforming = 1;
inline constexpr int exit_input_error = 2;
/// Not every characteristic could be decided (e.g. a decision rule that counts the measurement
/// uncertainty proved neither conformance nor non-conformance), and none is proven not to conform.
inline constexpr int exit_not_proven = 3;

/// The exit codes as `--help` lists them.
inline constexpr std::string_view exit_code_help =
    "Exit codes: 0 every characteristic conforms (fit: success), 1 a characteristic does not "
    "conform, 2 input or argument error, 3 conformance not proven. audit: 0 every summary "
    "verdict stands, 1 one is overturned, 3 a bore could not be decided. advise: 0 the "
    "candidate pattern meets the target, 1 it does not.";

/// `text` as one printable line of at most `limit` bytes: control characters become '?', a
/// longer text is cut and ends in "...". Error messages may quote file contents or arguments.
std::string one_line(std::string_view text, std::size_t limit = 400);

/// `value` as the shortest text `std::ostream` gives ("0.008", "1e+06"), for messages.
std::string number_text(double value);

/// A length option given in a unit of `mm_per_unit` mm, in mm. A value beyond `most_mm` is
/// refused (std::invalid_argument naming `option`) as a unit or typing mistake; signs and
/// finiteness are the library's checks.
double option_length_mm(double value, double mm_per_unit, const std::string& option,
                        double most_mm);

/// A trial-count option (`option`, e.g. "--trials"): a whole number from `least` to 10000000,
/// or "adaptive" (JCGM 101 7.9), which gives empty. Anything else is refused
/// (std::invalid_argument naming the option and quoting the text).
std::optional<std::size_t> trial_count_option(const std::string& text, const std::string& option,
                                              std::size_t least);

/// The run's time in UTC, ISO 8601 ("2026-12-02T17:40:00Z").
std::string utc_now();

/// UTF-8 output when the locale says so (LC_ALL, else LC_CTYPE, else LANG: the first one set
/// decides, as POSIX orders them).
bool utf8_locale();

}  // namespace cylzone::cli

namespace cylzone {
struct PartPlan;
}

namespace cylzone::cli {

/// Every file the plan reads: reports must never be written over one of them.
std::vector<std::filesystem::path> plan_inputs(const PartPlan& plan);

struct CommandResult {
  std::function<int()> run;
  std::string context;  ///< prefix for fit errors, e.g. "points.csv: "
};

void add_fit_command(CLI::App& app, CommandResult& result);
void add_check_command(CLI::App& app, CommandResult& result);
void add_audit_command(CLI::App& app, CommandResult& result);
void add_forecast_command(CLI::App& app, CommandResult& result);
void add_advise_command(CLI::App& app, CommandResult& result);

}  // namespace cylzone::cli
