// OFF reader (format description: Geomview manual, "OFF files"), entirely our own: OpenMesh's
// OFF reader cannot read from memory (its stream entry point reuses the header flags of the
// previous file read) and misreads '#' comments. ASCII OFF keeps double precision; binary OFF
// holds float32 counts and values in the machine's byte order (as OpenMesh 9 reads it, which
// earlier versions of cylzone used). Every declared count is checked against the bytes that
// remain before anything is allocated, and the faces are walked and checked too (a vertex
// count, then that many indices of defined vertices), so a file is accepted only whole.
#include <cmath>
#include <cstdint>
#include <cstring>
#include <string>
#include <vector>

#include "cylzone/core/errors.hpp"
#include "io/detail/mesh_scan.hpp"
#include "io/detail/text_parsing.hpp"

namespace cylzone::detail {
namespace {

/// Content lines of an OFF file: blank lines and '#' comments (whole-line or trailing) skipped.
class OffLines {
 public:
  explicit OffLines(std::string_view bytes) : lines_(bytes.data(), bytes.data() + bytes.size()) {}
  bool next(std::string_view& out) {
    while (lines_.next(out)) {
      const auto hash = out.find('#');
      if (hash != std::string_view::npos) out = out.substr(0, hash);
      const auto start = out.find_first_not_of(" \t\v\f\r");
      if (start == std::string_view::npos) continue;
      out.remove_prefix(start);
      return true;
    }
    return false;
  }
  std::size_t number() const { return lines_.number(); }
  const char* position() const { return lines_.position(); }

 private:
  LineReader lines_;
};

std::int32_t read_int32(const char* p) {
  std::int32_t v;
  std::memcpy(&v, p, 4);
  return v;
}

float read_float32(const char* p) {
  float v;
  std::memcpy(&v, p, 4);
  return v;
}

ScanResult scan_binary_off(std::string_view bytes, std::size_t offset, bool normals,
                           bool extras, const std::string& source) {
  ScanResult scan;
  scan.kind = "binary OFF";
  scan.complete = true;
  if (extras)
    throw InputError(source, 1,
                     "binary OFF with colours or texture coordinates (C or ST prefix) is not "
                     "supported; only OFF BINARY and NOFF BINARY");
  if (bytes.size() - offset < 12)
    throw InputError(source, 0, "binary OFF ends before its vertex, face and edge counts (truncated?)");
  const std::int32_t vertices = read_int32(bytes.data() + offset);
  const std::int32_t faces = read_int32(bytes.data() + offset + 4);
  offset += 12;
  if (vertices <= 0)
    throw InputError(source, 0, vertices == 0 ? "no points: the OFF header declares 0 vertices"
                                              : "binary OFF declares a negative vertex count (" +
                                                    std::to_string(vertices) + ")");
  if (faces < 0)
    throw InputError(source, 0,
                     "binary OFF declares a negative face count (" + std::to_string(faces) + ")");
  const std::size_t per_vertex = normals ? 24 : 12;
  const std::size_t remaining = bytes.size() - offset;
  const auto n = static_cast<std::size_t>(vertices);
  // A face takes at least 8 bytes: its vertex count and its colour count.
  if (remaining / per_vertex < n)
    throw InputError(source, 0, count_exceeds_bytes("binary OFF", "vertices", n, remaining));
  if ((remaining - n * per_vertex) / 8 < static_cast<std::size_t>(faces))
    throw InputError(source, 0,
                     count_exceeds_bytes("binary OFF", "faces", static_cast<std::size_t>(faces),
                                         remaining - n * per_vertex));
  scan.vertex_count = n;
  Eigen::Matrix3Xd points(3, static_cast<Eigen::Index>(n));
  Eigen::Matrix3Xd normal_matrix(3, normals ? static_cast<Eigen::Index>(n) : 0);
  const char* p = bytes.data() + offset;
  for (std::size_t i = 0; i < n; ++i, p += per_vertex)
    for (int r = 0; r < 3; ++r) {
      points(r, static_cast<Eigen::Index>(i)) = read_float32(p + 4 * r);
      if (normals) normal_matrix(r, static_cast<Eigen::Index>(i)) = read_float32(p + 12 + 4 * r);
    }
  const char* const end = bytes.data() + bytes.size();
  for (std::int32_t f = 0; f < faces; ++f) {
    const auto truncated = [&] {
      return InputError(source, 0,
                        "binary OFF data ends in face " + std::to_string(f + 1) + " of " +
                            std::to_string(faces) + " (truncated?)");
    };
    if (end - p < 4) throw truncated();
    const std::int32_t corners = read_int32(p);
    p += 4;
    if (corners < 1 || static_cast<std::size_t>(corners) > static_cast<std::size_t>(end - p) / 4)
      throw corners < 1 ? InputError(source, 0,
                                     "binary OFF face " + std::to_string(f + 1) +
                                         " declares " + std::to_string(corners) + " corners")
                        : truncated();
    for (std::int32_t k = 0; k < corners; ++k, p += 4) {
      const std::int32_t index = read_int32(p);
      if (index < 0 || index >= vertices)
        throw InputError(source, 0,
                         "binary OFF face " + std::to_string(f + 1) + " names vertex index " +
                             std::to_string(index) + ", outside 0.." + std::to_string(vertices - 1));
    }
    if (end - p < 4) throw truncated();
    const std::int32_t colours = read_int32(p);
    p += 4;
    if (colours < 0 || colours > 4 || static_cast<std::size_t>(colours) * 4 > static_cast<std::size_t>(end - p))
      throw colours < 0 || colours > 4
          ? InputError(source, 0,
                       "binary OFF face " + std::to_string(f + 1) + " declares " +
                           std::to_string(colours) + " colour components (0 to 4 allowed)")
          : truncated();
    p += 4 * colours;
  }
  scan.points = std::move(points);
  if (normals) scan.normals = std::move(normal_matrix);
  return scan;
}

}  // namespace

ScanResult scan_off(std::string_view bytes, const std::string& source) {
  OffLines lines(bytes);
  std::string_view line;
  if (!lines.next(line)) throw InputError(source, 0, "no points: the OFF file is empty");
  if (const auto offset = find_binary_byte(line, line.size()))
    throw InputError(source, 0,
                     "looks like binary data; not OFF text (" +
                         describe_byte(static_cast<unsigned char>(line[*offset]), *offset) + ")");
  std::vector<std::string_view> w = words(line);
  std::string_view keyword = w[0];
  const std::size_t header_line = lines.number();
  // Optional prefixes, in this order: ST (texture coordinates), C (colours), N (normals); only
  // the normals matter here, the other values follow x y z (and the normal) on the line.
  bool extras = false;
  if (keyword.substr(0, 2) == "ST") keyword.remove_prefix(2), extras = true;
  if (!keyword.empty() && keyword[0] == 'C') keyword.remove_prefix(1), extras = true;
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
  if (w.size() > 1 && w[1] == "BINARY") {
    if (w.size() > 2)
      throw InputError(source, header_line, "binary OFF header line holds more than 'OFF BINARY'");
    return scan_binary_off(bytes, static_cast<std::size_t>(lines.position() - bytes.data()),
                           normals, extras, source);
  }
  ScanResult scan;
  scan.kind = "ASCII OFF";
  scan.complete = true;
  require_text(bytes, scan.kind, source);
  // The counts "vertices faces edges" follow the keyword on its line or on the next content line.
  std::size_t word = 1;
  if (w.size() == word) {
    if (!lines.next(line))
      throw InputError(source, header_line, "OFF file ends after its header (truncated?)");
    w = words(line);
    word = 0;
  }
  const std::size_t counts_line = lines.number();
  const auto vertices = w.size() > word ? parse_count(w[word]) : std::nullopt;
  if (!vertices)
    throw InputError(source, counts_line,
                     "OFF counts line must start with the number of vertices");
  const auto faces = w.size() > word + 1 ? parse_count(w[word + 1]) : std::optional<std::size_t>(0);
  if (!faces || (w.size() > word + 2 && !parse_count(w[word + 2])) || w.size() > word + 3)
    throw InputError(source, counts_line,
                     "OFF counts line must hold the numbers of vertices, faces and edges "
                     "(non-negative integers)");
  if (*vertices == 0) throw InputError(source, counts_line, "no points: the OFF header declares 0 vertices");
  scan.vertex_count = *vertices;
  // A vertex line takes at least 6 bytes ("0 0 0\n"), a face line at least 2 ("0\n").
  const std::size_t remaining = static_cast<std::size_t>(bytes.data() + bytes.size() - lines.position());
  if (*vertices > remaining / 6 + 1)
    throw InputError(source, counts_line, count_exceeds_bytes("OFF header", "vertices", *vertices, remaining));
  if (*faces > (remaining - std::min(remaining, (*vertices - 1) * 6)) / 2 + 1)
    throw InputError(source, counts_line, count_exceeds_bytes("OFF header", "faces", *faces, remaining));
  Eigen::Matrix3Xd points(3, static_cast<Eigen::Index>(*vertices));
  Eigen::Matrix3Xd normal_matrix;
  if (normals) normal_matrix.resize(3, static_cast<Eigen::Index>(*vertices));
  scan.vertex_lines.resize(*vertices);
  static const char* names[] = {"x", "y", "z", "nx", "ny", "nz"};
  for (std::size_t i = 0; i < *vertices; ++i) {
    if (!lines.next(line))
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
  for (std::size_t f = 0; f < *faces; ++f) {
    if (!lines.next(line))
      throw InputError(source, lines.number(),
                       "OFF file ends after " + std::to_string(f) + " of " +
                           std::to_string(*faces) + " faces (truncated?)");
    w = words(line);
    const auto corners = parse_count(w[0]);
    const std::string face = "OFF face " + std::to_string(f + 1);
    if (!corners || *corners == 0 || *corners > w.size() - 1)
      throw InputError(source, lines.number(),
                       face + " must start with its number of corners and list that many vertex "
                              "indices; found " + quoted_excerpt(line));
    for (std::size_t k = 1; k <= *corners; ++k) {
      const auto index = parse_count(w[k]);
      if (!index || *index >= *vertices)
        throw InputError(source, lines.number(),
                         face + ": vertex index " + quoted_excerpt(w[k]) + " is not one of 0.." +
                             std::to_string(*vertices - 1));
    }
  }
  scan.points = std::move(points);
  if (normals) scan.normals = std::move(normal_matrix);
  return scan;
}

}  // namespace cylzone::detail
