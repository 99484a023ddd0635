// PLY structure scan (format description: G. Turk, "The PLY polygon file format", 1994).
// The header grammar is checked strictly (format version 1.0, known keywords, whitelisted scalar
// types, integer list counts), every element's declared count is checked against the bytes that
// remain before anything is allocated, and the whole data section is walked with bounds checks,
// so OpenMesh only ever sees a well-formed file.
#include <algorithm>
#include <array>
#include <charconv>
#include <cfloat>
#include <cmath>
#include <cstdint>
#include <cstring>
#include <limits>
#include <string>
#include <type_traits>
#include <utility>
#include <vector>

#include "cylzone/core/errors.hpp"
#include "io/detail/mesh_scan.hpp"
#include "io/detail/populate_pages.hpp"
#include "io/detail/text_parsing.hpp"

namespace cylzone::detail {
namespace {

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

bool is_integer(PlyScalar scalar) {
  return scalar != PlyScalar::float32 && scalar != PlyScalar::float64;
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
  std::size_t line = 0;  ///< header line that declares it
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
      if (have_format) throw InputError(source, number, "PLY header has a second 'format' line");
      if (w.size() != 3)
        throw InputError(source, number, "PLY 'format' line needs an encoding and a version");
      if (w[1] == "ascii") header.encoding = PlyEncoding::ascii;
      else if (w[1] == "binary_little_endian") header.encoding = PlyEncoding::little_endian;
      else if (w[1] == "binary_big_endian") header.encoding = PlyEncoding::big_endian;
      else
        throw InputError(source, number, "unknown PLY encoding " + quoted_excerpt(w[1]));
      // The only version the format description defines is 1.0 (OpenMesh loops on a version
      // that is not a number).
      double version = 0.0;
      if (parse_number(w[2].data(), w[2].data() + w[2].size(), version) != NumberStatus::ok ||
          version != 1.0)
        throw InputError(source, number,
                         "PLY format version " + quoted_excerpt(w[2]) + " is not supported (only 1.0)");
      have_format = true;
    } else if (keyword == "element") {
      const auto count = w.size() == 3 ? parse_count(w[2]) : std::nullopt;
      if (!count)
        throw InputError(source, number,
                         "PLY 'element' line needs a name and a count (a non-negative integer)");
      header.elements.push_back(PlyElement{printable_excerpt(w[1]), *count, number, {}});
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
      if (!is_integer(*count_type))
        throw InputError(source, number,
                         "PLY list count type " + quoted_excerpt(w[2]) +
                             " is not an integer type");
      property.is_list = list;
      property.type = *type;
      property.count_type = *count_type;
      property.name = printable_excerpt(w[needed - 1]);
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

/// Smallest and largest value of an integer PLY type.
std::pair<long long, long long> integer_range(PlyScalar type) {
  switch (type) {
    case PlyScalar::int8: return {INT8_MIN, INT8_MAX};
    case PlyScalar::uint8: return {0, UINT8_MAX};
    case PlyScalar::int16: return {INT16_MIN, INT16_MAX};
    case PlyScalar::uint16: return {0, UINT16_MAX};
    case PlyScalar::int32: return {INT32_MIN, INT32_MAX};
    case PlyScalar::uint32: return {0, UINT32_MAX};
    default: return {0, 0};
  }
}

/// A value of an ASCII PLY property that is not read here must still be what OpenMesh expects
/// (it reads each with operator>>, so "1.5" in an integer property or a word would shift every
/// value after it): an integer for integer types, a finite number for float types.
void check_ascii_value(std::string_view token, PlyScalar type, std::size_t line,
                       const std::string& element, std::size_t index, const std::string& name,
                       const std::string& source) {
  const std::string item = "ASCII PLY " + element + " " + std::to_string(index + 1) +
                           ": property '" + name + "' ";
  if (is_integer(type)) {
    long long value = 0;
    const auto [end, ec] = std::from_chars(token.data(), token.data() + token.size(), value);
    if (ec != std::errc() || end != token.data() + token.size())
      throw InputError(source, line, item + "is not an integer: " + quoted_excerpt(token));
    const auto [low, high] = integer_range(type);
    if (value < low || value > high)
      throw InputError(source, line,
                       item + quoted_excerpt(token) + " is outside the range of its type (" +
                           std::to_string(low) + " to " + std::to_string(high) + ")");
    return;
  }
  double value = 0.0;
  const NumberStatus status = parse_number(token.data(), token.data() + token.size(), value);
  if (status != NumberStatus::ok)
    throw InputError(source, line, item + describe_number_problem(status, token));
  if (type == PlyScalar::float32 && std::abs(value) > FLT_MAX)
    throw InputError(source, line,
                     item + "is declared float but holds " + quoted_excerpt(token) +
                         ", beyond the range of a float");
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
  // Coordinates and normals of a measurement are real numbers; OpenMesh 9 cannot convert an
  // integer-typed one (it complains on the terminal and leaves the value unset).
  for (int role = 0; role < 6; ++role) {
    const int p = layout.property_of_role[static_cast<std::size_t>(role)];
    if (p >= 0 && is_integer(vertex->properties[static_cast<std::size_t>(p)].type))
      throw InputError(source, vertex->line,
                       std::string("PLY vertex property '") + names[role] +
                           "' has an integer type; coordinates and normals must be float or double");
  }
  const int normal_roles = (layout.property_of_role[3] >= 0) + (layout.property_of_role[4] >= 0) +
                           (layout.property_of_role[5] >= 0);
  if (normal_roles != 0 && normal_roles != 3) {
    std::string have, missing;
    for (int role = 3; role < 6; ++role) {
      std::string& list = layout.property_of_role[static_cast<std::size_t>(role)] >= 0 ? have : missing;
      list += (list.empty() ? "'" : " '") + std::string(names[role]) + "'";
    }
    throw InputError(source, vertex->line,
                     "PLY vertex element has normal component" +
                         std::string(normal_roles > 1 ? "s " : " ") + have + " but no " + missing +
                         ": a vertex normal needs nx, ny and nz");
  }
  layout.has_normals = normal_roles == 3;
  return layout;
}

/// A lower bound on the bytes one item of `element` takes: one per property in binary (a list
/// takes at least its count), two (a digit and a separator) in ASCII. Loose on purpose: it only
/// has to stop counts no file of this size can hold before anything is allocated or looped
/// over; the walk through the data then names the exact item where the bytes run out.
std::size_t min_item_bytes(const PlyElement& element, PlyEncoding encoding) {
  return element.properties.size() * (encoding == PlyEncoding::ascii ? 2 : 1);
}

/// Loads one binary value of type T stored in `swap`ped byte order (memcpy: the bytes need not
/// be aligned).
template <class T, bool Swap>
inline double load_binary(const unsigned char* p) {
  if constexpr (!Swap) {
    T v;
    std::memcpy(&v, p, sizeof v);
    return static_cast<double>(v);
  } else {
    static_assert(sizeof(T) == 4 || sizeof(T) == 8);
    using Bits = std::conditional_t<sizeof(T) == 8, std::uint64_t, std::uint32_t>;
    Bits bits;
    std::memcpy(&bits, p, sizeof bits);
    if constexpr (sizeof(T) == 8) bits = __builtin_bswap64(bits);
    else bits = __builtin_bswap32(bits);
    T v;
    std::memcpy(&v, &bits, sizeof v);
    return static_cast<double>(v);
  }
}

/// The vertex roles of a record of fixed size: byte offset of each used role inside the record.
struct FixedRecord {
  std::size_t stride = 0;
  int roles = 3;                 ///< 3 (x y z) or 6 (with nx ny nz)
  std::array<std::size_t, 6> offset{};
  std::array<PlyScalar, 6> type{};
};

/// Strided copy of every vertex's roles when they all have the type T: one pass over the
/// records, the role loop unrolled by the compiler.
template <class T, bool Swap, int Roles>
void copy_records(const unsigned char* data, std::size_t count, const FixedRecord& record,
                  double* points, double* normals) {
  std::array<std::size_t, Roles> offset;
  for (int r = 0; r < Roles; ++r) offset[static_cast<std::size_t>(r)] = record.offset[static_cast<std::size_t>(r)];
  const std::size_t stride = record.stride;
  for (std::size_t i = 0; i < count; ++i, data += stride) {
    for (int r = 0; r < 3; ++r) points[3 * i + static_cast<std::size_t>(r)] = load_binary<T, Swap>(data + offset[static_cast<std::size_t>(r)]);
    if constexpr (Roles == 6)
      for (int r = 0; r < 3; ++r)
        normals[3 * i + static_cast<std::size_t>(r)] = load_binary<T, Swap>(data + offset[static_cast<std::size_t>(r) + 3]);
  }
}

template <class T, bool Swap>
void copy_records_of(const unsigned char* data, std::size_t count, const FixedRecord& record,
                     double* points, double* normals) {
  if (record.roles == 6) copy_records<T, Swap, 6>(data, count, record, points, normals);
  else copy_records<T, Swap, 3>(data, count, record, points, normals);
}

/// Binary PLY whose elements hold scalar properties only (a cloud: without a list property
/// there are no faces). Every item of an element then has the same size, so each element's
/// extent is known from the header: the counts are checked against the bytes exactly (the
/// message names the item where the bytes run out, as the walk does) and the vertex roles are
/// copied straight from the buffer. A file of doubles x y z in the machine's byte order is one
/// memcpy.
void copy_fixed_binary(std::string_view bytes, const PlyHeader& header,
                       const PlyVertexLayout& layout, bool swap, const std::string& kind,
                       const std::string& source, Eigen::Matrix3Xd& points,
                       Eigen::Matrix3Xd& normals) {
  const auto* const begin = reinterpret_cast<const unsigned char*>(bytes.data());
  std::size_t at = header.data_offset;
  const unsigned char* vertex_data = nullptr;
  FixedRecord record;
  for (std::size_t e = 0; e < header.elements.size(); ++e) {
    const PlyElement& element = header.elements[e];
    std::size_t stride = 0;
    for (std::size_t k = 0; k < element.properties.size(); ++k) {
      if (e == layout.element)
        for (int role = 0; role < 6; ++role)
          if (layout.property_of_role[static_cast<std::size_t>(role)] == static_cast<int>(k)) {
            record.offset[static_cast<std::size_t>(role)] = stride;
            record.type[static_cast<std::size_t>(role)] = element.properties[k].type;
          }
      stride += ply_size(element.properties[k].type);
    }
    if (stride == 0) continue;  // no properties: the count bound above allowed only 0 items
    const std::size_t remaining = bytes.size() - at;
    if (element.count > remaining / stride) {
      const std::size_t index = remaining / stride;
      throw InputError(source, 0,
                       kind + " data ends in " + element.name + " " + std::to_string(index + 1) +
                           " of " + std::to_string(element.count) + " (truncated?)");
    }
    if (e == layout.element) {
      vertex_data = begin + at;
      record.stride = stride;
    }
    at += element.count * stride;
  }
  record.roles = layout.has_normals ? 6 : 3;
  const std::size_t count = static_cast<std::size_t>(points.cols());
  double* const p = points.data();
  double* const n = layout.has_normals ? normals.data() : nullptr;
  const bool all_double = std::all_of(record.type.begin(), record.type.begin() + record.roles,
                                      [](PlyScalar t) { return t == PlyScalar::float64; });
  const bool all_float = std::all_of(record.type.begin(), record.type.begin() + record.roles,
                                     [](PlyScalar t) { return t == PlyScalar::float32; });
  if (all_double && !swap && record.roles == 3 && record.stride == 24 && record.offset[0] == 0 &&
      record.offset[1] == 8 && record.offset[2] == 16) {
    std::memcpy(p, vertex_data, 24 * count);  // the layout of Matrix3Xd: x y z per column
  } else if (all_double) {
    swap ? copy_records_of<double, true>(vertex_data, count, record, p, n)
         : copy_records_of<double, false>(vertex_data, count, record, p, n);
  } else if (all_float) {
    swap ? copy_records_of<float, true>(vertex_data, count, record, p, n)
         : copy_records_of<float, false>(vertex_data, count, record, p, n);
  } else {  // mixed float and double roles: per value
    for (std::size_t i = 0; i < count; ++i) {
      const unsigned char* item = vertex_data + i * record.stride;
      for (int role = 0; role < record.roles; ++role) {
        const auto r = static_cast<std::size_t>(role);
        const double value = read_ply_scalar(item + record.offset[r], record.type[r], swap);
        (role < 3 ? p : n)[3 * i + r % 3] = value;
      }
    }
  }
}

}  // namespace

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
  bool has_list = false;
  for (const PlyElement& element : header.elements)
    for (const PlyProperty& property : element.properties) {
      has_list = has_list || property.is_list;
      if (property.is_list && element.name != "face")
        scan.openmesh_limits =
            " (OpenMesh's PLY reader supports list properties only in the face element)";
    }

  // Bound every declared count by what the bytes can hold before allocating or looping for it.
  // An element without properties takes no bytes, so nothing bounds its count: refused.
  const std::size_t remaining = bytes.size() - header.data_offset;
  std::size_t least = 0;  // bytes the declared elements need at the least
  for (const PlyElement& element : header.elements) {
    const std::size_t item = min_item_bytes(element, header.encoding);
    if (item == 0 && element.count > 0)
      throw InputError(source, element.line,
                       "PLY element '" + element.name + "' declares " +
                           std::to_string(element.count) + " items but no properties");
    const std::size_t available = remaining > least ? remaining - least : 0;
    // + 1: the last ASCII item needs no separator after it.
    if (item > 0 && element.count > (available + 1) / item)
      throw InputError(source, element.line,
                       count_exceeds_bytes("PLY header", element.name == "vertex" ? "vertices"
                                                         : "'" + element.name + "' items",
                                           element.count, remaining));
    least += item * element.count;
  }

  // Every vertex's coordinates (and normal) are written below: the pages in one call each, not
  // one fault each (populate_pages.hpp; no byte changes).
  Eigen::Matrix3Xd points(3, static_cast<Eigen::Index>(vertex.count));
  populate_for_write(points.data(), sizeof(double) * static_cast<std::size_t>(points.size()));
  Eigen::Matrix3Xd normals;
  if (layout.has_normals) {
    normals.resize(3, static_cast<Eigen::Index>(vertex.count));
    populate_for_write(normals.data(), sizeof(double) * static_cast<std::size_t>(normals.size()));
  }
  const int roles = layout.has_normals ? 6 : 3;
  std::vector<int> role_lookup(vertex.properties.size(), -1);
  for (int role = 0; role < roles; ++role)
    role_lookup[static_cast<std::size_t>(layout.property_of_role[static_cast<std::size_t>(role)])] = role;
  scan.openmesh_normals_usable = layout.has_normals;

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
    for (std::size_t e = 0; e < header.elements.size(); ++e) {
      const PlyElement& element = header.elements[e];
      for (std::size_t i = 0; i < element.count; ++i) {
        for (std::size_t p = 0; p < element.properties.size(); ++p) {
          const PlyProperty& property = element.properties[p];
          std::string_view token = tokens.next();
          if (token.empty()) throw truncated(e, i);
          if (e == layout.element && p == 0) scan.vertex_lines[i] = tokens.token_line();
          if (property.is_list) {
            const auto items = parse_count(token);
            if (!items || *items > static_cast<std::size_t>(integer_range(property.count_type).second))
              throw InputError(source, tokens.token_line(),
                               "ASCII PLY " + element.name + " " + std::to_string(i + 1) +
                                   ": list length " + quoted_excerpt(token) +
                                   " is not a count of its type");
            for (std::size_t k = 0; k < *items; ++k) {
              const std::string_view item = tokens.next();
              if (item.empty()) throw truncated(e, i);
              check_ascii_value(item, property.type, tokens.token_line(), element.name, i,
                                property.name, source);
            }
          } else if (e != layout.element || role_lookup[p] < 0) {
            check_ascii_value(token, property.type, tokens.token_line(), element.name, i,
                              property.name, source);
          } else {
            const double value =
                text_number(token, tokens.token_line(), vertex_label(i),
                            "property '" + property.name + "'", scan.kind, source);
            if (property.type == PlyScalar::float32 && std::abs(value) > FLT_MAX)
              throw InputError(source, tokens.token_line(),
                               "ASCII PLY " + vertex_label(i) + ": property '" + property.name +
                                   "' is declared float but holds " + quoted_excerpt(token) +
                                   ", beyond the range of a float");
            store(i, role_lookup[p], value);
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
    if (!has_list) {
      // A cloud: the scan reads it whole and exactly, OpenMesh (float only) would add nothing.
      copy_fixed_binary(bytes, header, layout, swap, scan.kind, source, points, normals);
      scan.complete = true;
      scan.points = std::move(points);
      if (layout.has_normals) scan.normals = std::move(normals);
      return scan;
    }
    const auto* p = reinterpret_cast<const unsigned char*>(bytes.data()) + header.data_offset;
    const auto* const end = reinterpret_cast<const unsigned char*>(bytes.data()) + bytes.size();
    const auto truncated = [&](std::size_t element, std::size_t index) {
      return InputError(source, 0,
                        scan.kind + " data ends in " + header.elements[element].name + " " +
                            std::to_string(index + 1) + " of " +
                            std::to_string(header.elements[element].count) + " (truncated?)");
    };
    for (std::size_t e = 0; e < header.elements.size(); ++e) {
      const PlyElement& element = header.elements[e];
      for (std::size_t i = 0; i < element.count; ++i) {
        for (std::size_t k = 0; k < element.properties.size(); ++k) {
          const PlyProperty& property = element.properties[k];
          if (property.is_list) {
            const std::size_t count_size = ply_size(property.count_type);
            if (static_cast<std::size_t>(end - p) < count_size) throw truncated(e, i);
            // An integer type (checked in the header), so the value is an exact integer.
            const double items = read_ply_scalar(p, property.count_type, swap);
            p += count_size;
            if (items < 0)
              throw InputError(source, 0,
                               scan.kind + " " + element.name + " " + std::to_string(i + 1) +
                                   ": negative list length " + std::to_string(static_cast<long long>(items)));
            const auto length = static_cast<std::size_t>(items);
            if (length > static_cast<std::size_t>(end - p) / ply_size(property.type))
              throw truncated(e, i);
            p += length * ply_size(property.type);
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

}  // namespace cylzone::detail
