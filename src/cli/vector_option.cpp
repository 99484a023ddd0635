#include "cli/vector_option.hpp"

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

}  // namespace cylzone::cli
