#pragma once
// Private pieces shared by the mesh / cloud readers: one structure scan per format
// (read_mesh_ply.cpp, read_mesh_obj.cpp, read_mesh_off.cpp, read_mesh_stl.cpp), the OpenMesh
// bridge (read_mesh_openmesh.cpp, the only file that includes OpenMesh) and the assembly in
// read_mesh.cpp. Every scan reads only the bytes it is given and checks each declared count
// against the bytes that remain before it allocates for it, so a hostile header can neither
// exhaust memory nor send OpenMesh into a loop. Not installed.

#include <Eigen/Core>
#include <cstddef>
#include <cstring>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "cylzone/io/read_points.hpp"

namespace cylzone::detail {

/// What a scan learned from the bytes.
struct ScanResult {
  std::size_t vertex_count = 0;             ///< declared (PLY, OFF) or counted (OBJ, STL)
  std::optional<Eigen::Matrix3Xd> points;   ///< double-precision coordinates, where scanned
  std::optional<Eigen::Matrix3Xd> normals;  ///< double-precision vertex normals, where scanned
  std::vector<std::size_t> vertex_lines;    ///< line of each vertex in text formats, else empty
  bool binary_stl = false;
  /// True when the scan read every vertex itself and OpenMesh is not asked (OFF: OpenMesh's OFF
  /// reader cannot read from memory; a binary PLY cloud without list properties, hence without
  /// faces: copied straight from the bytes, exactly, where OpenMesh would read floats).
  bool complete = false;
  std::string kind;  ///< e.g. "binary little-endian PLY", for messages
  /// Added to a message when OpenMesh misreads a file the scan understood: the known limits of
  /// OpenMesh 9.0's readers, found by probing them, that this file runs into.
  std::string openmesh_limits;
  /// False when OpenMesh would leave some vertex normals unset (OBJ normals given only for some
  /// vertices; PLY without all of nx ny nz): its normals are then not used.
  bool openmesh_normals_usable = true;
};

ScanResult scan_ply(std::string_view bytes, const std::string& source);
ScanResult scan_obj(std::string_view bytes, const std::string& source);
ScanResult scan_off(std::string_view bytes, const std::string& source);
ScanResult scan_stl(std::string_view bytes, const std::string& source);

/// What OpenMesh read.
struct OpenMeshResult {
  Eigen::Matrix3Xd points;
  std::optional<Eigen::Matrix3Xd> normals;  ///< raw vertex normals, when the file had them
};

/// Reads `bytes` (a PLY, OBJ or STL file the matching scan accepted) with OpenMesh from memory.
OpenMeshResult read_with_openmesh(std::string_view bytes, PointFileFormat format,
                                  const ScanResult& scan, const std::string& source);

// ---------------------------------------------------------------- text helpers for the scans

inline std::string vertex_label(std::size_t index) { return "vertex " + std::to_string(index + 1); }

/// Reads whitespace-separated tokens from text, counting lines.
class TokenReader {
 public:
  TokenReader(const char* begin, const char* end, std::size_t first_line)
      : pos_(begin), end_(end), line_(first_line) {}

  /// Next token, or an empty view at the end of the text.
  std::string_view next();
  std::size_t token_line() const { return token_line_; }

 private:
  const char* pos_;
  const char* end_;
  std::size_t line_;
  std::size_t token_line_ = 0;
};

/// Splits text into lines (LF or CRLF), with 1-based numbers; trailing blanks are dropped.
class LineReader {
 public:
  LineReader(const char* begin, const char* end) : pos_(begin), end_(end) {}
  bool next(std::string_view& line);
  std::size_t number() const { return number_; }
  const char* position() const { return pos_; }

 private:
  const char* pos_;
  const char* end_;
  std::size_t number_ = 0;
};

/// Fields of a line separated by blanks.
std::vector<std::string_view> words(std::string_view line);

/// A non-negative decimal integer that fits std::size_t, the whole of `text`.
std::optional<std::size_t> parse_count(std::string_view text);

/// Throws unless the first 4 KiB of `bytes` look like text.
void require_text(std::string_view bytes, const std::string& kind, const std::string& source);

/// Number in a text mesh file; throws naming the line, the item ("vertex 3") and the value.
double text_number(std::string_view token, std::size_t line, const std::string& item,
                   const std::string& what, const std::string& kind, const std::string& source);

/// The same for a value OpenMesh also reads, as a float: beyond the float range it would fail
/// (and skip or misplace the value), so such a value is refused here with the item named.
double text_float_range_number(std::string_view token, std::size_t line, const std::string& item,
                               const std::string& what, const std::string& kind,
                               const std::string& source);

/// Message for a declared count the remaining bytes cannot hold: refused before anything is
/// allocated for it.
std::string count_exceeds_bytes(const std::string& kind, const std::string& what,
                                std::size_t count, std::size_t remaining);

}  // namespace cylzone::detail

namespace cylzone::detail {
/// The lines of an OBJ file (already accepted by scan_obj) that OpenMesh is given.
std::string obj_lines_for_openmesh(std::string_view bytes);
}  // namespace cylzone::detail
