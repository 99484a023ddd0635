#pragma once
// Parsing of "I,J,K" direction options for the command-line tool.
#include <Eigen/Core>
#include <optional>
#include <string>

namespace cylzone::cli {

/// Parses "I,J,K" into a non-zero vector; throws std::invalid_argument naming `option` otherwise.
Eigen::Vector3d parse_direction(const std::string& text, const std::string& option);

}  // namespace cylzone::cli
