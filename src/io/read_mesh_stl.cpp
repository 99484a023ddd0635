// STL structure scan (format description: 3D Systems, "StereoLithography Interface
// Specification", 1989). Binary STL is an 80-byte header, a little-endian uint32 facet count and
// 50 bytes per facet: the count must match the file's size exactly. ASCII STL runs from "solid"
// to "endsolid"; its facet corners are read in double precision.
#include <array>
#include <cstdint>
#include <cstring>
#include <map>
#include <string>
#include <vector>

#include "cylzone/core/errors.hpp"
#include "io/detail/mesh_scan.hpp"
#include "io/detail/text_parsing.hpp"

namespace cylzone::detail {
namespace {

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
      p[r] = text_float_range_number(value, tokens.token_line(), "facet corner " + std::to_string(corner + 1),
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

}  // namespace

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

}  // namespace cylzone::detail
