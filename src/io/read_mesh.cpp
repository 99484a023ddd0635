// Mesh and cloud files (PLY, OBJ, OFF, STL): assembly of the structure scans and OpenMesh.
//
// OpenMesh 9 parses every vertex coordinate into single precision (its readers hand a Vec3f to
// the importer whatever the mesh's point type), which costs up to 30 nm at 1 m from the origin
// and silently drops the digits a CMM export carries. So each file goes through two readers,
// both on the bytes read_points() read and hashed (the file is never opened again):
//  1. a structure scan of our own per format (read_mesh_<format>.cpp): the header grammar, every
//     declared count checked against the bytes that remain before anything is allocated, the
//     whole data section walked with bounds checks, and, for the formats that can hold more than
//     single precision (PLY of any encoding, OBJ, ASCII OFF, ASCII STL), the vertex coordinates
//     and normals in double precision. Only a file the scan accepted reaches OpenMesh;
//  2. OpenMesh (read_mesh_openmesh.cpp), which reads the file as a whole (faces included) and
//     reports failure. OFF is read by the scan alone: OpenMesh's OFF reader cannot take bytes
//     from memory (its stream entry point reuses the header flags of the previous file read).
//     So is a binary PLY without list properties (a cloud, no faces): every item has a fixed
//     size, the scan checks the counts against the bytes exactly and copies the vertex values
//     straight from the buffer (one memcpy for doubles x y z in machine byte order), where
//     OpenMesh would only add a float copy to compare with.
// The two must agree: same vertex count, and each scanned coordinate within float rounding of
// OpenMesh's. The scan's doubles are returned where it has them; binary STL (float32 by
// definition) comes from OpenMesh alone.
#include <cfloat>
#include <cmath>
#include <cstdio>
#include <new>
#include <string>
#include <utility>

#include "cylzone/core/errors.hpp"
#include "io/detail/mesh_scan.hpp"
#include "io/detail/read_mesh.hpp"
#include "io/detail/text_parsing.hpp"

namespace cylzone::detail {

// ---------------------------------------------------------------- text helpers

std::string_view TokenReader::next() {
  while (pos_ != end_ && (is_blank(*pos_) || *pos_ == '\n')) {
    if (*pos_ == '\n') ++line_;
    ++pos_;
  }
  const char* start = pos_;
  while (pos_ != end_ && !is_blank(*pos_) && *pos_ != '\n') ++pos_;
  token_line_ = line_;
  return {start, static_cast<std::size_t>(pos_ - start)};
}

bool LineReader::next(std::string_view& line) {
  if (pos_ == end_) return false;
  ++number_;
  const auto* newline =
      static_cast<const char*>(std::memchr(pos_, '\n', static_cast<std::size_t>(end_ - pos_)));
  const char* stop = newline ? newline : end_;
  line = std::string_view(pos_, static_cast<std::size_t>(stop - pos_));
  while (!line.empty() && is_blank(line.back())) line.remove_suffix(1);
  pos_ = newline ? newline + 1 : end_;
  return true;
}

std::vector<std::string_view> words(std::string_view line) {
  std::vector<std::string_view> out;
  std::size_t i = 0;
  while (i < line.size()) {
    while (i < line.size() && is_blank(line[i])) ++i;
    const std::size_t start = i;
    while (i < line.size() && !is_blank(line[i])) ++i;
    if (i > start) out.push_back(line.substr(start, i - start));
  }
  return out;
}

std::optional<std::size_t> parse_count(std::string_view text) {
  std::size_t value = 0;
  const auto [end, ec] = std::from_chars(text.data(), text.data() + text.size(), value);
  if (text.empty() || ec != std::errc() || end != text.data() + text.size()) return std::nullopt;
  return value;
}

void require_text(std::string_view bytes, const std::string& kind, const std::string& source) {
  if (const auto offset = find_binary_byte(bytes))
    throw InputError(source, 0,
                     "looks like binary data; not " + kind + " text (" +
                         describe_byte(static_cast<unsigned char>(bytes[*offset]), *offset) + ")");
}

double text_number(std::string_view token, std::size_t line, const std::string& item,
                   const std::string& what, const std::string& kind, const std::string& source) {
  double value = 0.0;
  const NumberStatus status = parse_number(token.data(), token.data() + token.size(), value);
  if (status != NumberStatus::ok)
    throw InputError(source, line,
                     kind + " " + item + ": " + what + " " + describe_number_problem(status, token));
  return value;
}

double text_float_range_number(std::string_view token, std::size_t line, const std::string& item,
                               const std::string& what, const std::string& kind,
                               const std::string& source) {
  const double value = text_number(token, line, item, what, kind, source);
  if (std::abs(value) > FLT_MAX)
    throw InputError(source, line,
                     kind + " " + item + ": " + what + " " + quoted_excerpt(token) +
                         " is beyond the range of a float (3.4e38), which OpenMesh reads it as");
  return value;
}

std::string count_exceeds_bytes(const std::string& kind, const std::string& what,
                                std::size_t count, std::size_t remaining) {
  return kind + " declares " + std::to_string(count) + " " + what + " but only " +
         std::to_string(remaining) + " bytes of data follow (truncated, or a corrupt header)";
}

namespace {

// ---------------------------------------------------------------- agreement checks

/// A number for a message: 9 significant digits, enough to tell a float from its neighbours.
std::string shortest_text(double value) {
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%.9g", value);
  return buffer;
}

/// OpenMesh narrowed each value to float; the scanned double must round to within one float
/// step of it (decimal -> float and decimal -> double -> float differ by at most one step).
/// Both values are finite here: the caller refused non-finite scanned values first, and an
/// OpenMesh value that is not finite where the scan's is disagrees.
bool agrees_to_float(double scanned, double narrowed) {
  if (std::abs(scanned) > FLT_MAX) return std::isinf(narrowed) || std::abs(narrowed) >= FLT_MAX;
  return std::abs(scanned - narrowed) <= 2.0 * FLT_EPSILON * std::abs(scanned) + FLT_MIN;
}

std::size_t line_of(const ScanResult& scan, Eigen::Index vertex) {
  return scan.vertex_lines.empty() ? 0 : scan.vertex_lines[static_cast<std::size_t>(vertex)];
}

void check_agreement(const Eigen::Matrix3Xd& scanned, const Eigen::Matrix3Xd& narrowed,
                     const ScanResult& scan, const char* what, const std::string& source) {
  for (Eigen::Index i = 0; i < scanned.cols(); ++i)
    for (int r = 0; r < 3; ++r)
      if (!agrees_to_float(scanned(r, i), narrowed(r, i)))
        throw InputError(source, line_of(scan, i),
                         scan.kind + " " + vertex_label(static_cast<std::size_t>(i)) + ": " +
                             what + " read as " + shortest_text(narrowed(r, i)) +
                             " by OpenMesh but " + shortest_text(scanned(r, i)) +
                             " by the structure scan" + scan.openmesh_limits);
}

/// Unit vectors from raw normals, normalised in place (each column is read whole before it is
/// written, so the result is the one a separate output matrix would hold, without a second
/// fresh array of the cloud's size); a normal that is not finite or has no length is refused,
/// naming the vertex and what is wrong with it.
Eigen::Matrix3Xd unit_normals(Eigen::Matrix3Xd normals, const ScanResult& scan,
                              const std::string& source) {
  for (Eigen::Index i = 0; i < normals.cols(); ++i) {
    const Eigen::Vector3d v = normals.col(i);
    // The vertex's name only when it is needed: a string per vertex would cost more than the
    // rest of the loop.
    const auto item = [&] { return scan.kind + " " + vertex_label(static_cast<std::size_t>(i)); };
    if (!v.allFinite())
      throw InputError(source, line_of(scan, i), item() + " has a NaN or infinite normal component");
    // Scale by the largest component first so that tiny and huge normals normalise exactly.
    const double largest = v.cwiseAbs().maxCoeff();  // all finite: maxCoeff sees every value
    if (largest == 0.0)
      throw InputError(source, line_of(scan, i), item() + " has a zero-length normal (0 0 0)");
    const Eigen::Vector3d scaled = v / largest;
    normals.col(i) = scaled / scaled.norm();
  }
  return normals;
}


PointCloud read_mesh_unguarded(std::string_view content, PointFileFormat format,
                               const ReadOptions& options, const std::string& source) {
  if (content.empty()) throw InputError(source, 0, "no points: the file is empty");
  ScanResult scan;
  switch (format) {
    case PointFileFormat::ply: scan = scan_ply(content, source); break;
    case PointFileFormat::obj: scan = scan_obj(content, source); break;
    case PointFileFormat::off: scan = scan_off(content, source); break;
    case PointFileFormat::stl: scan = scan_stl(content, source); break;
    case PointFileFormat::delimited_text:
      throw InputError(source, 0, "delimited text is not a mesh format");
  }

  PointCloud cloud;
  cloud.source = source;
  cloud.file_unit = options.unit;
  OpenMeshResult mesh;
  if (!scan.complete) {
    mesh = read_with_openmesh(content, format, scan, source);
    const auto read_count = static_cast<std::size_t>(mesh.points.cols());
    if (scan.vertex_count != 0 && read_count != scan.vertex_count)
      throw InputError(source, 0,
                       "OpenMesh read " + std::to_string(read_count) + " vertices but the " +
                           scan.kind + " holds " + std::to_string(scan.vertex_count) +
                           scan.openmesh_limits);
    if (read_count == 0)
      throw InputError(source, 0, "no points: the " + scan.kind + " has no vertices");
  }
  // Non-finite values first: they would otherwise show as a disagreement between the readers.
  cloud.points = scan.points ? std::move(*scan.points) : std::move(mesh.points);
  // One vectorised pass for the common case; the column loop only to name the vertex.
  if (!cloud.points.allFinite())
    for (Eigen::Index i = 0; i < cloud.points.cols(); ++i)
      if (!cloud.points.col(i).allFinite())
        throw InputError(source, line_of(scan, i),
                         scan.kind + " " + vertex_label(static_cast<std::size_t>(i)) +
                             " has a NaN or infinite coordinate");
  if (scan.points && !scan.complete)
    check_agreement(cloud.points, mesh.points, scan, "coordinate", source);

  // Vertex normals: the scan's doubles where it read them (PLY, ASCII OFF), otherwise
  // OpenMesh's (OBJ, where normals attach to vertices through the faces).
  if (scan.normals) {
    if (mesh.normals) {
      // The raw normals are compared after normalising (a bad normal is named first): a copy.
      cloud.vectors = unit_normals(*scan.normals, scan, source);
      check_agreement(*scan.normals, *mesh.normals, scan, "normal", source);
    } else {
      cloud.vectors = unit_normals(std::move(*scan.normals), scan, source);
    }
  } else if (scan.openmesh_normals_usable && mesh.normals) {
    cloud.vectors = unit_normals(std::move(*mesh.normals), scan, source);
  }
  if (options.unit != LengthUnit::millimetre) {
    cloud.points *= millimetres_per(options.unit);
    if (!cloud.points.allFinite())
      throw InputError(source, 0,
                       "a coordinate overflows when converted from " +
                           std::string(unit_name(options.unit)) + " to millimetres");
  }
  return cloud;
}

}  // namespace

PointCloud read_mesh_points(const std::filesystem::path& /*file*/, std::string_view content,
                            PointFileFormat format, const ReadOptions& options,
                            const std::string& source) {
  try {
    return read_mesh_unguarded(content, format, options, source);
  } catch (const std::bad_alloc&) {
    // Declared counts are bounded by the file's size before allocation, so this is a file
    // larger than the memory available, not a lying header; say so rather than a bare bad_alloc.
    throw InputError(source, 0,
                     "not enough memory to hold the points of this file (" +
                         std::to_string(content.size()) + " bytes)");
  }
}

}  // namespace cylzone::detail
