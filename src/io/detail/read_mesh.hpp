#pragma once
// Private entry point of the mesh / cloud reader (src/read_mesh.cpp), the only translation unit
// that sees OpenMesh. Not installed.

#include <filesystem>
#include <string>
#include <string_view>

#include "cylzone/io/point_cloud.hpp"
#include "cylzone/io/read_points.hpp"

namespace cylzone::detail {

/// Reads the vertices (and vertex normals, where the file has them) of a PLY, OBJ, OFF or STL
/// file. `content` is the whole file as read_points() read it: the structure checks and the
/// double-precision coordinate pass run on it, and OpenMesh reads `file` itself. `format` must
/// not be delimited_text. Throws InputError naming `source`, the format and the reason.
PointCloud read_mesh_points(const std::filesystem::path& file, std::string_view content,
                            PointFileFormat format, const ReadOptions& options,
                            const std::string& source);

}  // namespace cylzone::detail
