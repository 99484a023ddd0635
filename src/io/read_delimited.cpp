// Delimited text point files (CSV, semicolon-, tab- or space-separated). The whole text is in
// memory; plain records are read in one pass straight from it, other lines walked with pointers
// (memchr for line ends), and numbers parsed by the exact fast path of short_decimal.hpp or else
// std::from_chars, so no per-line allocation happens and the locale never matters.
#include <Eigen/Core>
#include <algorithm>
#include <array>
#include <cctype>
#include <charconv>
#include <cmath>
#include <cstring>
#include <new>
#include <string>
#include <string_view>
#include <vector>

#include "cylzone/core/errors.hpp"
#include "cylzone/io/read_points.hpp"
#include "io/detail/delimited_text.hpp"
#include "io/detail/populate_pages.hpp"
#include "io/detail/short_decimal.hpp"
#include "io/detail/text_parsing.hpp"

namespace cylzone {
namespace {

using detail::NumberStatus;

constexpr int no_role = -1;
constexpr std::array<const char*, 6> role_names = {"x", "y", "z", "i", "j", "k"};

using detail::ContentLines;
using detail::detect_separator;
using detail::Line;
using detail::Separator;
using detail::separator_name;
using detail::split_fields;

std::string lower_case(std::string_view text) {
  std::string out(text);
  std::transform(out.begin(), out.end(), out.begin(),
                 [](unsigned char c) { return static_cast<char>(std::tolower(c)); });
  return out;
}

/// Role of a header name: 0..2 for x y z, 3..5 for the vector components, no_role otherwise.
int role_of(const std::string& name) {
  static const std::array<std::array<const char*, 3>, 6> accepted = {{
      {"x", nullptr, nullptr},
      {"y", nullptr, nullptr},
      {"z", nullptr, nullptr},
      {"i", "nx", "u"},
      {"j", "ny", "v"},
      {"k", "nz", "w"},
  }};
  for (int role = 0; role < 6; ++role)
    for (const char* alias : accepted[static_cast<std::size_t>(role)])
      if (alias && name == alias) return role;
  return no_role;
}

bool is_number(std::string_view field) {
  double value = 0.0;
  return !field.empty() && detail::parse_number(field.data(), field.data() + field.size(),
                                                value) != NumberStatus::not_a_number;
}

/// Numbers and empty fields: a first line of these is data (an empty field is reported there).
bool is_number_or_empty(std::string_view field) { return field.empty() || is_number(field); }

/// Column layout: which field index holds x, y, z (and i, j, k when present).
struct Columns {
  std::array<int, 6> field_of_role = {no_role, no_role, no_role, no_role, no_role, no_role};
  std::vector<std::string> names;  ///< name of each field for messages
  std::size_t field_count = 0;
  bool has_vectors = false;
  bool from_header = false;
  std::size_t defining_line = 0;  ///< the header line, or the first data line
};

Columns columns_from_header(const std::vector<std::string_view>& fields, const Line& line,
                            const std::string& source) {
  Columns columns;
  columns.from_header = true;
  columns.field_count = fields.size();
  columns.defining_line = line.number;
  for (std::size_t f = 0; f < fields.size(); ++f) {
    std::string name = lower_case(fields[f]);
    const int role = role_of(name);
    if (role != no_role) {
      auto& slot = columns.field_of_role[static_cast<std::size_t>(role)];
      if (slot != no_role)
        throw InputError(source, line.number,
                         "header columns " + std::to_string(slot + 1) + " (" +
                             detail::quoted_excerpt(columns.names[static_cast<std::size_t>(slot)]) +
                             ") and " + std::to_string(f + 1) + " (" + detail::quoted_excerpt(name) +
                             ") both give " +
                             role_names[static_cast<std::size_t>(role)]);
      slot = static_cast<int>(f);
    }
    columns.names.push_back(std::move(name));
  }
  for (int role = 0; role < 3; ++role) {
    if (columns.field_of_role[static_cast<std::size_t>(role)] != no_role) continue;
    // A first line that is partly numeric is more likely bad data than a header: name the
    // field that failed to parse rather than a missing column.
    const auto bad = std::find_if_not(fields.begin(), fields.end(), is_number);
    if (bad == fields.end())
      throw InputError(source, line.number,
                       "the first line holds " + std::to_string(fields.size()) +
                           " number(s) but is split with a different separator than the data "
                           "lines, so it is neither a header nor data (it has no column '" +
                           role_names[static_cast<std::size_t>(role)] + "')");
    if (std::any_of(fields.begin(), fields.end(), is_number)) {
      throw InputError(source, line.number,
                       "field " + std::to_string(bad - fields.begin() + 1) + " " +
                           detail::describe_number_problem(NumberStatus::not_a_number, *bad) +
                           " (the line is not a header either: it has no column '" +
                           role_names[static_cast<std::size_t>(role)] + "')");
    }
    std::string found;
    for (const std::string& name : columns.names) {
      if (found.size() > 200) {
        found += ", ...";
        break;
      }
      found += (found.empty() ? "" : ", ") + detail::quoted_excerpt(name, 20);
    }
    throw InputError(source, line.number,
                     std::string("header has no column '") +
                         role_names[static_cast<std::size_t>(role)] +
                         "' (x, y and z are required; found: " + found + ")");
  }
  int vector_columns = 0;
  for (int role = 3; role < 6; ++role)
    vector_columns += columns.field_of_role[static_cast<std::size_t>(role)] != no_role;
  if (vector_columns != 0 && vector_columns != 3) {
    for (int role = 3; role < 6; ++role)
      if (columns.field_of_role[static_cast<std::size_t>(role)] == no_role)
        throw InputError(source, line.number,
                         std::string("header has vector columns but no '") +
                             role_names[static_cast<std::size_t>(role)] +
                             "' (a vector needs i, j and k, or nx, ny and nz)");
  }
  columns.has_vectors = vector_columns == 3;
  return columns;
}

Columns columns_without_header(std::size_t field_count, const Line& line,
                               const std::string& source) {
  if (field_count != 3 && field_count != 6)
    throw InputError(source, line.number,
                     "found " + std::to_string(field_count) +
                         " fields; without a header line each line needs 3 (x y z) or 6 "
                         "(x y z i j k)");
  Columns columns;
  columns.field_count = field_count;
  columns.defining_line = line.number;
  columns.has_vectors = field_count == 6;
  for (std::size_t role = 0; role < field_count; ++role) {
    columns.field_of_role[role] = static_cast<int>(role);
    columns.names.emplace_back(role_names[role]);
  }
  return columns;
}

std::size_t count_lines(const char* begin, const char* end) {
  return detail::count_line_feeds(begin, end) + 1;
}

/// The common case of a data line, read in one pass straight from the text at `p` (the start of
/// a raw line), without first finding its end or splitting it: every used field a plain number
/// as std::from_chars reads it (and finite), fields separated as the file's separator says, the
/// line ended by LF (or the end of the text) after optional blanks. Returns the start of the next
/// line, or nullptr on anything else (a comment, a blank or empty line, a quoted field, a bad
/// field, a wrong field count); the caller then takes the line through ContentLines and
/// parse_fields(), which gives the same values wherever both accept a line and the precise
/// message where it does not. Only what ContentLines would strip anyway (leading and trailing
/// blanks, CR before LF) is skipped here, so both see the same fields. Numbers go through the
/// exact fast path of short_decimal.hpp first, then std::from_chars (the same bits).
const char* parse_plain_record(const char* p, const char* const end, Separator separator,
                               const std::vector<int>& role_of_field, double* values) {
  const bool blanks = separator == Separator::whitespace;
  // With blanks as separator no character is the mark; '\n' ends the line before any mark.
  const char mark = separator == Separator::comma       ? ','
                    : separator == Separator::semicolon ? ';'
                    : separator == Separator::tab       ? '\t'
                                                        : '\n';
  const auto skip_blanks = [&p, end, mark] {
    // Every blank is a control character or space: one compare passes digits and signs.
    while (p != end && static_cast<unsigned char>(*p) <= ' ' && detail::is_blank(*p) && *p != mark)
      ++p;
  };
  skip_blanks();
  const std::size_t count = role_of_field.size();
  for (std::size_t f = 0; f < count; ++f) {
    if (f > 0) {
      if (blanks) {
        if (p == end || !detail::is_blank(*p)) return nullptr;
      } else if (p != end && *p == mark) {  // the usual case: the mark right after the number
        ++p;
      } else {
        skip_blanks();
        if (p == end || *p != mark) return nullptr;
        ++p;
      }
      skip_blanks();
    }
    const int role = role_of_field[f];
    if (role >= 0) {
      // A number never holds '\n' or '#', so reading up to the end of the text stays in the line.
      if (const char* stop = detail::parse_short_decimal(p, end, values[role])) {
        p = stop;
        continue;
      }
      double value = 0.0;
      const auto [stop, ec] = std::from_chars(p, end, value);
      if (ec != std::errc() || !std::isfinite(value)) return nullptr;
      values[role] = value;
      p = stop;
    } else {
      // An ignored column: its text up to the separator; a comment or the line end inside it is
      // left to the content-line path.
      while (p != end && *p != '\n' && *p != '#' && (blanks ? !detail::is_blank(*p) : *p != mark))
        ++p;
    }
  }
  skip_blanks();
  if (p == end) return end;
  return *p == '\n' ? p + 1 : nullptr;
}

/// Any data line: split into fields, checked against the column layout and parsed with
/// detail::parse_number; throws the line's first problem.
void parse_fields(const std::vector<std::string_view>& fields, const Line& line,
                  Separator separator, const Columns& columns, std::size_t header_line,
                  const std::string& source, double* values) {
  if (fields.size() != columns.field_count) {
    const std::string expected = columns.from_header
                                     ? "as in the header on line " + std::to_string(header_line)
                                     : "as on line " + std::to_string(columns.defining_line);
    throw InputError(source, line.number,
                     "found " + std::to_string(fields.size()) + " field" +
                         (fields.size() == 1 ? "" : "s") + ", expected " +
                         std::to_string(columns.field_count) + " " + expected +
                         " (fields separated by " + separator_name(separator) + ")");
  }
  const int used_roles = columns.has_vectors ? 6 : 3;
  for (int role = 0; role < used_roles; ++role) {
    const auto f = static_cast<std::size_t>(columns.field_of_role[static_cast<std::size_t>(role)]);
    const std::string_view field = fields[f];
    const NumberStatus status =
        field.empty() ? NumberStatus::not_a_number
                      : detail::parse_number(field.data(), field.data() + field.size(), values[role]);
    if (status != NumberStatus::ok) {
      std::string problem = "field " + std::to_string(f + 1) + " (" + columns.names[f] + ") " +
                            detail::describe_number_problem(status, field);
      if (separator == Separator::semicolon && field.find(',') != std::string_view::npos)
        problem += "; decimal commas are not supported, write 1.5 rather than 1,5";
      throw InputError(source, line.number, problem);
    }
  }
}


PointCloud parse_delimited_unguarded(std::string_view text, const std::string& source,
                                     const ReadOptions& options) {
  // UTF-16 would pass as "binary" below; name it, since spreadsheet tools produce it.
  if (text.size() >= 2 && ((static_cast<unsigned char>(text[0]) == 0xff &&
                            static_cast<unsigned char>(text[1]) == 0xfe) ||
                           (static_cast<unsigned char>(text[0]) == 0xfe &&
                            static_cast<unsigned char>(text[1]) == 0xff)))
    throw InputError(source, 0, "text is UTF-16 encoded; save it as UTF-8 or ASCII");
  if (text.size() >= 3 && text.compare(0, 3, "\xEF\xBB\xBF") == 0) text.remove_prefix(3);
  if (const auto offset = detail::find_binary_byte(text))
    throw InputError(source, 0,
                     "looks like binary data; expected delimited text with x y z [i j k] per "
                     "line (" +
                         detail::describe_byte(static_cast<unsigned char>(text[*offset]), *offset) +
                         "; mesh files need a .ply, .obj, .off or .stl extension)");

  const char* const begin = text.data();
  const char* const end = begin + text.size();
  ContentLines lines(begin, end);
  Line line;
  if (!lines.next(line)) {
    const bool blank = std::all_of(begin, end, [](char c) { return detail::is_blank(c) || c == '\n'; });
    throw InputError(source, 0,
                     blank ? "no points: the file is empty"
                           : "no points: the file has only comments and blank lines");
  }

  // The separator is decided on the first data line (numbers never hold blanks, header names
  // may); the first content line is split once beforehand only to tell header from data.
  Separator separator = detect_separator(line);
  std::vector<std::string_view> fields;
  fields.reserve(16);
  split_fields(line, separator, fields);
  Columns columns;
  std::size_t header_line = 0;
  if (std::all_of(fields.begin(), fields.end(), is_number_or_empty)) {
    columns = columns_without_header(fields.size(), line, source);
  } else {
    const Line header = line;
    header_line = header.number;
    if (!lines.next(line)) {
      columns_from_header(fields, header, source);  // a bad header is the first problem to name
      throw InputError(source, 0,
                       "no points: header on line " + std::to_string(header_line) +
                           " but no data lines");
    }
    separator = detect_separator(line);
    split_fields(header, separator, fields);
    columns = columns_from_header(fields, header, source);
  }

  // Upper bound on the number of points: the number of lines from the first data line on.
  const std::size_t capacity = count_lines(line.begin, end);
  // Filled line by line below (all but the lines that hold no record): the pages in one call
  // each, not one fault each (io/detail/populate_pages.hpp; no byte changes).
  Eigen::Matrix3Xd points(3, static_cast<Eigen::Index>(capacity));
  detail::populate_for_write(points.data(), sizeof(double) * static_cast<std::size_t>(points.size()));
  Eigen::Matrix3Xd vectors;
  if (columns.has_vectors) {
    vectors.resize(3, static_cast<Eigen::Index>(capacity));
    detail::populate_for_write(vectors.data(), sizeof(double) * static_cast<std::size_t>(vectors.size()));
  }
  const double scale = millimetres_per(options.unit);
  const int used_roles = columns.has_vectors ? 6 : 3;

  // Role of each field (-1: ignored column), for the one-pass parse of plain lines.
  std::vector<int> role_of_field(columns.field_count, no_role);
  for (int role = 0; role < used_roles; ++role)
    role_of_field[static_cast<std::size_t>(columns.field_of_role[static_cast<std::size_t>(role)])] = role;

  std::vector<std::size_t> point_lines;  // file line of each point, for reports
  point_lines.reserve(capacity);
  detail::populate_for_write(point_lines.data(), sizeof(std::size_t) * capacity);
  Eigen::Index n = 0;
  // `line` is the first data line. Each content line that is not a plain record goes through
  // split_fields() and parse_fields(); the plain records after it are read straight from the
  // text, in file order, so the first bad line is still the one reported.
  do {
    double values[6];
    split_fields(line, separator, fields);
    parse_fields(fields, line, separator, columns, header_line, source, values);
    std::size_t line_number = line.number;
    for (;;) {
      for (int r = 0; r < 3; ++r) {
        const double mm = values[r] * scale;
        if (!std::isfinite(mm))
          throw InputError(source, line_number,
                           "field " + std::to_string(columns.field_of_role[static_cast<std::size_t>(r)] + 1) +
                               " is out of the range of a double after conversion to mm");
        points(r, n) = mm;
      }
      if (columns.has_vectors) {
        // Scale by the largest component first so neither overflow nor underflow can spoil the
        // norm of a vector written with huge or tiny components.
        const double largest =
            std::max({std::abs(values[3]), std::abs(values[4]), std::abs(values[5])});
        if (largest == 0.0)
          throw InputError(source, line_number, "vector (i j k) has zero length");
        const Eigen::Vector3d v = Eigen::Vector3d(values[3], values[4], values[5]) / largest;
        vectors.col(n) = v / v.norm();
      }
      point_lines.push_back(line_number);
      ++n;
      const char* next = parse_plain_record(lines.position(), end, separator, role_of_field, values);
      if (!next) break;
      line_number = lines.skip_line(next);
    }
  } while (lines.next(line));

  PointCloud cloud;
  points.conservativeResize(3, n);
  cloud.points = std::move(points);
  if (columns.has_vectors) {
    vectors.conservativeResize(3, n);
    cloud.vectors = std::move(vectors);
  }
  cloud.source = source;
  cloud.file_unit = options.unit;
  cloud.lines = std::move(point_lines);
  return cloud;
}

}  // namespace

PointCloud parse_delimited_points(std::string_view text, const std::string& source,
                                  const ReadOptions& options) {
  try {
    return parse_delimited_unguarded(text, source, options);
  } catch (const std::bad_alloc&) {
    // The cloud takes about as much memory as the text; say so rather than a bare bad_alloc.
    throw InputError(source, 0,
                     "not enough memory to hold the points of this file (" +
                         std::to_string(text.size()) + " bytes of text)");
  }
}

}  // namespace cylzone
