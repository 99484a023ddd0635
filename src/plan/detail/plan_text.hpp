#pragma once
// Wording shared by the plan reader and the plan rules, so that a rule reads the same whichever
// of them reports it.

#include <sstream>
#include <string>

namespace cylzone::detail {

/// A number as a message quotes it: up to 12 significant digits, "0.025", "-64", "1e+308".
inline std::string plan_number_text(double value, int significant_digits = 12) {
  std::ostringstream out;
  out.precision(significant_digits);
  out << value;
  return out.str();
}

inline std::string join_key(const std::string& path, const std::string& name) {
  return path.empty() ? name : path + "." + name;
}

/// A bore id usable in key paths and reports: non-empty, no control characters, no leading or
/// trailing space.
inline bool usable_bore_id(const std::string& id) {
  if (id.empty() || id.front() == ' ' || id.back() == ' ') return false;
  for (const char ch : id) {
    const unsigned char c = static_cast<unsigned char>(ch);
    if (c < 0x20 || c == 0x7f) return false;
  }
  return true;
}

}  // namespace cylzone::detail
