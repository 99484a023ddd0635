#pragma once
/// \file point_cloud.hpp
/// The value type every reader produces and every fit consumes.

#include <Eigen/Core>
#include <cstddef>
#include <string>
#include <vector>

#include "cylzone/core/units.hpp"

namespace cylzone {

/// Points in millimetres, stored contiguously as the columns of a 3xN matrix (x, y, z of one
/// point are adjacent in memory). `vectors` is either empty (0 columns) or has one unit vector
/// per point: the probe approach / surface normal as written in the file (not re-oriented).
struct PointCloud {
  Eigen::Matrix3Xd points;
  Eigen::Matrix3Xd vectors;
  std::string source;                            ///< file name as given, for messages and reports
  LengthUnit file_unit = LengthUnit::millimetre;  ///< the unit the file was written in
  /// 1-based file line of each point, so reports can name a point by the line it came from;
  /// filled by the delimited-text reader, empty for formats without lines (meshes).
  std::vector<std::size_t> lines;

  std::size_t size() const noexcept { return static_cast<std::size_t>(points.cols()); }
  bool has_vectors() const noexcept { return vectors.cols() == points.cols() && points.cols() > 0; }
};

}  // namespace cylzone
