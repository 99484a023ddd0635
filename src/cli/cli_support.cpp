// Helpers the sub-commands share (commands.hpp): the run's time, the locale's UTF-8 question,
// the files a plan reads.
#include <cctype>
#include <cstdlib>
#include <ctime>
#include <sstream>
#include <stdexcept>
#include <string>

#include "cli/commands.hpp"
#include "cylzone/plan/plan.hpp"

namespace cylzone::cli {

std::string number_text(double value) {
  std::ostringstream s;
  s << value;
  return s.str();
}

std::optional<std::size_t> trial_count_option(const std::string& text, const std::string& option,
                                              std::size_t least) {
  if (text == "adaptive") return std::nullopt;
  std::size_t used = 0;
  unsigned long long n = 0;
  try {
    n = std::stoull(text, &used);
  } catch (const std::exception&) {
    used = 0;
  }
  if (text.empty() || used != text.size() || text.front() == '-' || n < least || n > 10000000)
    throw std::invalid_argument(option + ": expected a whole number from " +
                                std::to_string(least) + " to 10000000 or adaptive, got '" +
                                one_line(text, 40) + "'");
  return static_cast<std::size_t>(n);
}

double option_length_mm(double value, double mm_per_unit, const std::string& option,
                        double most_mm) {
  const double mm = value * mm_per_unit;
  if (mm > most_mm)
    throw std::invalid_argument(option + ": " + number_text(value) + " is implausible (more than " +
                                number_text(most_mm / mm_per_unit) +
                                "); check the unit (--units, lengths in mm by default)");
  return mm;
}

std::string utc_now() {
  const std::time_t now = std::time(nullptr);
  std::tm utc{};
  gmtime_r(&now, &utc);
  char buffer[32];
  std::strftime(buffer, sizeof buffer, "%Y-%m-%dT%H:%M:%SZ", &utc);
  return buffer;
}

bool utf8_locale() {
  for (const char* name : {"LC_ALL", "LC_CTYPE", "LANG"}) {
    const char* value = std::getenv(name);
    if (!value || !*value) continue;
    std::string v(value);
    for (char& c : v) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
    return v.find("utf-8") != std::string::npos || v.find("utf8") != std::string::npos;
  }
  return false;
}

std::vector<std::filesystem::path> plan_inputs(const PartPlan& plan) {
  // A feature that takes its points from the [scan] names no file of its own; the scan's
  // cloud is then an input like any point file.
  std::vector<std::filesystem::path> inputs{plan.file};
  if (plan.scan) inputs.push_back(plan.scan->points);
  for (const PlanDatum& d : plan.datums)
    if (!d.from_scan()) inputs.push_back(d.points);
  for (const PlanBore& b : plan.bores)
    if (!b.from_scan()) inputs.push_back(b.points);
  return inputs;
}

}  // namespace cylzone::cli
