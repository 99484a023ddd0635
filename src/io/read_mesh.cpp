// Mesh and cloud files (PLY, OBJ, OFF, STL) through OpenMesh; the only file that includes it.
//
// OpenMesh 9 parses every vertex coordinate into single precision (its readers hand a Vec3f to
// the importer whatever the mesh's point type), which costs up to 30 nm at 1 m from the origin
// and silently drops the digits a CMM export carries. So each file goes through two readers:
//  1. a structure scan of our own on the bytes: header sanity (OpenMesh loops forever on a PLY
//     header cut before end_header), the declared vertex count, truncation, and for the formats
//     that can hold more than single precision (PLY of any encoding, OBJ, ASCII OFF, ASCII STL)
//     the vertex coordinates and normals in double precision;
//  2. OpenMesh, which reads the file as a whole (faces included) and reports failure.
// The two must agree: same vertex count, and each scanned coordinate within float rounding of
// OpenMesh's. The scan's doubles are returned where it has them; binary STL (float32 by
// definition) and binary OFF (float32 as OpenMesh reads it) come from OpenMesh alone.
// OpenMesh's property containers copy default-constructed (deliberately uninitialised) vectors,
// which g++ 12 flags inside OpenMesh's own headers.
#pragma GCC diagnostic push
#pragma GCC diagnostic ignored "-Wmaybe-uninitialized"
#include <OpenMesh/Core/IO/MeshIO.hh>
#include <OpenMesh/Core/Mesh/PolyMesh_ArrayKernelT.hh>
#include <OpenMesh/Core/System/omstream.hh>
#pragma GCC diagnostic pop

#include <Eigen/Core>
#include <algorithm>
#include <array>
#include <cctype>
#include <cfloat>
#include <charconv>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <map>
#include <mutex>
#include <optional>
#include <sstream>
#include <streambuf>
#include <string>
#include <vector>

#include "cylzone/core/errors.hpp"
#include "io/detail/read_mesh.hpp"
#include "io/detail/text_parsing.hpp"

namespace cylzone::detail {
namespace {

// ---------------------------------------------------------------- OpenMesh side

/// Double-precision points and normals (OpenMesh's default traits are single precision).
struct DoubleTraits : OpenMesh::DefaultTraits {
  using Point = OpenMesh::Vec3d;
  using Normal = OpenMesh::Vec3d;
};
using Mesh = OpenMesh::PolyMesh_ArrayKernelT<DoubleTraits>;

/// OpenMesh's log streams (omerr, omout, omlog) and some of its readers' state are process-wide;
/// reads through OpenMesh are serialised so the capture below sees only its own read's messages.
std::mutex& openmesh_mutex() {
  static std::mutex mutex;
  return mutex;
}

/// For its lifetime, everything OpenMesh logs goes to a local buffer instead of the terminal;
/// the library never prints. OpenMesh's three log streams (omerr, omout, omlog; see
/// OpenMesh/Core/System/mostream.hh) are std::ostreams whose own stream buffer forwards each
/// line to the standard streams connected to it. The capture swaps that buffer for its own for
/// the duration of a read and puts it back afterwards. (Disconnecting std::cerr and connecting a
/// buffer instead, as mostream's interface suggests, leaks: OpenMesh 9's disconnect() never frees
/// the connection it removes, which LeakSanitizer reports for every read.) Construct only while
/// holding openmesh_mutex().
class OpenMeshLogCapture {
 public:
  OpenMeshLogCapture() {
    flush();  // anything pending belongs to the terminal, not to this read
    err_ = omerr().rdbuf(text_.rdbuf());
    out_ = omout().rdbuf(text_.rdbuf());
    log_ = omlog().rdbuf(text_.rdbuf());
  }
  ~OpenMeshLogCapture() {
    omerr().rdbuf(err_);
    omout().rdbuf(out_);
    omlog().rdbuf(log_);
  }
  OpenMeshLogCapture(const OpenMeshLogCapture&) = delete;
  OpenMeshLogCapture& operator=(const OpenMeshLogCapture&) = delete;

  /// What OpenMesh said, on one line: lines joined by "; ", cut to a readable length.
  std::string one_line() const {
    std::string joined;
    std::istringstream lines(text_.str());
    for (std::string line; std::getline(lines, line);) {
      while (!line.empty() && is_blank(line.back())) line.pop_back();
      const auto start = line.find_first_not_of(" \t");
      if (start == std::string::npos) continue;
      if (!joined.empty()) joined += "; ";
      joined += line.substr(start);
    }
    if (joined.size() > 200) joined = joined.substr(0, 200) + "...";
    return joined;
  }

 private:
  static void flush() {
    omerr().flush();
    omout().flush();
    omlog().flush();
  }
  std::ostringstream text_;
  std::streambuf* err_ = nullptr;
  std::streambuf* out_ = nullptr;
  std::streambuf* log_ = nullptr;
};

struct OpenMeshResult {
  Eigen::Matrix3Xd points;
  std::optional<Eigen::Matrix3Xd> normals;  ///< raw vertex normals, when the file had them
};

/// Reads `file` with OpenMesh. PLY, OBJ and STL go through OpenMesh's stream interface with the
/// format named explicitly, so a forced format works whatever the extension (for STL the
/// encoding is passed in: the stream reader does not detect it). OFF goes through the file
/// interface, the only one that parses the OFF header before reading (the stream reader reuses
/// the header flags of the previous file read).
OpenMeshResult read_with_openmesh(const std::filesystem::path& file, PointFileFormat format,
                                  bool binary_stl, const std::string& kind,
                                  const std::string& openmesh_limits, const std::string& source) {
  std::lock_guard<std::mutex> lock(openmesh_mutex());
  OpenMeshLogCapture log;
  Mesh mesh;
  mesh.request_vertex_normals();
  OpenMesh::IO::Options options = OpenMesh::IO::Options::VertexNormal;
  bool ok = false;
  try {
    if (format == PointFileFormat::off) {
      ok = OpenMesh::IO::read_mesh(mesh, file.string(), options);
    } else {
      std::ifstream stream(file, std::ios::binary);
      if (!stream) throw InputError(source, 0, "cannot open the file for the " + kind + " reader");
      if (format == PointFileFormat::stl && binary_stl) options += OpenMesh::IO::Options::Binary;
      const char* extension = format == PointFileFormat::ply   ? ".ply"
                              : format == PointFileFormat::obj ? ".obj"
                                                               : ".stl";
      ok = OpenMesh::IO::read_mesh(mesh, stream, extension, options);
    }
  } catch (const InputError&) {
    throw;
  } catch (const std::exception& e) {
    throw InputError(source, 0, "OpenMesh failed reading it as " + kind + ": " + e.what());
  }
  if (!ok) {
    const std::string reason = log.one_line();
    throw InputError(source, 0,
                     "OpenMesh could not read it as " + kind + ": " +
                         (reason.empty() ? std::string("no reason given") : reason) +
                         openmesh_limits);
  }
  OpenMeshResult result;
  const auto n = static_cast<Eigen::Index>(mesh.n_vertices());
  result.points.resize(3, n);
  for (const auto vertex : mesh.vertices()) {
    const auto& p = mesh.point(vertex);
    result.points.col(vertex.idx()) = Eigen::Vector3d(p[0], p[1], p[2]);
  }
  // STL has facet normals only; OpenMesh still reports vertex normals (all zero) for it.
  if (options.vertex_has_normal() && format != PointFileFormat::stl) {
    Eigen::Matrix3Xd normals(3, n);
    for (const auto vertex : mesh.vertices()) {
      const auto& v = mesh.normal(vertex);
      normals.col(vertex.idx()) = Eigen::Vector3d(v[0], v[1], v[2]);
    }
    result.normals = std::move(normals);
  }
  return result;
}

// ---------------------------------------------------------------- structure scans

/// What a scan learned from the bytes.
struct ScanResult {
  std::size_t vertex_count = 0;             ///< declared (PLY, OFF) or counted (OBJ, STL: 0)
  std::optional<Eigen::Matrix3Xd> points;   ///< double-precision coordinates, where scanned
  std::optional<Eigen::Matrix3Xd> normals;  ///< double-precision vertex normals, where scanned
  std::vector<std::size_t> vertex_lines;    ///< line of each vertex in text formats, else empty
  bool binary_stl = false;
  std::string kind;                         ///< e.g. "binary little-endian PLY", for messages
  /// Added to a message when OpenMesh misreads a file the scan understood: the known limits of
  /// OpenMesh 9.0's readers, found by probing them, that this file runs into.
  std::string openmesh_limits;
  /// False when OpenMesh would leave some vertex normals unset (OBJ normals given only for some
  /// vertices): its normals are then not used.
  bool openmesh_normals_usable = true;
};

std::string vertex_label(std::size_t index) { return "vertex " + std::to_string(index + 1); }

/// Reads whitespace-separated tokens from text, counting lines.
class TokenReader {
 public:
  TokenReader(const char* begin, const char* end, std::size_t first_line)
      : pos_(begin), end_(end), line_(first_line) {}

  /// Next token, or an empty view at the end of the text.
  std::string_view next() {
    while (pos_ != end_ && (is_blank(*pos_) || *pos_ == '\n')) {
      if (*pos_ == '\n') ++line_;
      ++pos_;
    }
    const char* start = pos_;
    while (pos_ != end_ && !is_blank(*pos_) && *pos_ != '\n') ++pos_;
    token_line_ = line_;
    return {start, static_cast<std::size_t>(pos_ - start)};
  }
  std::size_t token_line() const { return token_line_; }

 private:
  const char* pos_;
  const char* end_;
  std::size_t line_;
  std::size_t token_line_ = 0;
};

/// Splits text into lines (LF or CRLF), with 1-based numbers.
class LineReader {
 public:
  LineReader(const char* begin, const char* end) : pos_(begin), end_(end) {}
  bool next(std::string_view& line) {
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
  std::size_t number() const { return number_; }
  const char* position() const { return pos_; }

 private:
  const char* pos_;
  const char* end_;
  std::size_t number_ = 0;
};

/// Fields of a line separated by blanks.
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
  if (ec != std::errc() || end != text.data() + text.size()) return std::nullopt;
  return value;
}

void require_text(std::string_view bytes, const std::string& kind, const std::string& source) {
  if (const auto offset = find_binary_byte(bytes))
    throw InputError(source, 0,
                     "looks like binary data; not " + kind + " text (" +
                         describe_byte(static_cast<unsigned char>(bytes[*offset]), *offset) + ")");
}

/// Number in a text mesh file; throws naming the line, the item ("vertex 3") and the value.
double text_number(std::string_view token, std::size_t line, const std::string& item,
                   const char* what, const std::string& kind, const std::string& source) {
  double value = 0.0;
  const NumberStatus status = parse_number(token.data(), token.data() + token.size(), value);
  if (status != NumberStatus::ok)
    throw InputError(source, line,
                     kind + " " + item + ": " + what + " " + describe_number_problem(status, token));
  return value;
}

// ---- PLY (format description: G. Turk, "The PLY polygon file format", 1994)

enum class PlyScalar { int8, uint8, int16, uint16, int32, uint32, float32, float64 };

std::optional<PlyScalar> ply_scalar(std::string_view name) {
  static const std::pair<const char*, PlyScalar> names[] = {
      {"char", PlyScalar::int8},      {"int8", PlyScalar::int8},
      {"uchar", PlyScalar::uint8},    {"uint8", PlyScalar::uint8},
      {"short", PlyScalar::int16},    {"int16", PlyScalar::int16},
      {"ushort", PlyScalar::uint16},  {"uint16", PlyScalar::uint16},
      {"int", PlyScalar::int32},      {"int32", PlyScalar::int32},
      {"uint", PlyScalar::uint32},    {"uint32", PlyScalar::uint32},
      {"float", PlyScalar::float32},  {"float32", PlyScalar::float32},
      {"double", PlyScalar::float64}, {"float64", PlyScalar::float64}};
  for (const auto& [text, scalar] : names)
    if (name == text) return scalar;
  return std::nullopt;
}

std::size_t ply_size(PlyScalar scalar) {
  switch (scalar) {
    case PlyScalar::int8:
    case PlyScalar::uint8: return 1;
    case PlyScalar::int16:
    case PlyScalar::uint16: return 2;
    case PlyScalar::int32:
    case PlyScalar::uint32:
    case PlyScalar::float32: return 4;
    case PlyScalar::float64: return 8;
  }
  return 0;
}

struct PlyProperty {
  std::string name;
  PlyScalar type = PlyScalar::float32;
  bool is_list = false;
  PlyScalar count_type = PlyScalar::uint8;
};

struct PlyElement {
  std::string name;
  std::size_t count = 0;
  std::vector<PlyProperty> properties;
};

enum class PlyEncoding { ascii, little_endian, big_endian };

struct PlyHeader {
  PlyEncoding encoding = PlyEncoding::ascii;
  std::vector<PlyElement> elements;
  std::size_t data_offset = 0;  ///< first byte after the end_header line
  std::size_t data_line = 0;    ///< line number of that byte (for ASCII data)
};

PlyHeader parse_ply_header(std::string_view bytes, const std::string& source) {
  LineReader lines(bytes.data(), bytes.data() + bytes.size());
  std::string_view line;
  if (!lines.next(line) || line != "ply")
    throw InputError(source, bytes.empty() ? 0 : 1,
                     "not a PLY file: it does not start with a line 'ply'");
  PlyHeader header;
  bool have_format = false;
  while (lines.next(line)) {
    const std::size_t number = lines.number();
    if (const auto offset = find_binary_byte(line, line.size()))
      throw InputError(source, number,
                       "PLY header holds binary data (" +
                           describe_byte(static_cast<unsigned char>(line[*offset]), *offset) +
                           " of the line): truncated header or not a PLY file");
    const std::vector<std::string_view> w = words(line);
    if (w.empty()) continue;
    const std::string_view keyword = w[0];
    if (keyword == "end_header") {
      if (!have_format) throw InputError(source, number, "PLY header has no 'format' line");
      header.data_offset = static_cast<std::size_t>(lines.position() - bytes.data());
      header.data_line = number + 1;
      return header;
    }
    if (keyword == "comment" || keyword == "obj_info") continue;
    if (keyword == "format") {
      if (w.size() != 3)
        throw InputError(source, number, "PLY 'format' line needs an encoding and a version");
      if (w[1] == "ascii") header.encoding = PlyEncoding::ascii;
      else if (w[1] == "binary_little_endian") header.encoding = PlyEncoding::little_endian;
      else if (w[1] == "binary_big_endian") header.encoding = PlyEncoding::big_endian;
      else
        throw InputError(source, number, "unknown PLY encoding " + quoted_excerpt(w[1]));
      have_format = true;
    } else if (keyword == "element") {
      const auto count = w.size() == 3 ? parse_count(w[2]) : std::nullopt;
      if (!count)
        throw InputError(source, number, "PLY 'element' line needs a name and a count");
      header.elements.push_back(PlyElement{std::string(w[1]), *count, {}});
    } else if (keyword == "property") {
      if (header.elements.empty())
        throw InputError(source, number, "PLY 'property' line before any 'element' line");
      PlyProperty property;
      const bool list = w.size() >= 2 && w[1] == "list";
      const std::size_t needed = list ? 5 : 3;
      if (w.size() != needed)
        throw InputError(source, number,
                         list ? "PLY list property needs a count type, an item type and a name"
                              : "PLY property needs a type and a name");
      const auto type = ply_scalar(w[needed - 2]);
      const auto count_type = list ? ply_scalar(w[2]) : std::optional<PlyScalar>(PlyScalar::uint8);
      if (!type || !count_type)
        throw InputError(source, number,
                         "unknown PLY property type " +
                             quoted_excerpt(!count_type ? w[2] : w[needed - 2]));
      property.is_list = list;
      property.type = *type;
      property.count_type = *count_type;
      property.name = std::string(w[needed - 1]);
      header.elements.back().properties.push_back(std::move(property));
    } else {
      throw InputError(source, number, "unknown PLY header keyword " + quoted_excerpt(keyword));
    }
  }
  throw InputError(source, lines.number(),
                   "PLY header has no 'end_header' line (truncated, or not a PLY file)");
}

/// Reads one binary scalar as a double; the caller checked the bounds.
double read_ply_scalar(const unsigned char* p, PlyScalar type, bool swap) {
  unsigned char b[8];
  const std::size_t size = ply_size(type);
  for (std::size_t i = 0; i < size; ++i) b[i] = swap ? p[size - 1 - i] : p[i];
  switch (type) {
    case PlyScalar::int8: { std::int8_t v; std::memcpy(&v, b, 1); return v; }
    case PlyScalar::uint8: { std::uint8_t v; std::memcpy(&v, b, 1); return v; }
    case PlyScalar::int16: { std::int16_t v; std::memcpy(&v, b, 2); return v; }
    case PlyScalar::uint16: { std::uint16_t v; std::memcpy(&v, b, 2); return v; }
    case PlyScalar::int32: { std::int32_t v; std::memcpy(&v, b, 4); return v; }
    case PlyScalar::uint32: { std::uint32_t v; std::memcpy(&v, b, 4); return v; }
    case PlyScalar::float32: { float v; std::memcpy(&v, b, 4); return v; }
    case PlyScalar::float64: { double v; std::memcpy(&v, b, 8); return v; }
  }
  return 0.0;
}

/// Which vertex properties give x y z and nx ny nz: indices into the element's properties.
struct PlyVertexLayout {
  std::size_t element = 0;
  std::array<int, 6> property_of_role = {-1, -1, -1, -1, -1, -1};
  bool has_normals = false;
};

PlyVertexLayout ply_vertex_layout(const PlyHeader& header, const std::string& source) {
  PlyVertexLayout layout;
  const auto vertex = std::find_if(header.elements.begin(), header.elements.end(),
                                   [](const PlyElement& e) { return e.name == "vertex"; });
  if (vertex == header.elements.end())
    throw InputError(source, 0, "PLY file has no 'vertex' element");
  layout.element = static_cast<std::size_t>(vertex - header.elements.begin());
  static const char* names[] = {"x", "y", "z", "nx", "ny", "nz"};
  for (std::size_t p = 0; p < vertex->properties.size(); ++p)
    for (int role = 0; role < 6; ++role)
      if (vertex->properties[p].name == names[role] && !vertex->properties[p].is_list)
        layout.property_of_role[static_cast<std::size_t>(role)] = static_cast<int>(p);
  for (int role = 0; role < 3; ++role)
    if (layout.property_of_role[static_cast<std::size_t>(role)] < 0)
      throw InputError(source, 0,
                       std::string("PLY vertex element has no property '") + names[role] + "'");
  layout.has_normals = layout.property_of_role[3] >= 0 && layout.property_of_role[4] >= 0 &&
                       layout.property_of_role[5] >= 0;
  return layout;
}

ScanResult scan_ply(std::string_view bytes, const std::string& source) {
  const PlyHeader header = parse_ply_header(bytes, source);
  const PlyVertexLayout layout = ply_vertex_layout(header, source);
  const PlyElement& vertex = header.elements[layout.element];
  ScanResult scan;
  scan.vertex_count = vertex.count;
  scan.kind = header.encoding == PlyEncoding::ascii           ? "ASCII PLY"
              : header.encoding == PlyEncoding::little_endian ? "binary little-endian PLY"
                                                              : "binary big-endian PLY";
  if (vertex.count == 0) throw InputError(source, 0, "no points: the PLY header declares 0 vertices");
  for (const PlyElement& element : header.elements)
    for (const PlyProperty& property : element.properties)
      if (property.is_list && element.name != "face")
        scan.openmesh_limits =
            " (OpenMesh's PLY reader supports list properties only in the face element)";

  const std::size_t remaining = bytes.size() - header.data_offset;
  // Bound the declared count by what the bytes can hold before allocating for it: a vertex takes
  // at least one byte per property in binary and two (digit and separator) in ASCII.
  const std::size_t min_bytes = vertex.properties.size() * (header.encoding == PlyEncoding::ascii ? 2 : 1);
  if (vertex.count > remaining / std::max<std::size_t>(min_bytes, 1) + 1)
    throw InputError(source, 0,
                     "PLY header declares " + std::to_string(vertex.count) + " vertices but only " +
                         std::to_string(remaining) + " bytes of data follow (truncated?)");

  Eigen::Matrix3Xd points(3, static_cast<Eigen::Index>(vertex.count));
  Eigen::Matrix3Xd normals;
  if (layout.has_normals) normals.resize(3, static_cast<Eigen::Index>(vertex.count));
  const int roles = layout.has_normals ? 6 : 3;
  std::vector<int> role_lookup(vertex.properties.size(), -1);
  for (int role = 0; role < roles; ++role)
    role_lookup[static_cast<std::size_t>(layout.property_of_role[static_cast<std::size_t>(role)])] = role;

  const auto store = [&](std::size_t index, int role, double value) {
    if (role < 3) points(role, static_cast<Eigen::Index>(index)) = value;
    else normals(role - 3, static_cast<Eigen::Index>(index)) = value;
  };

  if (header.encoding == PlyEncoding::ascii) {
    require_text(bytes.substr(header.data_offset), scan.kind, source);
    TokenReader tokens(bytes.data() + header.data_offset, bytes.data() + bytes.size(),
                       header.data_line);
    scan.vertex_lines.resize(vertex.count);
    const auto truncated = [&](std::size_t element, std::size_t index) {
      return InputError(source, tokens.token_line(),
                        "ASCII PLY data ends in " + header.elements[element].name + " " +
                            std::to_string(index + 1) + " of " +
                            std::to_string(header.elements[element].count) + " (truncated?)");
    };
    for (std::size_t e = 0; e <= layout.element; ++e) {
      const PlyElement& element = header.elements[e];
      for (std::size_t i = 0; i < element.count; ++i) {
        for (std::size_t p = 0; p < element.properties.size(); ++p) {
          const PlyProperty& property = element.properties[p];
          std::string_view token = tokens.next();
          if (token.empty()) throw truncated(e, i);
          if (e == layout.element && p == 0) scan.vertex_lines[i] = tokens.token_line();
          if (property.is_list) {
            const auto items = parse_count(token);
            if (!items)
              throw InputError(source, tokens.token_line(),
                               "ASCII PLY " + element.name + " " + std::to_string(i + 1) +
                                   ": list length " + quoted_excerpt(token) +
                                   " is not a count");
            for (std::size_t k = 0; k < *items; ++k)
              if (tokens.next().empty()) throw truncated(e, i);
          } else if (e == layout.element && role_lookup[p] >= 0) {
            store(i, role_lookup[p],
                  text_number(token, tokens.token_line(), vertex_label(i),
                              ("property '" + property.name + "'").c_str(), scan.kind, source));
          }
        }
      }
    }
  } else {
    const bool file_big = header.encoding == PlyEncoding::big_endian;
#if defined(__BYTE_ORDER__) && __BYTE_ORDER__ == __ORDER_BIG_ENDIAN__
    const bool swap = !file_big;
#else
    const bool swap = file_big;
#endif
    const auto* p = reinterpret_cast<const unsigned char*>(bytes.data()) + header.data_offset;
    const auto* const end = reinterpret_cast<const unsigned char*>(bytes.data()) + bytes.size();
    const auto truncated = [&](std::size_t element, std::size_t index) {
      return InputError(source, 0,
                        scan.kind + " data ends in " + header.elements[element].name + " " +
                            std::to_string(index + 1) + " of " +
                            std::to_string(header.elements[element].count) + " (truncated?)");
    };
    for (std::size_t e = 0; e <= layout.element; ++e) {
      const PlyElement& element = header.elements[e];
      for (std::size_t i = 0; i < element.count; ++i) {
        for (std::size_t k = 0; k < element.properties.size(); ++k) {
          const PlyProperty& property = element.properties[k];
          if (property.is_list) {
            const std::size_t count_size = ply_size(property.count_type);
            if (static_cast<std::size_t>(end - p) < count_size) throw truncated(e, i);
            const double items = read_ply_scalar(p, property.count_type, swap);
            p += count_size;
            if (items < 0 || items * static_cast<double>(ply_size(property.type)) >
                                 static_cast<double>(end - p))
              throw truncated(e, i);
            p += static_cast<std::size_t>(items) * ply_size(property.type);
          } else {
            const std::size_t size = ply_size(property.type);
            if (static_cast<std::size_t>(end - p) < size) throw truncated(e, i);
            if (e == layout.element && role_lookup[k] >= 0)
              store(i, role_lookup[k], read_ply_scalar(p, property.type, swap));
            p += size;
          }
        }
      }
    }
  }
  scan.points = std::move(points);
  if (layout.has_normals) scan.normals = std::move(normals);
  return scan;
}

// ---- OFF (format description: Geomview manual, "OFF files")

ScanResult scan_off(std::string_view bytes, const std::string& source) {
  LineReader lines(bytes.data(), bytes.data() + bytes.size());
  std::string_view line;
  // Comment and blank lines may precede the header keyword.
  const auto next_content = [&](std::string_view& out) {
    while (lines.next(out)) {
      const auto start = out.find_first_not_of(" \t\v\f");
      if (start == std::string_view::npos || out[start] == '#') continue;
      out.remove_prefix(start);
      return true;
    }
    return false;
  };
  if (!next_content(line)) throw InputError(source, 0, "no points: the OFF file is empty");
  if (const auto offset = find_binary_byte(line, line.size()))
    throw InputError(source, 0,
                     "looks like binary data; not OFF text (" +
                         describe_byte(static_cast<unsigned char>(line[*offset]), *offset) + ")");
  std::vector<std::string_view> w = words(line);
  std::string_view keyword = w[0];
  const std::size_t header_line = lines.number();
  // Optional prefixes, in this order: ST (texture coordinates), C (colours), N (normals); only
  // the normals matter here, the other values follow x y z (and the normal) on the line.
  if (keyword.substr(0, 2) == "ST") keyword.remove_prefix(2);
  if (!keyword.empty() && keyword[0] == 'C') keyword.remove_prefix(1);
  const bool normals = !keyword.empty() && keyword[0] == 'N';
  if (normals) keyword.remove_prefix(1);
  if (!keyword.empty() && (keyword[0] == '4' || keyword[0] == 'n'))
    throw InputError(source, header_line,
                     "4OFF and nOFF (homogeneous or n-dimensional vertices) are not supported");
  if (keyword != "OFF") {
    if (const auto offset = find_binary_byte(bytes))
      throw InputError(source, 0,
                       "looks like binary data; not OFF text (" +
                           describe_byte(static_cast<unsigned char>(bytes[*offset]), *offset) + ")");
    throw InputError(source, header_line,
                     "not an OFF file: it starts with " + quoted_excerpt(w[0]) +
                         ", expected OFF, NOFF, COFF, STOFF or similar");
  }
  ScanResult scan;
  std::size_t word = 1;
  if (w.size() > 1 && w[1] == "BINARY") {
    // Binary OFF: three int32 counts after the header line, then float32 vertices; OpenMesh
    // reads them in the machine's byte order.
    scan.kind = "binary OFF";
    const std::size_t offset = static_cast<std::size_t>(lines.position() - bytes.data());
    if (bytes.size() - offset < 12)
      throw InputError(source, 0, "binary OFF ends before its vertex count (truncated?)");
    std::int32_t counts[3];
    std::memcpy(counts, bytes.data() + offset, 12);
    if (counts[0] <= 0)
      throw InputError(source, 0, counts[0] == 0 ? "no points: the OFF header declares 0 vertices"
                                                 : "binary OFF declares a negative vertex count");
    scan.vertex_count = static_cast<std::size_t>(counts[0]);
    const std::size_t per_vertex = normals ? 24 : 12;
    if ((bytes.size() - offset - 12) / per_vertex < scan.vertex_count)
      throw InputError(source, 0,
                       "binary OFF declares " + std::to_string(scan.vertex_count) +
                           " vertices but the file is too short for them (truncated?)");
    return scan;
  }
  scan.kind = "ASCII OFF";
  scan.openmesh_limits =
      " (OpenMesh's OFF reader accepts no '#' comments and no counts on the OFF line)";
  require_text(bytes, scan.kind, source);
  // The counts "vertices faces edges" follow the keyword on its line or on the next content line.
  if (w.size() == word) {
    if (!next_content(line))
      throw InputError(source, header_line, "OFF file ends after its header (truncated?)");
    w = words(line);
    word = 0;
  }
  const auto vertices = w.size() > word ? parse_count(w[word]) : std::nullopt;
  if (!vertices)
    throw InputError(source, lines.number(),
                     "OFF counts line must start with the number of vertices");
  if (*vertices == 0) throw InputError(source, lines.number(), "no points: the OFF header declares 0 vertices");
  scan.vertex_count = *vertices;
  if (*vertices > bytes.size() / 6 + 1)
    throw InputError(source, lines.number(),
                     "OFF header declares " + std::to_string(*vertices) +
                         " vertices, more than the file can hold (truncated?)");
  Eigen::Matrix3Xd points(3, static_cast<Eigen::Index>(*vertices));
  Eigen::Matrix3Xd normal_matrix;
  if (normals) normal_matrix.resize(3, static_cast<Eigen::Index>(*vertices));
  scan.vertex_lines.resize(*vertices);
  static const char* names[] = {"x", "y", "z", "nx", "ny", "nz"};
  for (std::size_t i = 0; i < *vertices; ++i) {
    if (!next_content(line))
      throw InputError(source, lines.number(),
                       "OFF file ends after " + std::to_string(i) + " of " +
                           std::to_string(*vertices) + " vertices (truncated?)");
    w = words(line);
    const std::size_t needed = normals ? 6 : 3;
    if (w.size() < needed)
      throw InputError(source, lines.number(),
                       "OFF " + vertex_label(i) + " has " + std::to_string(w.size()) +
                           " values, needs " + (normals ? "x y z nx ny nz" : "x y z"));
    scan.vertex_lines[i] = lines.number();
    for (std::size_t r = 0; r < needed; ++r) {
      const double v =
          text_number(w[r], lines.number(), vertex_label(i), names[r], scan.kind, source);
      if (r < 3) points(static_cast<Eigen::Index>(r), static_cast<Eigen::Index>(i)) = v;
      else normal_matrix(static_cast<Eigen::Index>(r - 3), static_cast<Eigen::Index>(i)) = v;
    }
  }
  scan.points = std::move(points);
  if (normals) scan.normals = std::move(normal_matrix);
  return scan;
}

// ---- OBJ (format description: Wavefront "Object Files (.obj)", Appendix B1 of the Advanced
// Visualizer manual). Geometric vertices "v x y z [w]" are scanned for their coordinates; "vn"
// and "f" lines only for which vertices OpenMesh will give a normal (see below).

/// The vertex a face corner "v", "v/t", "v//n" or "v/t/n" refers to (1-based, or negative
/// counting back from the last vertex so far), and whether it names a normal.
std::optional<std::size_t> obj_corner_vertex(std::string_view corner, std::size_t defined,
                                             bool& has_normal) {
  const auto slash = corner.find('/');
  const std::string_view index = corner.substr(0, slash);
  has_normal = slash != std::string_view::npos &&
               corner.find('/', slash + 1) != std::string_view::npos &&
               corner.find('/', slash + 1) + 1 < corner.size();
  long value = 0;
  const auto [end, ec] = std::from_chars(index.data(), index.data() + index.size(), value);
  if (ec != std::errc() || end != index.data() + index.size() || value == 0) return std::nullopt;
  const long zero_based = value > 0 ? value - 1 : static_cast<long>(defined) + value;
  if (zero_based < 0 || zero_based >= static_cast<long>(defined)) return std::nullopt;
  return static_cast<std::size_t>(zero_based);
}

ScanResult scan_obj(std::string_view bytes, const std::string& source) {
  ScanResult scan;
  scan.kind = "OBJ";
  require_text(bytes, scan.kind, source);
  LineReader lines(bytes.data(), bytes.data() + bytes.size());
  std::vector<double> xyz;
  std::vector<bool> given_normal;  // per vertex: some face corner names a normal for it
  std::size_t normal_lines = 0;
  bool has_faces = false;
  std::string_view line;
  static const char* names[] = {"x", "y", "z"};
  while (lines.next(line)) {
    std::size_t i = 0;
    while (i < line.size() && is_blank(line[i])) ++i;
    std::size_t keyword_end = i;
    while (keyword_end < line.size() && !is_blank(line[keyword_end])) ++keyword_end;
    const std::string_view keyword = line.substr(i, keyword_end - i);
    if (keyword != "v" && keyword != "vn" && keyword != "f") continue;
    const auto comment = line.find('#', keyword_end);
    const std::vector<std::string_view> w = words(line.substr(
        keyword_end, comment == std::string_view::npos ? std::string_view::npos : comment - keyword_end));
    if (keyword == "vn") {
      ++normal_lines;
    } else if (keyword == "f") {
      has_faces = true;
      for (const std::string_view corner : w) {
        bool names_normal = false;
        if (const auto v = obj_corner_vertex(corner, given_normal.size(), names_normal))
          if (names_normal) given_normal[*v] = true;
      }
    } else {
      const std::size_t index = xyz.size() / 3;
      if (w.size() < 3)
        throw InputError(source, lines.number(),
                         "OBJ " + vertex_label(index) + " needs x y z, found " +
                             std::to_string(w.size()) + " values");
      for (int r = 0; r < 3; ++r)
        xyz.push_back(text_number(w[static_cast<std::size_t>(r)], lines.number(),
                                  vertex_label(index), names[r], scan.kind, source));
      scan.vertex_lines.push_back(lines.number());
      given_normal.push_back(false);
    }
  }
  scan.vertex_count = xyz.size() / 3;
  if (scan.vertex_count == 0) throw InputError(source, 0, "no points: the OBJ file has no 'v' lines");
  scan.points = Eigen::Map<const Eigen::Matrix3Xd>(xyz.data(), 3,
                                                   static_cast<Eigen::Index>(scan.vertex_count));
  // OpenMesh 9.0 (probed) gives a vertex the normal of a face corner naming one, or, in a file
  // without faces, the n-th "vn" to the n-th vertex when the counts are equal. Any other vertex
  // keeps an unset (indeterminate) normal, so the normals are used only when all are given.
  scan.openmesh_normals_usable =
      has_faces ? std::all_of(given_normal.begin(), given_normal.end(), [](bool b) { return b; })
                : normal_lines == scan.vertex_count;
  return scan;
}

// ---- STL: binary is an 80-byte header, a uint32 facet count and 50 bytes per facet; ASCII
// runs from "solid" to "endsolid".

/// The facet corners of an ASCII STL ("vertex x y z"), merged as OpenMesh merges them (equal
/// single-precision triples are one vertex, numbered in order of first appearance), each kept
/// in the double precision of its first appearance.
void scan_stl_vertices(std::string_view bytes, ScanResult& scan, const std::string& source) {
  TokenReader tokens(bytes.data(), bytes.data() + bytes.size(), 1);
  std::map<std::array<float, 3>, std::size_t> index_of;
  std::vector<double> xyz;
  static const char* names[] = {"x", "y", "z"};
  std::size_t corner = 0;
  for (std::string_view token = tokens.next(); !token.empty(); token = tokens.next()) {
    if (token != "vertex") continue;
    double p[3];
    for (int r = 0; r < 3; ++r) {
      const std::string_view value = tokens.next();
      p[r] = text_number(value, tokens.token_line(), "facet corner " + std::to_string(corner + 1),
                         names[r], "ASCII STL", source);
    }
    ++corner;
    const std::array<float, 3> key = {static_cast<float>(p[0]), static_cast<float>(p[1]),
                                      static_cast<float>(p[2])};
    if (index_of.emplace(key, xyz.size() / 3).second) {
      xyz.insert(xyz.end(), p, p + 3);
      scan.vertex_lines.push_back(tokens.token_line());
    }
  }
  scan.vertex_count = xyz.size() / 3;
  if (scan.vertex_count == 0)
    throw InputError(source, 0, "no points: the ASCII STL has no 'vertex' lines");
  scan.points = Eigen::Map<const Eigen::Matrix3Xd>(xyz.data(), 3,
                                                   static_cast<Eigen::Index>(scan.vertex_count));
}

ScanResult scan_stl(std::string_view bytes, const std::string& source) {
  ScanResult scan;
  std::uint32_t facets = 0;
  if (bytes.size() >= 84) {
    unsigned char b[4];
    std::memcpy(b, bytes.data() + 80, 4);  // little-endian by definition of the format
    facets = static_cast<std::uint32_t>(b[0]) | static_cast<std::uint32_t>(b[1]) << 8 |
             static_cast<std::uint32_t>(b[2]) << 16 | static_cast<std::uint32_t>(b[3]) << 24;
    if (84 + 50 * static_cast<std::uint64_t>(facets) == bytes.size()) {
      if (facets == 0) throw InputError(source, 0, "no points: the binary STL has 0 facets");
      scan.binary_stl = true;
      scan.kind = "binary STL";
      return scan;
    }
  }
  const auto start = bytes.find_first_not_of(" \t\r\n");
  const bool says_solid = start != std::string_view::npos && bytes.size() - start >= 5 &&
                          bytes.compare(start, 5, "solid") == 0;
  if (says_solid && !find_binary_byte(bytes)) {
    scan.kind = "ASCII STL";
    const auto last = bytes.find_last_not_of(" \t\r\n");
    const std::string_view tail = bytes.substr(0, last + 1).substr(last + 1 > 512 ? last + 1 - 512 : 0);
    const auto endsolid = tail.rfind("endsolid");
    if (endsolid == std::string_view::npos ||
        tail.substr(endsolid).find('\n') != std::string_view::npos)
      throw InputError(source, 0, "ASCII STL does not end with an 'endsolid' line (truncated?)");
    scan_stl_vertices(bytes, scan, source);
    return scan;
  }
  if (bytes.size() >= 84)
    throw InputError(source, 0,
                     "binary STL header declares " + std::to_string(facets) + " facets (" +
                         std::to_string(84 + 50 * static_cast<std::uint64_t>(facets)) +
                         " bytes) but the file has " + std::to_string(bytes.size()) +
                         " bytes (truncated, or not an STL file)");
  throw InputError(source, 0,
                   "not an STL file: shorter than a binary STL header and does not start with "
                   "'solid'");
}

// ---------------------------------------------------------------- agreement checks


/// A number for a message: 9 significant digits, enough to tell a float from its neighbours.
std::string shortest_text(double value) {
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%.9g", value);
  return buffer;
}

/// OpenMesh narrowed each value to float; the scanned double must round to within one float
/// step of it (decimal -> float and decimal -> double -> float differ by at most one step).
bool agrees_to_float(double scanned, double narrowed) {
  if (std::abs(scanned) > FLT_MAX) return true;  // OpenMesh holds inf there; the scan is exact
  return std::abs(scanned - narrowed) <= 2.0 * FLT_EPSILON * std::abs(scanned) + FLT_MIN;
}

void check_agreement(const Eigen::Matrix3Xd& scanned, const Eigen::Matrix3Xd& narrowed,
                     const ScanResult& scan, const char* what, const std::string& source) {
  for (Eigen::Index i = 0; i < scanned.cols(); ++i)
    for (int r = 0; r < 3; ++r)
      if (!agrees_to_float(scanned(r, i), narrowed(r, i))) {
        const std::size_t line =
            scan.vertex_lines.empty() ? 0 : scan.vertex_lines[static_cast<std::size_t>(i)];
        throw InputError(source, line,
                         scan.kind + " " + vertex_label(static_cast<std::size_t>(i)) + ": " +
                             what + " read as " + shortest_text(narrowed(r, i)) +
                             " by OpenMesh but " + shortest_text(scanned(r, i)) +
                             " by the structure scan" + scan.openmesh_limits);
      }
}

}  // namespace

PointCloud read_mesh_points(const std::filesystem::path& file, std::string_view content,
                            PointFileFormat format, const ReadOptions& options,
                            const std::string& source) {
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
  if (format == PointFileFormat::off) {
    std::string ext = file.extension().string();
    std::transform(ext.begin(), ext.end(), ext.begin(),
                   [](unsigned char c) { return static_cast<char>(std::tolower(c)); });
    if (ext != ".off")
      throw InputError(source, 0,
                       "OpenMesh reads OFF files only under a .off name; rename the file");
  }

  const OpenMeshResult mesh =
      read_with_openmesh(file, format, scan.binary_stl, scan.kind, scan.openmesh_limits, source);
  const auto read_count = static_cast<std::size_t>(mesh.points.cols());
  if (scan.vertex_count != 0 && read_count != scan.vertex_count)
    throw InputError(source, 0,
                     "OpenMesh read " + std::to_string(read_count) + " vertices but the " +
                         scan.kind + " holds " + std::to_string(scan.vertex_count) +
                         scan.openmesh_limits);
  if (read_count == 0) throw InputError(source, 0, "no points: the " + scan.kind + " has no vertices");

  PointCloud cloud;
  cloud.source = source;
  cloud.file_unit = options.unit;
  // Non-finite values first: they would otherwise show as a disagreement between the readers.
  cloud.points = scan.points ? *scan.points : mesh.points;
  for (Eigen::Index i = 0; i < cloud.points.cols(); ++i)
    if (!cloud.points.col(i).allFinite())
      throw InputError(source,
                       scan.vertex_lines.empty() ? 0 : scan.vertex_lines[static_cast<std::size_t>(i)],
                       scan.kind + " " + vertex_label(static_cast<std::size_t>(i)) +
                           " has a NaN or infinite coordinate");
  if (scan.points) check_agreement(cloud.points, mesh.points, scan, "coordinate", source);

  // Vertex normals: the scan's doubles where it read them (PLY, ASCII OFF), otherwise
  // OpenMesh's (OBJ, where normals attach to vertices through the faces).
  const bool explicit_normals = scan.normals.has_value();
  const std::optional<Eigen::Matrix3Xd> none;
  const std::optional<Eigen::Matrix3Xd>& normals =
      explicit_normals ? scan.normals : scan.openmesh_normals_usable ? mesh.normals : none;
  if (normals) {
    Eigen::Matrix3Xd unit(3, normals->cols());
    for (Eigen::Index i = 0; i < normals->cols(); ++i) {
      const Eigen::Vector3d v = normals->col(i);
      const double largest = v.cwiseAbs().maxCoeff();
      if (!(largest > 0.0) || !std::isfinite(largest))
        throw InputError(source,
                         scan.vertex_lines.empty() ? 0 : scan.vertex_lines[static_cast<std::size_t>(i)],
                         scan.kind + " " + vertex_label(static_cast<std::size_t>(i)) +
                             (v.allFinite() ? " has a zero-length normal"
                                            : " has a NaN or infinite normal"));
      const Eigen::Vector3d scaled = v / largest;
      unit.col(i) = scaled / scaled.norm();
    }
    if (explicit_normals && mesh.normals)
      check_agreement(*scan.normals, *mesh.normals, scan, "normal", source);
    cloud.vectors = std::move(unit);
  }
  if (options.unit != LengthUnit::millimetre) cloud.points *= millimetres_per(options.unit);
  return cloud;
}

}  // namespace cylzone::detail
