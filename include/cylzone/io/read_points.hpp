#pragma once
/// \file read_points.hpp
/// Reading probe points: delimited text (CSV and friends) and mesh / cloud files (PLY, OBJ, OFF,
/// STL). Every failure is an InputError naming the file, the line (for text) and the problem.

#include <filesystem>
#include <optional>
#include <string>
#include <string_view>

#include "cylzone/io/point_cloud.hpp"
#include "cylzone/core/units.hpp"

namespace cylzone {

enum class PointFileFormat { delimited_text, ply, obj, off, stl };

struct ReadOptions {
  /// Unit the file is written in; coordinates are converted to millimetres on reading.
  LengthUnit unit = LengthUnit::millimetre;
  /// Forces a format; by default it is chosen from the extension (.ply .obj .off .stl, anything
  /// else is delimited text).
  std::optional<PointFileFormat> format;
};

/// Reads a point file. Throws InputError (missing/unreadable file, empty file, binary data given
/// as text, non-numeric field, NaN/Inf, wrong column count, unknown header name, mesh reader
/// failure) and never returns a partial cloud.
///
/// Mesh and cloud files: the vertices become the points, vertex normals (PLY nx ny nz, NOFF, OBJ
/// vn when every vertex gets one) the vectors; STL has facet normals only and gives no vectors.
/// Coordinates keep double precision in PLY (any encoding), OBJ, ASCII OFF and ASCII STL; binary
/// STL and binary OFF (machine byte order) hold float32. PLY, OBJ and STL are read by a strict
/// structure scan and by OpenMesh, which must agree; OFF and binary PLY clouds (no list
/// properties, hence no faces) by the structure scan alone. Declared
/// counts the file cannot hold are refused before anything is allocated for them.
///
/// read_points is load() then parse_points() (load.hpp): the file is read once.
PointCloud read_points(const std::filesystem::path& file, const ReadOptions& options = {});

/// Parses delimited text already in memory. `source` names it in messages.
///
/// Format: fields separated by commas, semicolons, tabs or runs of spaces (one separator kind
/// per file, detected on the first data line); `#` starts a comment; blank lines are skipped.
/// An optional header line names the columns: x y z and optionally i j k (also accepted: nx ny
/// nz, u v w), in any case; extra named columns such as `id` are ignored. Without a header every
/// data line has 3 (x y z) or 6 (x y z i j k) numeric fields. Numbers are parsed with
/// std::from_chars, so the locale never changes the decimal separator. CRLF line ends, a UTF-8
/// byte-order mark and a last line without newline are accepted; vectors are normalised.
PointCloud parse_delimited_points(std::string_view text, const std::string& source,
                                  const ReadOptions& options = {});

/// Format chosen for a path by its extension.
PointFileFormat format_from_extension(const std::filesystem::path& file) noexcept;

}  // namespace cylzone
