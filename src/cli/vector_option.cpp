#include "cli/vector_option.hpp"

#include "cli/commands.hpp"

#include <charconv>
#include <cmath>
#include <stdexcept>

namespace cylzone::cli {

Eigen::Vector3d parse_direction(const std::string& text, const std::string& option) {
  Eigen::Vector3d v;
  const char* p = text.data();
  const char* end = text.data() + text.size();
  for (int k = 0; k < 3; ++k) {
    while (p < end && *p == ' ') ++p;
    const auto [next, ec] = std::from_chars(p, end, v(k));
    if (ec != std::errc() || !std::isfinite(v(k)))
      throw std::invalid_argument(option + " expects three numbers I,J,K, got '" + text + "'");
    p = next;
    while (p < end && *p == ' ') ++p;
    if (k < 2) {
      if (p == end || *p != ',')
        throw std::invalid_argument(option + " expects three numbers I,J,K, got '" + text + "'");
      ++p;
    }
  }
  if (p != end)
    throw std::invalid_argument(option + " expects three numbers I,J,K, got '" + text + "'");
  if (v.norm() == 0.0) throw std::invalid_argument(option + " must not be the zero vector");
  return v;
}

std::string one_line(std::string_view text, std::size_t limit) {
  const bool cut = text.size() > limit;
  if (cut) text = text.substr(0, limit > 3 ? limit - 3 : 0);
  std::string out;
  for (char c : text) {
    const auto byte = static_cast<unsigned char>(c);
    out += (byte < 0x20 || byte == 0x7f) ? '?' : c;  // UTF-8 bytes >= 0x80 are kept
  }
  return cut ? out + "..." : out;
}

}  // namespace cylzone::cli
