#pragma once
// Private entry point of the mesh / cloud readers (src/io/read_mesh*.cpp). Not installed.

#include <filesystem>
#include <string>
#include <string_view>

#include "cylzone/io/point_cloud.hpp"
#include "cylzone/io/read_points.hpp"

namespace cylzone::detail {

/// Reads the vertices (and vertex normals, where the file has them) of a PLY, OBJ, OFF or STL
/// file from `content`, the whole file as read_points() read (and hashed) it: only these bytes
/// are parsed, the file is never opened again. `file` is kept for the caller's convenience and
/// not read. `format` must not be delimited_text. Throws InputError naming `source`, the format
/// and the reason; declared counts the bytes cannot hold are refused before any allocation.
PointCloud read_mesh_points(const std::filesystem::path& file, std::string_view content,
                            PointFileFormat format, const ReadOptions& options,
                            const std::string& source);

}  // namespace cylzone::detail
