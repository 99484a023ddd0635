// OBJ structure scan (format description: Wavefront "Object Files (.obj)", Appendix B1 of the
// Advanced Visualizer manual). Geometric vertices "v x y z [w]" are scanned for their
// coordinates; "vn", "vt" and "f" lines are checked (numbers, and every face corner naming a
// vertex, texture vertex and normal defined before it). OpenMesh is given only those four kinds
// of line: any other statement (mtllib, call, ...) could make it open files named by the input.
#include <algorithm>
#include <charconv>
#include <string>
#include <vector>

#include "cylzone/core/errors.hpp"
#include "io/detail/mesh_scan.hpp"
#include "io/detail/text_parsing.hpp"

namespace cylzone::detail {
namespace {

/// Resolves one index of a face corner (1-based, or negative counting back from the last item
/// defined so far) against `defined` items; nullopt when it is not an integer or names none.
std::optional<std::size_t> obj_index(std::string_view text, std::size_t defined) {
  long long value = 0;
  const auto [end, ec] = std::from_chars(text.data(), text.data() + text.size(), value);
  if (text.empty() || ec != std::errc() || end != text.data() + text.size() || value == 0)
    return std::nullopt;
  const auto count = static_cast<long long>(defined);
  if (value > count || value < -count) return std::nullopt;
  return static_cast<std::size_t>(value > 0 ? value - 1 : count + value);
}

/// One OBJ line: its keyword and the text after it, a trailing '#' comment removed; `start` is
/// where the keyword begins. Only v, vn, vt and f lines matter here.
struct ObjLine {
  std::string_view keyword;
  std::string_view rest;
  std::size_t start = 0;
  bool relevant() const { return keyword == "v" || keyword == "vn" || keyword == "vt" || keyword == "f"; }
};

ObjLine split_obj_line(std::string_view line) {
  std::size_t i = 0;
  while (i < line.size() && is_blank(line[i])) ++i;
  std::size_t keyword_end = i;
  while (keyword_end < line.size() && !is_blank(line[keyword_end])) ++keyword_end;
  const auto comment = line.find('#', keyword_end);
  return {line.substr(i, keyword_end - i),
          line.substr(keyword_end, comment == std::string_view::npos ? std::string_view::npos
                                                                     : comment - keyword_end),
          i};
}

}  // namespace

ScanResult scan_obj(std::string_view bytes, const std::string& source) {
  ScanResult scan;
  scan.kind = "OBJ";
  require_text(bytes, scan.kind, source);
  LineReader lines(bytes.data(), bytes.data() + bytes.size());
  std::vector<double> xyz;
  std::vector<bool> given_normal;  // per vertex: some face corner names a normal for it
  std::size_t normal_lines = 0, texture_lines = 0;
  bool has_faces = false;
  std::string_view line;
  static const char* names[] = {"x", "y", "z"};
  while (lines.next(line)) {
    const ObjLine parts = split_obj_line(line);
    if (!parts.relevant()) continue;
    const std::string_view keyword = parts.keyword;
    const std::vector<std::string_view> w = words(parts.rest);
    const std::size_t number = lines.number();
    if (keyword == "vn" || keyword == "vt") {
      const bool normal = keyword == "vn";
      const std::size_t index = normal ? normal_lines++ : texture_lines++;
      const std::string item =
          (normal ? "normal " : "texture vertex ") + std::to_string(index + 1);
      if (w.size() < (normal ? 3u : 1u) || w.size() > 3)
        throw InputError(source, number,
                         "OBJ " + item + " needs " + (normal ? "i j k" : "u [v [w]]") +
                             ", found " + std::to_string(w.size()) + " values");
      for (std::size_t r = 0; r < w.size(); ++r)
        text_float_range_number(w[r], number, item, std::string(1, "ijkuvw"[r + (normal ? 0 : 3)]),
                                scan.kind, source);
    } else if (keyword == "f") {
      has_faces = true;
      if (w.size() < 3)
        throw InputError(source, number,
                         "OBJ face has " + std::to_string(w.size()) + " corners, needs at least 3");
      for (const std::string_view corner : w) {
        // "v", "v/t", "v//n" or "v/t/n"
        const auto first = corner.find('/');
        const auto second =
            first == std::string_view::npos ? std::string_view::npos : corner.find('/', first + 1);
        if (second != std::string_view::npos && corner.find('/', second + 1) != std::string_view::npos)
          throw InputError(source, number,
                           "OBJ face corner " + quoted_excerpt(corner) + " has more than three parts");
        const std::string_view v = corner.substr(0, first);
        const std::string_view t =
            first == std::string_view::npos ? std::string_view()
                                            : corner.substr(first + 1, second == std::string_view::npos
                                                                           ? std::string_view::npos
                                                                           : second - first - 1);
        const std::string_view n =
            second == std::string_view::npos ? std::string_view() : corner.substr(second + 1);
        const auto vertex = obj_index(v, given_normal.size());
        if (!vertex)
          throw InputError(source, number,
                           "OBJ face corner " + quoted_excerpt(corner) +
                               (v.empty() ? std::string(" names no vertex")
                                          : " names no vertex among the " +
                                                std::to_string(given_normal.size()) +
                                                " defined before it"));
        if (first != std::string_view::npos && !t.empty() && !obj_index(t, texture_lines))
          throw InputError(source, number,
                           "OBJ face corner " + quoted_excerpt(corner) +
                               " names no texture vertex among the " +
                               std::to_string(texture_lines) + " defined before it");
        if (second != std::string_view::npos && (n.empty() || !obj_index(n, normal_lines)))
          throw InputError(source, number,
                           "OBJ face corner " + quoted_excerpt(corner) +
                               " names no normal among the " + std::to_string(normal_lines) +
                               " defined before it");
        if (second != std::string_view::npos) given_normal[*vertex] = true;
      }
    } else {
      const std::size_t index = xyz.size() / 3;
      if (w.size() < 3)
        throw InputError(source, number,
                         "OBJ " + vertex_label(index) + " needs x y z, found " +
                             std::to_string(w.size()) + " values");
      for (int r = 0; r < 3; ++r)
        xyz.push_back(text_float_range_number(w[static_cast<std::size_t>(r)], number,
                                              vertex_label(index), names[r], scan.kind, source));
      scan.vertex_lines.push_back(number);
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

/// The lines of an OBJ file OpenMesh is given: v, vn, vt and f, each checked by scan_obj.
std::string obj_lines_for_openmesh(std::string_view bytes) {
  std::string kept;
  kept.reserve(bytes.size());
  LineReader lines(bytes.data(), bytes.data() + bytes.size());
  std::string_view line;
  while (lines.next(line)) {
    const ObjLine parts = split_obj_line(line);
    if (parts.relevant()) kept.append(line.substr(parts.start, parts.keyword.size() + parts.rest.size()));
    kept += '\n';  // an empty line for any other: OpenMesh's line numbers stay those of the file
  }
  return kept;
}

}  // namespace cylzone::detail
