// Reading another system's summary (audit/summary.hpp): delimited text with a header row, the
// columns found by header name through the plan's or the command line's mapping. Lines and
// fields are split by the same helpers as the point reader (io/detail/delimited_text.hpp).
#include "cylzone/audit/summary.hpp"

#include <algorithm>
#include <array>
#include <cctype>
#include <cmath>
#include <string>
#include <utility>

#include "cylzone/core/errors.hpp"
#include "cylzone/io/load.hpp"
#include "io/detail/delimited_text.hpp"
#include "io/detail/file_digest.hpp"
#include "io/detail/text_parsing.hpp"

namespace cylzone {
namespace {

using detail::NumberStatus;

std::string lowered(std::string_view text) {
  std::string out(text);
  for (char& c : out) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return out;
}

/// Verdict words, compared without regard to case or surrounding blanks. Words of our own
/// choosing plus the plain English of the trade; anything else is an error rather than a guess.
/// Well-formed UTF-8 (RFC 3629: no overlong forms, no surrogates, at most U+10FFFF). An id is
/// printed in every report and written into JSON, which must be UTF-8 text.
bool valid_utf8(std::string_view text) {
  for (std::size_t i = 0; i < text.size();) {
    const auto c = static_cast<unsigned char>(text[i]);
    std::size_t n = 0;
    unsigned long cp = 0;
    if (c < 0x80) {
      ++i;
      continue;
    } else if (c >= 0xC2 && c <= 0xDF) {
      n = 1, cp = c & 0x1F;
    } else if (c >= 0xE0 && c <= 0xEF) {
      n = 2, cp = c & 0x0F;
    } else if (c >= 0xF0 && c <= 0xF4) {
      n = 3, cp = c & 0x07;
    } else {
      return false;
    }
    for (std::size_t k = 1; k <= n; ++k) {
      if (i + k >= text.size()) return false;
      const auto d = static_cast<unsigned char>(text[i + k]);
      if ((d & 0xC0) != 0x80) return false;
      cp = (cp << 6) | (d & 0x3F);
    }
    if ((n == 2 && cp < 0x800) || (n == 3 && cp < 0x10000) || cp > 0x10FFFF ||
        (cp >= 0xD800 && cp <= 0xDFFF))
      return false;
    i += n + 1;
  }
  return true;
}

std::optional<bool> verdict_word(std::string_view text) {
  static const std::array<const char*, 10> yes = {"pass",   "passed",   "ok", "conforms", "conform",
                                                  "accept", "accepted", "in", "good",     "yes"};
  static const std::array<const char*, 13> no = {"fail",
                                                 "failed",
                                                 "nok",
                                                 "not ok",
                                                 "does not conform",
                                                 "not conforming",
                                                 "nonconforming",
                                                 "reject",
                                                 "rejected",
                                                 "out",
                                                 "bad",
                                                 "no",
                                                 "nc"};
  const std::string word = lowered(text);
  for (const char* w : yes)
    if (word == w) return true;
  for (const char* w : no)
    if (word == w) return false;
  return std::nullopt;
}

constexpr std::array<SummaryField, 5> kFirstSet = {
    SummaryField::dx, SummaryField::dy, SummaryField::x, SummaryField::y, SummaryField::z};
constexpr std::array<SummaryField, 5> kSecondSet = {
    SummaryField::dx2, SummaryField::dy2, SummaryField::x2, SummaryField::y2, SummaryField::z2};

class SummaryParser {
 public:
  SummaryParser(const std::string& source, const SummaryReadOptions& options)
      : source_(source), options_(options) {
    unit_ = options.mapping.units.value_or(options.default_unit);
    mm_ = millimetres_per(unit_);
  }

  SummaryTable parse(std::string_view text) {
    if (text.size() >= 3 && text.compare(0, 3, "\xEF\xBB\xBF") == 0) text.remove_prefix(3);
    if (const auto offset = detail::find_binary_byte(text))
      fail(0, "looks like binary data; expected delimited text with a header row (" +
                  detail::describe_byte(static_cast<unsigned char>(text[*offset]), *offset) + ")");
    detail::ContentLines lines(text.data(), text.data() + text.size());
    detail::Line line;
    if (!lines.next(line))
      fail(0,
           "the summary is empty: expected a header row naming its columns, then one row per "
           "bore");
    separator_ = detail::detect_separator(line);
    std::vector<std::string_view> fields;
    detail::split_fields(line, separator_, fields);
    map_columns(fields, line.number);

    SummaryTable table;
    table.unit = unit_;
    table.deviations = deviations_;
    while (lines.next(line)) {
      detail::split_fields(line, separator_, fields);
      table.rows.push_back(parse_row(fields, line.number));
    }
    if (table.rows.empty()) fail(header_line_, "the summary has a header but no rows");
    return table;
  }

 private:
  [[noreturn]] void fail(std::size_t line, const std::string& problem,
                         const std::string& key = {}) const {
    throw InputError(source_, line, problem, key);
  }

  /// The header name the mapping gives `field` (the field's own key when it gives none).
  std::string wanted(SummaryField field) const {
    const std::string& given = options_.mapping.column(field);
    return given.empty() ? std::string(summary_field_key(field)) : given;
  }
  bool mapped(SummaryField field) const { return !options_.mapping.column(field).empty(); }

  void map_columns(const std::vector<std::string_view>& header, std::size_t line) {
    header_line_ = line;
    header_ = header;
    field_count_ = header.size();
    for (std::size_t f = 0; f < summary_field_count; ++f) {
      const auto field = static_cast<SummaryField>(f);
      const std::string name = lowered(wanted(field));
      std::optional<std::size_t> found;
      for (std::size_t c = 0; c < header.size(); ++c) {
        if (lowered(header[c]) != name) continue;
        if (found)
          fail(line,
               "the header names column " + detail::quoted_excerpt(header[c]) + " twice (fields " +
                   std::to_string(*found + 1) + " and " + std::to_string(c + 1) + ")",
               key_of(field));
        found = c;
      }
      // A column the mapping names must be there; a default name is used only when present.
      if (!found && mapped(field))
        fail(line,
             "the header has no column " + detail::quoted_excerpt(wanted(field)) +
                 " (header: " + header_text(header) + ")",
             key_of(field));
      column_[f] = found;
    }
    const auto has = [&](SummaryField f) { return column(f).has_value(); };
    const auto quoted = [&](SummaryField f) { return detail::quoted_excerpt(wanted(f)); };
    if (!has(SummaryField::id))
      fail(line,
           "the header has no feature id column " + quoted(SummaryField::id) +
               " (header: " + header_text(header) + "); name it with columns.id or --map id=COLUMN",
           key_of(SummaryField::id));
    const bool deviations = has(SummaryField::dx) || has(SummaryField::dy);
    const bool coordinates = has(SummaryField::x) || has(SummaryField::y);
    if (deviations && coordinates)
      fail(line, "the summary gives both deviations (dx, dy) and coordinates (x, y): map one pair",
           key_of(SummaryField::x));
    if (!deviations && !coordinates)
      fail(line,
           "the header has neither deviation columns " + quoted(SummaryField::dx) + ", " +
               quoted(SummaryField::dy) + " nor coordinate columns " + quoted(SummaryField::x) +
               ", " + quoted(SummaryField::y) + " (header: " + header_text(header) + ")",
           key_of(SummaryField::dx));
    deviations_ = deviations;
    const SummaryField u = deviations ? SummaryField::dx : SummaryField::x;
    const SummaryField v = deviations ? SummaryField::dy : SummaryField::y;
    if (!has(u) || !has(v))
      fail(line,
           "the summary gives only one of the pair " + std::string(summary_field_key(u)) + ", " +
               std::string(summary_field_key(v)) + ": both are needed",
           key_of(has(u) ? v : u));
    // The second set: both of its pair, the same kind as the first, and both heights.
    const SummaryField u2 = deviations ? SummaryField::dx2 : SummaryField::x2;
    const SummaryField v2 = deviations ? SummaryField::dy2 : SummaryField::y2;
    const SummaryField other_u2 = deviations ? SummaryField::x2 : SummaryField::dx2;
    const SummaryField other_v2 = deviations ? SummaryField::y2 : SummaryField::dy2;
    if (has(other_u2) || has(other_v2))
      fail(line, "the second depth must be given like the first (deviations or coordinates)",
           key_of(has(other_u2) ? other_u2 : other_v2));
    second_ = has(u2) || has(v2) || has(SummaryField::z2);
    if (second_) {
      for (SummaryField needed : {u2, v2, SummaryField::z2, SummaryField::z})
        if (!has(needed))
          fail(line,
               "a second depth needs " + std::string(summary_field_key(u2)) + ", " +
                   std::string(summary_field_key(v2)) + ", z2 and z (the heights of both planes)",
               key_of(needed));
    }
  }

  static std::string key_of(SummaryField field) {
    return "columns." + std::string(summary_field_key(field));
  }

  static std::string header_text(const std::vector<std::string_view>& header) {
    std::string text;
    for (std::string_view h : header) {
      if (text.size() > 120) return text + ", ...";
      text += (text.empty() ? "" : ", ") + detail::quoted_excerpt(h, 24);
    }
    return text;
  }

  std::string column_name(std::size_t c) const {
    return "field " + std::to_string(c + 1) + " (" + detail::quoted_excerpt(header_[c], 24) + ")";
  }

  std::optional<std::size_t> column(SummaryField field) const {
    return column_[static_cast<std::size_t>(field)];
  }

  /// A number in `field`'s column, converted to mm, with half a unit of its last decimal.
  SummaryNumber number(const std::vector<std::string_view>& fields, SummaryField field,
                       std::size_t line) const {
    const std::size_t c = *column(field);
    const std::string_view cell = fields[c];
    double value = 0.0;
    const NumberStatus status =
        cell.empty() ? NumberStatus::not_a_number
                     : detail::parse_number(cell.data(), cell.data() + cell.size(), value);
    if (status != NumberStatus::ok) {
      std::string problem = column_name(c) + " " + detail::describe_number_problem(status, cell);
      if (separator_ == detail::Separator::semicolon && cell.find(',') != std::string_view::npos)
        problem += "; decimal commas are not supported, write 1.5 rather than 1,5";
      fail(line, problem);
    }
    if (std::fabs(value) > 1e6)
      fail(line, column_name(c) + " is beyond 1e6 " + std::string(unit_name(unit_)) + ": " +
                     detail::quoted_excerpt(cell));
    // A figure printed with an exponent may claim no resolution at all ("0e300"): its rounding
    // would swallow every comparison, so it is refused like a figure beyond range.
    const double rounding = half_unit_of_last_decimal(cell);
    if (!(rounding <= 1e6))
      fail(line, column_name(c) +
                     " is printed too coarsely to be audited (its last digit stands "
                     "for more than 1e6): " +
                     detail::quoted_excerpt(cell));
    return {value * mm_, rounding * mm_};
  }

  std::optional<SummaryNumber> optional_number(const std::vector<std::string_view>& fields,
                                               SummaryField field, std::size_t line) const {
    if (!column(field)) return std::nullopt;
    // An optional figure may be left blank in a row (e.g. no diameter printed for one bore).
    if (fields[*column(field)].empty() && field != SummaryField::z && field != SummaryField::z2)
      return std::nullopt;
    return number(fields, field, line);
  }

  SummaryCentre centre(const std::vector<std::string_view>& fields, bool second,
                       std::size_t line) const {
    const auto& set = second ? kSecondSet : kFirstSet;
    SummaryCentre c;
    c.u = number(fields, deviations_ ? set[0] : set[2], line);
    c.v = number(fields, deviations_ ? set[1] : set[3], line);
    if (column(set[4])) c.z = number(fields, set[4], line);
    return c;
  }

  SummaryRow parse_row(const std::vector<std::string_view>& fields, std::size_t line) const {
    if (fields.size() != field_count_)
      fail(line, "found " + std::to_string(fields.size()) + " field" +
                     (fields.size() == 1 ? "" : "s") + ", expected " +
                     std::to_string(field_count_) + " as in the header on line " +
                     std::to_string(header_line_) + " (fields separated by " +
                     detail::separator_name(separator_) + ")");
    SummaryRow row;
    row.line = line;
    const std::size_t id_column = *column(SummaryField::id);
    const std::string_view id = fields[id_column];
    if (id.empty()) fail(line, column_name(id_column) + " is empty: every row needs a feature id");
    for (char ch : id)
      if (static_cast<unsigned char>(ch) < 0x20 || ch == 0x7f)
        fail(line, column_name(id_column) + " holds a control character");
    if (id.size() > 64) fail(line, column_name(id_column) + " is longer than 64 characters");
    if (!valid_utf8(id)) fail(line, column_name(id_column) + " is not UTF-8 text");
    row.id = std::string(id);
    row.centres.push_back(centre(fields, false, line));
    if (second_) row.centres.push_back(centre(fields, true, line));
    row.position = optional_number(fields, SummaryField::position, line);
    row.diameter = optional_number(fields, SummaryField::diameter, line);
    if (const auto c = column(SummaryField::verdict)) {
      const std::string_view word = fields[*c];
      row.verdict_text = detail::printable_excerpt(word, 40);
      if (!word.empty()) {
        row.conforms = verdict_word(word);
        if (!row.conforms)
          fail(line, column_name(*c) + " holds the verdict " + detail::quoted_excerpt(word) +
                         ", not understood (expected pass, ok, conforms, accept, in, yes or fail, "
                         "nok, does not conform, reject, out, no)");
      }
    }
    if (row.position && row.position->value < 0.0)
      fail(line, column_name(*column(SummaryField::position)) +
                     " is negative: a position is a "
                     "diameter");
    return row;
  }

  std::string source_;
  const SummaryReadOptions& options_;
  LengthUnit unit_ = LengthUnit::millimetre;
  double mm_ = 1.0;
  detail::Separator separator_ = detail::Separator::comma;
  std::size_t header_line_ = 0;
  std::vector<std::string_view> header_;
  std::size_t field_count_ = 0;
  std::array<std::optional<std::size_t>, summary_field_count> column_{};
  bool deviations_ = true;
  bool second_ = false;
};

}  // namespace

double single_plane_position(double dx, double dy) noexcept { return 2.0 * std::hypot(dx, dy); }

double consistency_allowance(double position_rounding, double dx_rounding,
                             double dy_rounding) noexcept {
  return position_rounding + 2.0 * std::hypot(dx_rounding, dy_rounding);
}

double half_unit_of_last_decimal(std::string_view number) noexcept {
  std::size_t i = 0;
  if (i < number.size() && (number[i] == '+' || number[i] == '-')) ++i;
  int decimals = 0;
  bool point = false, digits = false;
  for (; i < number.size(); ++i) {
    const char c = number[i];
    if (c >= '0' && c <= '9') {
      digits = true;
      if (point) ++decimals;
    } else if (c == '.' && !point) {
      point = true;
    } else {
      break;
    }
  }
  if (!digits) return 0.0;
  long exponent = 0;
  if (i < number.size()) {
    if (number[i] != 'e' && number[i] != 'E') return 0.0;
    ++i;
    bool negative = false;
    if (i < number.size() && (number[i] == '+' || number[i] == '-')) negative = number[i++] == '-';
    if (i == number.size()) return 0.0;
    for (; i < number.size(); ++i) {
      if (number[i] < '0' || number[i] > '9') return 0.0;
      if (exponent < 1000) exponent = exponent * 10 + (number[i] - '0');
    }
    if (negative) exponent = -exponent;
  }
  return 0.5 * std::pow(10.0, static_cast<double>(exponent - decimals));
}

SummaryTable parse_summary(std::string_view bytes, const std::string& source,
                           const SummaryReadOptions& options) {
  SummaryTable table = SummaryParser(source, options).parse(bytes);
  table.file = source;
  table.sha256 = detail::sha256_of_bytes(bytes);
  return table;
}

SummaryTable read_summary(const std::filesystem::path& file, const SummaryReadOptions& options) {
  const LoadedFile loaded = load(file);
  SummaryTable table = parse_summary(loaded.bytes(), file.string(), options);
  table.file = file;
  return table;
}

}  // namespace cylzone
