#include "cylzone/plan/plan.hpp"
#include "io/detail/file_digest.hpp"

#include <toml++/toml.h>

#include <algorithm>
#include <array>
#include <cctype>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <system_error>
#include <type_traits>
#include <tuple>
#include <utility>

#include "cylzone/core/errors.hpp"
#include "cylzone/plan/validate_plan.hpp"
#include "plan/detail/plan_text.hpp"

// The plan format is documented for users in docs/plan.md; this file reads exactly that text:
// syntax, key sets, types and units, and where each value was written (PlanLocation::lines).
// The rules that give the values their meaning are validate_plan's (validate_plan.cpp), applied
// to the plan once it is read. toml++ is included here only. Every error names the plan file,
// the line of the offending key (toml++ source regions) and its dotted key path. Bores are named
// in key paths by their id, `bore[P3].position`, once the id is known; errors in the id itself,
// or in a bore without a usable id, use the 1-based index of the [[bore]] table, `bore[3].id`.

namespace cylzone {

namespace {

constexpr std::string_view kFormat = "cylzone-plan-1";

// Text of the plan's own constants (formats, allowed values); user text is quoted with
// quoted_for_message, which escapes and bounds it.
std::string in_quotes(std::string_view text) { return "\"" + std::string(text) + "\""; }

using detail::plan_number_text;

std::string join_path(const std::string& path, std::string_view name) {
  return detail::join_key(path, std::string(name));
}

/// A key as a key path shows it: itself when it is a short bare TOML key, else quoted and
/// escaped as TOML writes a quoted key (a key may hold anything, even a newline or 1 MB).
std::string key_text(std::string_view key) {
  const bool bare = !key.empty() && key.size() <= message_text_limit &&
                    std::all_of(key.begin(), key.end(), [](char c) {
                      return std::isalnum(static_cast<unsigned char>(c)) || c == '_' || c == '-';
                    });
  return bare ? std::string(key) : quoted_for_message(key);
}

std::string type_text(const toml::node& node) {
  switch (node.type()) {
    case toml::node_type::table: return "a table";
    case toml::node_type::array: return "an array";
    case toml::node_type::string: return "a string";
    case toml::node_type::integer: return "an integer";
    case toml::node_type::floating_point: return "a floating-point number";
    case toml::node_type::boolean: return "a boolean";
    case toml::node_type::date: return "a date";
    case toml::node_type::time: return "a time";
    case toml::node_type::date_time: return "a date-time";
    case toml::node_type::none: break;
  }
  return "nothing";
}

std::size_t line_of(const toml::node& node) {
  return static_cast<std::size_t>(node.source().begin.line);
}

/// Records the line of every key of `table` and of its sub-tables down to `levels` deep (by
/// dotted name, e.g. "size.lower") in `lines`. Two levels reach every key a rule names
/// ("probe.points" from the top, "position.tolerance" from a bore); the bound also keeps a
/// hostile plan's deeply nested keys from recursing without end.
void record_lines(const toml::table& table, const std::string& prefix,
                  std::map<std::string, std::size_t, std::less<>>& lines, int levels = 2) {
  for (auto&& [key, value] : table) {
    const std::string name = detail::join_key(prefix, std::string(key.str()));
    lines.emplace(name, line_of(value));
    if (const toml::table* sub = value.as_table(); sub && levels > 1)
      record_lines(*sub, name, lines, levels - 1);
  }
}

/// The location of a table: its line, its key path and the lines of its keys.
PlanLocation location_of(const toml::table& table, const std::string& key) {
  PlanLocation where;
  where.line = line_of(table);
  where.key = key;
  record_lines(table, "", where.lines);
  return where;
}

template <typename... Names>
constexpr std::array<std::string_view, sizeof...(Names)> keys(Names... names) {
  return {std::string_view(names)...};
}

template <std::size_t N>
std::string list_text(const std::array<std::string_view, N>& names) {
  std::string text;
  for (std::string_view n : names) {
    if (!text.empty()) text += ", ";
    text += n;
  }
  return text;
}

template <std::size_t N>
bool contains(const std::array<std::string_view, N>& names, std::string_view name) {
  for (std::string_view n : names)
    if (n == name) return true;
  return false;
}

// Key sets of each table (docs/plan.md lists them with their meaning).
constexpr auto kRootKeys =
    keys("format", "name", "units", "probe", "section_gap", "datum", "bore", "part", "sampling", "scan",
         "audit", "uncertainty", "decision");
// One cloud of the whole part, segmented among the features (docs/plan.md, "[scan]").
constexpr auto kScanKeys =
    keys("points", "band", "margin", "normal_agreement", "placement", "register");
constexpr auto kPlacementKeys = keys("rotation", "translation");
constexpr auto kExtentKeys = keys("x", "y");
// Raw probe points: the same keys plan-wide ([probe]) and in a feature's own `probe` table.
constexpr auto kProbeKeys = keys("points", "tip_diameter", "neighbour_filter", "residual_rejection");
constexpr auto kDatumAKeys =
    keys("feature", "points", "association", "material_side", "probe", "extent");
constexpr auto kDatumBKeys =
    keys("feature", "points", "size", "mmb", "probe", "nominal_size", "depth");
// A datum C may take its points from a [scan] and then gives its nominal shape: a bore or pin
// its nominal size and depth, a slot or tab its nominal width, depth and span along the centre
// plane, a plane its offset from B's axis, depth and span.
constexpr auto kDatumCSizeKeys =
    keys("feature", "points", "basic", "size", "mmb", "probe", "nominal_size", "depth");
constexpr auto kDatumCWidthKeys =
    keys("feature", "points", "basic", "size", "mmb", "probe", "nominal_size", "depth", "span");
constexpr auto kDatumCPlaneKeys = keys("feature", "points", "outward_normal", "material_side",
                                       "probe", "offset", "depth", "span");
constexpr auto kDatumCAnyKeys = keys("feature", "points", "basic", "size", "mmb",
                                     "outward_normal", "material_side", "probe", "nominal_size",
                                     "depth", "offset", "span");
constexpr auto kBoreKeys =
    keys("id", "points", "basic", "direction", "depth", "size", "axis", "section_gap",
         "position", "perpendicularity", "cylindricity", "axis_direction", "probe",
         "nominal_size", "sampling", "uncertainty");
constexpr auto kSizeKeys = keys("lower", "upper");
constexpr auto kDepthKeys = keys("top", "bottom");
constexpr auto kPositionKeys = keys("tolerance", "modifier", "datums", "projected",
                                    "projected_from", "wide_zone_intended");
constexpr auto kPerpendicularityKeys =
    keys("tolerance", "modifier", "datums", "wide_zone_intended");
constexpr auto kPartKeys = keys("id", "serial", "time", "notes");
constexpr auto kSamplingKeys = keys("min_section_points", "min_coverage", "max_magnification");
constexpr auto kAuditKeys = keys("summary", "units", "same_plane_tolerance", "columns");
constexpr auto kUncertaintyKeys = keys("probing_sigma", "mpe_a", "mpe_k", "trials", "seed");
constexpr auto kDecisionKeys = keys("rule", "guard_band", "uncertainty");
// The kinds of characteristic_kind_word, and the coverage factor of a stated budget.
constexpr auto kKindKeys = keys("position", "perpendicularity", "size", "form",
                                "virtual_condition");
constexpr auto kStatedUncertaintyKeys = keys("position", "perpendicularity", "size", "form",
                                       "virtual_condition", "k");

enum class ToleranceKind { position, perpendicularity };

/// Reads one plan. Holds only what every error message needs (the file name, the base folder,
/// the unit once known); one instance per parse, no state survives it.
class PlanParser {
 public:
  PlanParser(const std::filesystem::path& file, bool check_files)
      : file_(file),
        file_name_(file.string()),
        base_(file.parent_path()),
        check_files_(check_files) {}

  PartPlan parse(std::string_view text) {
    toml::table root;
    try {
      root = toml::parse(text, std::string_view(file_name_));
    } catch (const toml::parse_error& e) {
      fail(static_cast<std::size_t>(e.source().begin.line), {},
           "TOML syntax error: " + std::string(e.description()));
    }

    PartPlan plan;
    plan.file = file_;
    plan.where = location_of(root, "");
    plan.where.line = 1;

    // `format` first: a TOML file that is not a plan at all gets the most useful message.
    const toml::node& format = require(root, "", "format", "the plan format " + in_quotes(kFormat));
    const std::string format_text = read_string(format, "format", "a string");
    if (format_text != kFormat)
      fail(line_of(format), "format",
           "unsupported plan format " + quoted_for_message(format_text) + ": expected " +
               in_quotes(kFormat));
    check_keys(root, "", kRootKeys, "at the top level");

    const toml::node& name = require(root, "", "name", "the part's name (a string)");
    plan.name = read_string(name, "name", "the part's name (a string)");

    const toml::node& units = require(root, "", "units", "\"mm\" or \"inch\"");
    plan.unit = read_word(units, "units", "unit", "\"mm\" or \"inch\"", parse_unit);
    mm_per_unit_ = millimetres_per(plan.unit);

    if (const toml::node* probe = root.get("probe")) plan.probe = read_probe(*probe);
    if (const toml::node* gap = root.get("section_gap"))
      plan.section_gap = read_length(*gap, "section_gap", "the section gap (a number)");
    // [scan] before the features: with it, a feature's own `points` becomes optional.
    if (const toml::node* scan = root.get("scan")) plan.scan = read_scan(*scan);
    scan_given_ = plan.scan.has_value();
    read_datums(root, plan);
    read_bores(root, plan);
    if (const toml::node* part = root.get("part")) plan.part = read_part(*part);
    if (const toml::node* sampling = root.get("sampling"))
      plan.sampling = read_sampling(*sampling, "sampling");
    if (const toml::node* audit = root.get("audit")) plan.audit = read_audit(*audit);
    if (const toml::node* u = root.get("uncertainty")) plan.uncertainty = read_uncertainty(*u);
    if (const toml::node* decision = root.get("decision")) plan.decision = read_decision(*decision);
    // The plan-wide section gap and sampling thresholds are the defaults of every bore that
    // gives none.
    for (PlanBore& bore : plan.bores) {
      if (!bore.section_gap) bore.section_gap = plan.section_gap;
      PlanSampling& own = bore.sampling;
      if (!own.min_section_points) own.min_section_points = plan.sampling.min_section_points;
      if (!own.min_coverage_deg) own.min_coverage_deg = plan.sampling.min_coverage_deg;
      if (!own.max_magnification) own.max_magnification = plan.sampling.max_magnification;
    }
    return plan;
  }

 private:
  [[noreturn]] void fail(std::size_t line, const std::string& key,
                         const std::string& problem) const {
    throw InputError(file_name_, line, problem, key);
  }

  // ------------------------------------------------------------------ generic accessors

  const toml::node& require(const toml::table& table, const std::string& path,
                            std::string_view name, const std::string& expected) const {
    if (const toml::node* node = table.get(name)) return *node;
    fail(line_of(table), join_path(path, name), "required key is missing: expected " + expected);
  }

  /// Unknown keys are errors (they are usually typos, e.g. `tolerence`). The first one in the
  /// file is reported; toml++ keeps keys sorted, so the earliest line is looked for.
  template <std::size_t N>
  void check_keys(const toml::table& table, const std::string& path,
                  const std::array<std::string_view, N>& allowed, std::string_view where) const {
    const toml::key* first = nullptr;
    for (auto&& [key, value] : table) {
      (void)value;
      if (contains(allowed, key.str())) continue;
      if (!first || key.source().begin.line < first->source().begin.line) first = &key;
    }
    if (first)
      fail(static_cast<std::size_t>(first->source().begin.line),
           join_path(path, key_text(first->str())),
           "unknown key " + std::string(where) + " (allowed: " + list_text(allowed) + ")");
  }

  const toml::table& as_table(const toml::node& node, const std::string& key,
                              const std::string& expected) const {
    if (const toml::table* t = node.as_table()) return *t;
    fail(line_of(node), key, "expected " + expected + ", found " + type_text(node));
  }

  std::string read_string(const toml::node& node, const std::string& key,
                          const std::string& expected) const {
    if (const auto* s = node.as_string()) return s->get();
    fail(line_of(node), key, "expected " + expected + ", found " + type_text(node));
  }

  /// One of a fixed set of words, e.g. an axis method: `parse` maps the text to its value (an
  /// optional); an unknown word is "unknown WHAT "text": expected EXPECTED".
  template <class Parse>
  auto read_word(const toml::node& node, const std::string& key, const std::string& what,
                 const std::string& expected, Parse parse) const ->
      typename std::invoke_result_t<Parse, const std::string&>::value_type {
    const std::string value = read_string(node, key, expected);
    const auto parsed = parse(value);
    if (!parsed)
      fail(line_of(node), key,
           "unknown " + what + " " + quoted_for_message(value) + ": expected " + expected);
    return *parsed;
  }

  /// A finite number; TOML integers are accepted where a number is expected (`basic = [40, 25]`).
  double read_number(const toml::node& node, const std::string& key,
                     const std::string& expected) const {
    double value = 0.0;
    if (const auto* f = node.as_floating_point())
      value = f->get();
    else if (const auto* i = node.as_integer())
      value = static_cast<double>(i->get());
    else
      fail(line_of(node), key, "expected " + expected + ", found " + type_text(node));
    if (!std::isfinite(value))
      fail(line_of(node), key, "expected " + expected + ", found " + plan_number_text(value));
    return value;
  }

  /// A length in the plan's unit, returned in millimetres.
  double read_length(const toml::node& node, const std::string& key,
                     const std::string& expected) const {
    return read_number(node, key, expected) * mm_per_unit_;
  }


  template <int N>
  Eigen::Matrix<double, N, 1> read_vector(const toml::node& node, const std::string& key,
                                          const std::string& expected) const {
    const toml::array* array = node.as_array();
    if (!array) fail(line_of(node), key, "expected " + expected + ", found " + type_text(node));
    if (array->size() != static_cast<std::size_t>(N))
      fail(line_of(node), key,
           "expected " + expected + ", found an array of " + std::to_string(array->size()) +
               (array->size() == 1 ? " element" : " elements"));
    Eigen::Matrix<double, N, 1> v;
    for (int i = 0; i < N; ++i) {
      const toml::node& element = *array->get(static_cast<std::size_t>(i));
      v[i] = read_number(element, key, expected + " (element " + std::to_string(i + 1) + ")");
    }
    return v;
  }

  /// A direction: any non-zero length, returned as a unit vector (directions carry no unit).
  template <int N>
  Eigen::Matrix<double, N, 1> read_direction(const toml::node& node, const std::string& key,
                                             const std::string& expected) const {
    const Eigen::Matrix<double, N, 1> v = read_vector<N>(node, key, expected);
    const double length = v.stableNorm();  // no overflow for components near 1e308
    if (!(length > 1e-12)) fail(line_of(node), key, "direction has zero length");
    return v / length;
  }

  /// A feature's point file; empty when the plan has a [scan] and the feature gives none (it
  /// then takes its points from the scan).
  std::filesystem::path read_points_path(const toml::table& table, const std::string& path) const {
    if (scan_given_ && !table.get("points")) return {};
    return read_file_path(table, path);
  }

  std::filesystem::path read_file_path(const toml::table& table, const std::string& path) const {
    const std::string key = join_path(path, "points");
    const toml::node& node =
        require(table, path, "points",
                scan_given_ ? "the path of the point file (a string)"
                            : "the path of the point file (a string), or a [scan] table");
    const std::string given = read_string(node, key, "the path of the point file (a string)");
    if (given.empty()) fail(line_of(node), key, "the path of the point file is empty");
    // Relative paths are relative to the plan's folder, so a plan and its points move together.
    const std::filesystem::path resolved =
        (base_ / std::filesystem::path(given)).lexically_normal();
    if (check_files_) {
      std::error_code ec;
      const std::filesystem::file_status status = std::filesystem::status(resolved, ec);
      if (ec && ec != std::errc::no_such_file_or_directory)
        fail(line_of(node), key,
             "point file " + quoted_for_message(resolved.string()) +
                 " cannot be accessed: " + ec.message());
      if (!std::filesystem::exists(status))
        fail(line_of(node), key,
             "point file " + quoted_for_message(resolved.string()) +
                 " does not exist (paths are relative to the plan's folder)");
      if (std::filesystem::is_directory(status))
        fail(line_of(node), key,
             quoted_for_message(resolved.string()) + " is a folder, not a point file");
    }
    return resolved;
  }

  SizeLimits read_size(const toml::node& node, const std::string& key) const {
    const std::string expected = "limits of size { lower = ..., upper = ... }";
    const toml::table& table = as_table(node, key, expected);
    check_keys(table, key, kSizeKeys, "in a size");
    const toml::node& lower = require(table, key, "lower", "the lower limit of size (a number)");
    const toml::node& upper = require(table, key, "upper", "the upper limit of size (a number)");
    return SizeLimits{read_length(lower, key + ".lower", "the lower limit of size (a number)"),
                      read_length(upper, key + ".upper", "the upper limit of size (a number)")};
  }

  // ------------------------------------------------------------------ [probe]

  /// A probe table, plan-wide (`[probe]`, key path "probe") or a feature's own (e.g.
  /// "bore[P3].probe"): every key optional, a value given overrides the plan-wide one.
  ProbeOverrides read_probe_table(const toml::node& node, const std::string& path) const {
    const toml::table& table = as_table(node, path, "a probe table");
    check_keys(table, path, kProbeKeys, path == "probe" ? "in [probe]" : "in a probe table");
    ProbeOverrides probe;
    if (const toml::node* points = table.get("points")) {
      const std::string expected = "\"surface\" or \"ball-centre\"";
      const std::string key = path + ".points";
      const std::string value = read_string(*points, key, expected);
      if (value != "surface" && value != "ball-centre")
        fail(line_of(*points), key,
             "unknown kind of points " + quoted_for_message(value) + ": expected " + expected);
      probe.ball_centres = value == "ball-centre";
    }
    if (const toml::node* tip = table.get("tip_diameter")) {
      // A tip diameter of 0 stands for "not given" in ProbeSettings: a written 0 is refused here.
      const std::string key = path + ".tip_diameter";
      const double value = read_number(*tip, key, "the tip diameter (a number)");
      if (value == 0.0) fail(line_of(*tip), key, "the tip diameter must be greater than zero (found 0)");
      probe.tip_diameter = value * mm_per_unit_;
    }
    probe.neighbour_filter = read_switch(table, path, "neighbour_filter");
    probe.residual_rejection = read_switch(table, path, "residual_rejection");
    return probe;
  }

  std::optional<bool> read_switch(const toml::table& table, const std::string& path,
                                  std::string_view name) const {
    const toml::node* node = table.get(name);
    if (!node) return std::nullopt;
    if (const auto* b = node->as_boolean()) return b->get();
    fail(line_of(*node), join_path(path, name),
         "expected true or false, found " + type_text(*node));
  }

  ProbeSettings read_probe(const toml::node& node) const {
    return resolved_probe(ProbeSettings{}, read_probe_table(node, "probe"));
  }

  // ------------------------------------------------------------------ [datum.*]

  void read_datums(const toml::table& root, PartPlan& plan) const {
    const toml::node* datum_node = root.get("datum");
    if (!datum_node)
      fail(line_of(root), "datum.A",
           "required table is missing: expected [datum.A], the primary datum plane");
    const toml::table& datums =
        as_table(*datum_node, "datum", "[datum.A], [datum.B], [datum.C] tables");
    check_keys(datums, "datum", keys("A", "B", "C"),
               "under [datum]: datums are A (primary plane), B (secondary) and C (tertiary)");
    const toml::node* a = datums.get("A");
    if (!a)
      fail(line_of(datums), "datum.A",
           "required table is missing: expected [datum.A], the primary datum plane");
    plan.datums.push_back(read_datum(*a, 'A'));
    if (const toml::node* b = datums.get("B")) plan.datums.push_back(read_datum(*b, 'B'));
    if (const toml::node* c = datums.get("C")) plan.datums.push_back(read_datum(*c, 'C'));
  }

  PlanDatum read_datum(const toml::node& node, char label) const {
    const std::string path = std::string("datum.") + label;
    const toml::table& table = as_table(node, path, "a [" + path + "] table");

    // The keys allowed depend on the kind of feature; a key of another kind of datum (`size` on
    // a plane) is reported as not allowed here. When the kind cannot be read yet, any datum key
    // passes this check and `feature` itself is reported below.
    std::string peeked;
    if (const toml::node* f = table.get("feature"))
      if (const auto* s = f->as_string()) peeked = s->get();
    if (label == 'A')
      check_keys(table, path, kDatumAKeys, "for datum A");
    else if (label == 'B')
      check_keys(table, path, kDatumBKeys, "for datum B");
    else if (peeked == "plane")
      check_keys(table, path, kDatumCPlaneKeys, "for datum C as a plane");
    else if (peeked == "bore" || peeked == "pin")
      check_keys(table, path, kDatumCSizeKeys, "for datum C as a " + peeked);
    else if (peeked == "slot" || peeked == "tab")
      check_keys(table, path, kDatumCWidthKeys, "for datum C as a " + peeked);
    else
      check_keys(table, path, kDatumCAnyKeys, "for datum C");

    PlanDatum d;
    d.label = label;
    d.where = location_of(table, path);

    const std::string feature_key = path + ".feature";
    const std::string allowed_text =
        label == 'A'   ? "\"plane\""
        : label == 'B' ? "\"bore\" or \"pin\""
                       : "\"bore\", \"pin\", \"slot\", \"tab\" or \"plane\"";
    const toml::node& feature = require(table, path, "feature", allowed_text);
    // Which kinds each datum may be is a rule (validate_plan); here only the word is read.
    d.kind = read_word(feature, feature_key, "feature", allowed_text,
                       [](const std::string& text) -> std::optional<FeatureKind> {
                         for (FeatureKind k : {FeatureKind::plane, FeatureKind::bore,
                                               FeatureKind::pin, FeatureKind::slot,
                                               FeatureKind::tab})
                           if (text == feature_kind_name(k)) return k;
                         return std::nullopt;
                       });

    d.points = read_points_path(table, path);

    if (const toml::node* association = table.get("association"))
      d.association = read_word(*association, path + ".association", "association",
                                "\"tangent-least-squares\", \"tangent-minimax\", "
                                "\"least-squares\" or \"minimum-zone\"",
                                parse_association);
    if (const toml::node* side = table.get("material_side"))
      d.material_side = read_direction<3>(*side, path + ".material_side",
                                          "a direction [x, y, z] in measurement coordinates");

    if (const toml::node* size = table.get("size")) d.size = read_size(*size, path + ".size");
    if (const toml::node* probe = table.get("probe"))
      d.probe = read_probe_table(*probe, path + ".probe");
    if (const toml::node* mmb = table.get("mmb"))
      d.mmb_size = read_length(*mmb, path + ".mmb", "the maximum material boundary (a number)");

    if (const toml::node* nominal = table.get("nominal_size"))
      d.nominal_size =
          read_length(*nominal, path + ".nominal_size", "the nominal size (a number)");
    if (const toml::node* depth = table.get("depth"))
      std::tie(d.depth_top, d.depth_bottom) = read_depth(*depth, path + ".depth");
    if (const toml::node* extent = table.get("extent")) read_extent(*extent, path + ".extent", d);
    if (const toml::node* offset = table.get("offset"))
      d.offset = read_length(*offset, path + ".offset",
                             "the distance of C's face from B's axis along its outward normal "
                             "(a number)");
    if (const toml::node* span = table.get("span"))
      d.span = read_vector<2>(*span, path + ".span",
                              "the range [low, high] of C's face along the face (2 numbers)") *
               mm_per_unit_;

    if (label == 'C' && d.kind != FeatureKind::plane) {
      // A bore or pin C is located by its axis; a slot or tab by its centre on A, whose
      // direction from B is the basic direction of its centre plane.
      const bool width_c = d.kind == FeatureKind::slot || d.kind == FeatureKind::tab;
      const std::string what = width_c ? "C's centre (on its centre plane)" : "C's axis";
      const std::string key = path + ".basic";
      const toml::node& basic =
          require(table, path, "basic", "the basic location [x, y] of " + what + " in the frame");
      d.basic_location =
          read_vector<2>(basic, key, "the basic location [x, y] of " + what + " (2 numbers)") *
          mm_per_unit_;
    }
    if (label == 'C' && d.kind == FeatureKind::plane) {
      const std::string expected = "the direction [x, y] of C's outward normal in the frame";
      const toml::node& normal = require(table, path, "outward_normal", expected);
      d.outward_normal = read_direction<2>(normal, path + ".outward_normal", expected);
    }
    return d;
  }

  // ------------------------------------------------------------------ [[bore]]

  void read_bores(const toml::table& root, PartPlan& plan) const {
    const toml::node* node = root.get("bore");
    if (!node)
      fail(line_of(root), "bore", "no [[bore]] table: a plan needs at least one toleranced bore");
    const toml::array* array = node->as_array();
    if (array && array->empty())
      fail(line_of(*node), "bore", "no bore: a plan needs at least one toleranced bore");
    if (!array || !array->is_array_of_tables())
      fail(line_of(*node), "bore",
           "expected one [[bore]] table per bore (an array of tables), found " + type_text(*node) +
               (node->is_table() ? ": write [[bore]], not [bore]" : ""));
    for (std::size_t i = 0; i < array->size(); ++i)
      plan.bores.push_back(read_bore(*array->get(i)->as_table(), i + 1));
  }

  PlanBore read_bore(const toml::table& table, std::size_t index) const {
    const std::string index_path = "bore[" + std::to_string(index) + "]";

    // The key path names the bore by its id when it has a usable one (see the file comment).
    std::string path = index_path;
    if (const toml::node* id = table.get("id"))
      if (const auto* s = id->as_string(); s && detail::usable_bore_id(s->get()))
        path = "bore[" + s->get() + "]";
    check_keys(table, path, kBoreKeys, "in a [[bore]]");

    PlanBore bore;
    const toml::node& id = require(table, index_path, "id", "the bore's identifier (a string)");
    bore.id = read_string(id, index_path + ".id", "the bore's identifier (a string)");
    bore.where = location_of(table, path);

    bore.points = read_points_path(table, path);

    const toml::node& basic =
        require(table, path, "basic", "the true position [x, y] on datum plane A");
    bore.basic_location =
        read_vector<2>(basic, path + ".basic", "the true position [x, y] (2 numbers)") *
        mm_per_unit_;

    if (const toml::node* direction = table.get("direction")) {
      Eigen::Vector3d d = read_direction<3>(*direction, path + ".direction",
                                            "a direction [x, y, z] in the frame");
      // The sense of an axis carries no information; it is stored pointing out of the material
      // (+z), the sense of the default and of the zone frame's heights.
      if (d.z() < 0.0) d = -d;
      bore.nominal_direction = d;
    }

    if (const toml::node* depth = table.get("depth"))
      std::tie(bore.depth_top, bore.depth_bottom) = read_depth(*depth, path + ".depth");
    if (const toml::node* nominal = table.get("nominal_size"))
      bore.nominal_size =
          read_length(*nominal, path + ".nominal_size", "the nominal size (a number)");
    if (const toml::node* size = table.get("size")) bore.size = read_size(*size, path + ".size");

    if (const toml::node* axis = table.get("axis"))
      bore.axis = read_word(*axis, path + ".axis", "axis",
                            "\"mating-envelope\", \"least-squares\" or \"median-line\"",
                            parse_axis_method);
    if (const toml::node* gap = table.get("section_gap"))
      bore.section_gap = read_length(*gap, path + ".section_gap", "the section gap (a number)");
    // ---- axis_direction: fitted (default) or held at the nominal direction.
    if (const toml::node* held = table.get("axis_direction"))
      bore.axis_direction = read_word(*held, path + ".axis_direction", "axis direction",
                                      "\"fitted\" or \"nominal\"", parse_axis_direction);

    if (const toml::node* position = table.get("position"))
      bore.position = read_tolerance(*position, path + ".position", ToleranceKind::position);
    if (const toml::node* perpendicularity = table.get("perpendicularity"))
      bore.perpendicularity = read_tolerance(*perpendicularity, path + ".perpendicularity",
                                             ToleranceKind::perpendicularity);
    if (const toml::node* cylindricity = table.get("cylindricity"))
      bore.cylindricity = read_length(*cylindricity, path + ".cylindricity",
                                      "the cylindricity tolerance (a number)");
    if (const toml::node* probe = table.get("probe"))
      bore.probe = read_probe_table(*probe, path + ".probe");
    if (const toml::node* sampling = table.get("sampling"))
      bore.sampling = read_sampling(*sampling, path + ".sampling");
    if (const toml::node* budget = table.get("uncertainty"))
      bore.uncertainty = read_kind_lengths(*budget, path + ".uncertainty", kKindKeys);
    return bore;
  }

  /// A z range { top, bottom } (mm): a bore's evaluated range, a datum feature's nominal one.
  std::pair<std::optional<double>, std::optional<double>> read_depth(
      const toml::node& node, const std::string& key) const {
    const toml::table& table =
        as_table(node, key, "a depth range { top = ..., bottom = ... } (z in the frame)");
    check_keys(table, key, kDepthKeys, "in a depth range");
    const toml::node* top = table.get("top");
    const toml::node* bottom = table.get("bottom");
    if (!top && !bottom)
      fail(line_of(table), key, "the depth range is empty: give top, bottom or both");
    std::pair<std::optional<double>, std::optional<double>> range;
    if (top) range.first = read_length(*top, key + ".top", "the top of the range (a number)");
    if (bottom)
      range.second = read_length(*bottom, key + ".bottom", "the bottom of the range (a number)");
    return range;
  }

  /// Datum A's nominal extent { x = [low, high], y = [low, high] } on the plane z = 0 (mm).
  void read_extent(const toml::node& node, const std::string& key, PlanDatum& d) const {
    const std::string expected = "an extent { x = [low, high], y = [low, high] } (in the frame)";
    const toml::table& table = as_table(node, key, expected);
    check_keys(table, key, kExtentKeys, "in an extent");
    const toml::node& x = require(table, key, "x", "the range [low, high] of x (2 numbers)");
    const toml::node& y = require(table, key, "y", "the range [low, high] of y (2 numbers)");
    d.extent_x = read_vector<2>(x, key + ".x", "the range [low, high] of x (2 numbers)") *
                 mm_per_unit_;
    d.extent_y = read_vector<2>(y, key + ".y", "the range [low, high] of y (2 numbers)") *
                 mm_per_unit_;
  }

  // ------------------------------------------------------------------ [scan]

  PlanScan read_scan(const toml::node& node) const {
    const toml::table& table = as_table(node, "scan", "a [scan] table");
    check_keys(table, "scan", kScanKeys, "in [scan]");
    PlanScan scan;
    scan.where = location_of(table, "scan");
    scan.points = read_file_path(table, "scan");
    const toml::node& band =
        require(table, "scan", "band", "the half-width of the band about each nominal surface");
    scan.segment.band = read_length(band, "scan.band", "the band's half-width (a number)");
    if (const toml::node* margin = table.get("margin"))
      scan.segment.margin = read_length(*margin, "scan.margin", "the margin (a number)");
    if (const toml::node* agreement = table.get("normal_agreement"))
      scan.segment.normal_agreement_deg =
          read_number(*agreement, "scan.normal_agreement", "an angle in degrees (a number)");
    const std::string expected =
        "the placement of the cloud in the part's coordinates: a 4x4 matrix [[...], [...], "
        "[...], [0, 0, 0, 1]], { rotation = [[...], [...], [...]], translation = [x, y, z] } or "
        "\"find\"";
    // No placement, or "find": found from the cloud and the nominal datums (find_placement).
    const toml::node* placement = table.get("placement");
    if (!placement) {
      scan.find_placement = true;
    } else if (const auto* word = placement->as_string()) {
      if (word->get() != "find")
        fail(line_of(*placement), "scan.placement",
             "unknown placement " + quoted_for_message(word->get()) + ": expected " + expected);
      scan.find_placement = true;
    } else {
      scan.placement = read_placement(*placement, "scan.placement", expected);
    }
    scan.register_placement = read_switch(table, "scan", "register").value_or(false);
    return scan;
  }

  /// Row `row` of a matrix written as an array of arrays, `columns` numbers long.
  template <int N>
  Eigen::Matrix<double, N, 1> read_row(const toml::array& rows, std::size_t row,
                                       const std::string& key) const {
    return read_vector<N>(*rows.get(row), key,
                          "row " + std::to_string(row + 1) + " of the matrix (" +
                              std::to_string(N) + " numbers)");
  }

  RigidPlacement read_placement(const toml::node& node, const std::string& key,
                                const std::string& expected) const {
    RigidPlacement p;
    if (const toml::array* rows = node.as_array()) {
      if (rows->size() != 4)
        fail(line_of(node), key,
             "expected a 4x4 matrix (4 rows of 4 numbers), found an array of " +
                 std::to_string(rows->size()) + (rows->size() == 1 ? " element" : " elements"));
      for (std::size_t r = 0; r < 4; ++r) {
        const Eigen::Vector4d row = read_row<4>(*rows, r, key);
        if (r < 3) {
          p.rotation.row(static_cast<Eigen::Index>(r)) = row.head<3>().transpose();
          p.translation[static_cast<Eigen::Index>(r)] = row[3] * mm_per_unit_;
        } else if (row != Eigen::Vector4d(0, 0, 0, 1)) {
          fail(line_of(*rows->get(3)), key,
               "the last row of a rigid placement must be [0, 0, 0, 1], found [" +
                   plan_number_text(row[0]) + ", " + plan_number_text(row[1]) + ", " +
                   plan_number_text(row[2]) + ", " + plan_number_text(row[3]) + "]");
        }
      }
      return p;
    }
    const toml::table& table = as_table(node, key, expected);
    check_keys(table, key, kPlacementKeys, "in a placement");
    const toml::node& rotation =
        require(table, key, "rotation", "a 3x3 rotation matrix [[...], [...], [...]]");
    const toml::array* rows = rotation.as_array();
    if (!rows || rows->size() != 3)
      fail(line_of(rotation), key + ".rotation",
           "expected a 3x3 rotation matrix (3 rows of 3 numbers), found " +
               (rows ? "an array of " + std::to_string(rows->size()) + " elements"
                     : type_text(rotation)));
    for (std::size_t r = 0; r < 3; ++r)
      p.rotation.row(static_cast<Eigen::Index>(r)) =
          read_row<3>(*rows, r, key + ".rotation").transpose();
    const toml::node& translation =
        require(table, key, "translation", "a translation [x, y, z] (3 numbers)");
    p.translation = read_vector<3>(translation, key + ".translation",
                                   "a translation [x, y, z] (3 numbers)") *
                    mm_per_unit_;
    return p;
  }

  PlanTolerance read_tolerance(const toml::node& node, const std::string& key,
                               ToleranceKind kind) const {
    const bool is_position = kind == ToleranceKind::position;
    const toml::table& table =
        as_table(node, key,
                 is_position ? "a table { tolerance = ..., datums = \"A|B|C\" }"
                             : "a table { tolerance = ... }");
    if (is_position)
      check_keys(table, key, kPositionKeys, "in a position tolerance");
    else
      check_keys(table, key, kPerpendicularityKeys, "in a perpendicularity tolerance");

    PlanTolerance t;
    t.where = location_of(table, key);
    const toml::node& tolerance =
        require(table, key, "tolerance", "the diameter of the tolerance zone (a number)");
    t.tolerance = read_length(tolerance, key + ".tolerance", "the tolerance (a number)");

    if (const toml::node* modifier = table.get("modifier"))
      t.condition = read_word(*modifier, key + ".modifier", "modifier",
                              "\"RFS\", \"MMC\" or \"LMC\"",
                              [](const std::string& text) -> std::optional<MaterialCondition> {
                                for (MaterialCondition c : {MaterialCondition::rfs,
                                                            MaterialCondition::mmc,
                                                            MaterialCondition::lmc})
                                  if (text == condition_name(c)) return c;
                                return std::nullopt;
                              });

    if (const toml::node* wide = table.get("wide_zone_intended")) {
      const auto* flag = wide->as_boolean();
      if (!flag)
        fail(line_of(*wide), key + ".wide_zone_intended",
             "expected true or false, found " + type_text(*wide));
      t.wide_zone_intended = flag->get();
    }

    if (is_position) {
      const toml::node& datums =
          require(table, key, "datums", "the datum reference, e.g. \"A|B|C\" (a string)");
      t.datums = read_datum_references(datums, key + ".datums");
      if (const toml::node* projected = table.get("projected"))
        t.projected_height =
            read_length(*projected, key + ".projected", "the projected height (a number)");
      if (const toml::node* from = table.get("projected_from"))
        t.projected_from = read_length(*from, key + ".projected_from",
                                       "the height the projected zone starts from (a number)");
    } else {
      // Perpendicularity in cylzone is always to datum plane A: "A" when not written.
      t.datums = {DatumReference{'A', MaterialBoundary::rmb}};
      if (const toml::node* datums = table.get("datums"))
        t.datums = read_datum_references(*datums, key + ".datums");
    }
    return t;
  }

  /// The datum section of a feature control frame as written: datum letters separated by '|',
  /// each optionally followed by (M) (MMB) or (L) (LMB), and C by (T) (a translating
  /// simulator), e.g. "A|B(M)|C". Which datums, in
  /// which order, with which modifiers, is a rule (validate_plan).
  std::vector<DatumReference> read_datum_references(const toml::node& node,
                                                    const std::string& key) const {
    const std::string text =
        read_string(node, key, "the datum reference, e.g. \"A|B|C\" (a string)");
    const std::size_t line = line_of(node);
    std::vector<DatumReference> refs;
    std::size_t start = 0;
    while (true) {
      const std::size_t bar = text.find('|', start);
      std::string part =
          text.substr(start, bar == std::string::npos ? std::string::npos : bar - start);
      const std::size_t first = part.find_first_not_of(' ');
      const std::size_t last = part.find_last_not_of(' ');
      part = first == std::string::npos ? std::string() : part.substr(first, last - first + 1);

      if (part.empty())
        fail(line, key,
             "empty datum in " + quoted_for_message(text) +
                 ": expected \"A\", \"A|B\" or \"A|B|C\"");
      const bool letter = part[0] >= 'A' && part[0] <= 'Z';
      std::string rest = part.substr(1);
      DatumReference ref;
      // "(T)" last: datum C's simulator translates (docs/plan.md); the default keeps it fixed
      // at its basic location.
      if (rest.size() >= 3 && rest.compare(rest.size() - 3, 3, "(T)") == 0) {
        ref.translating = true;
        rest.erase(rest.size() - 3);
      }
      if (!letter || !(rest.empty() || rest == "(M)" || rest == "(L)"))
        fail(line, key,
             quoted_for_message(part) +
                 " is not a datum reference: expected a datum letter, optionally "
                 "followed by (M) or (L) and, for C, (T), e.g. \"A|B(M)|C\"");
      ref.label = part[0];
      ref.boundary = rest == "(M)"   ? MaterialBoundary::mmb
                     : rest == "(L)" ? MaterialBoundary::lmb
                                     : MaterialBoundary::rmb;
      refs.push_back(ref);
      if (bar == std::string::npos) break;
      start = bar + 1;
    }
    return refs;
  }

  // ------------------------------------------------------------------ [sampling]

  /// Sampling thresholds, plan-wide (`[sampling]`) or a bore's own `sampling` table: numbers
  /// without a unit (a count of points, degrees, a ratio); validate_plan checks their bounds.
  PlanSampling read_sampling(const toml::node& node, const std::string& path) const {
    const toml::table& table = as_table(node, path, "a sampling table");
    check_keys(table, path, kSamplingKeys,
               path == "sampling" ? "in [sampling]" : "in a sampling table");
    PlanSampling sampling;
    if (const toml::node* count = table.get("min_section_points")) {
      const std::string key = path + ".min_section_points";
      const auto* value = count->as_integer();
      if (!value)
        fail(line_of(*count), key, "expected a whole number of points, found " + type_text(*count));
      if (value->get() < 0)
        fail(line_of(*count), key,
             "the number of points must not be negative (found " + std::to_string(value->get()) + ")");
      sampling.min_section_points = static_cast<std::size_t>(value->get());
    }
    if (const toml::node* coverage = table.get("min_coverage"))
      sampling.min_coverage_deg =
          read_number(*coverage, path + ".min_coverage", "an angle in degrees (a number)");
    if (const toml::node* magnification = table.get("max_magnification"))
      sampling.max_magnification =
          read_number(*magnification, path + ".max_magnification", "a ratio (a number)");
    return sampling;
  }

  // ------------------------------------------------------------------ [part]

  /// The part's identity: strings as written (validate_plan bounds them); `time` is a TOML
  /// offset date-time (RFC 3339, so the TOML parser has checked its fields), kept as ISO 8601.
  PlanPart read_part(const toml::node& node) const {
    const toml::table& table = as_table(node, "part", "a [part] table");
    check_keys(table, "part", kPartKeys, "in [part]");
    PlanPart part;
    part.where = location_of(table, "part");
    const std::string expected = "a string";
    if (const toml::node* id = table.get("id")) part.id = read_string(*id, "part.id", expected);
    if (const toml::node* serial = table.get("serial"))
      part.serial = read_string(*serial, "part.serial", expected);
    if (const toml::node* time = table.get("time")) part.timestamp = read_time(*time);
    if (const toml::node* notes = table.get("notes")) {
      const toml::table& list =
          as_table(*notes, "part.notes", "a table of notes { KEY = \"text\", ... }");
      // toml++ keeps keys sorted; the notes keep the order they were written in (line, then
      // column: an inline table holds them all on one line).
      using Position = std::pair<std::size_t, std::size_t>;
      std::vector<std::pair<Position, std::pair<std::string, std::string>>> written;
      for (auto&& [key, value] : list) {
        const std::string name = "part.notes." + key_text(key.str());
        const Position at{key.source().begin.line, key.source().begin.column};
        written.push_back({at, {std::string(key.str()), read_string(value, name, expected)}});
      }
      std::sort(written.begin(), written.end(),
                [](const auto& l, const auto& r) { return l.first < r.first; });
      for (auto& entry : written) part.notes.push_back(std::move(entry.second));
    }
    return part;
  }

  // ------------------------------------------------------------------ [decision]

  /// The decision rule (decide/characteristic.hpp): its word, the guard band (one length for
  /// every kind, or a table by kind) and the stated expanded uncertainty by kind with its
  /// coverage factor `k`. Lengths in the plan's unit; validate_plan checks their bounds.
  PlanDecision read_decision(const toml::node& node) const {
    const toml::table& table = as_table(node, "decision", "a [decision] table");
    check_keys(table, "decision", kDecisionKeys, "in [decision]");
    PlanDecision decision;
    decision.where = location_of(table, "decision");
    DecisionRule& rule = decision.rule;
    if (const toml::node* word = table.get("rule"))
      rule.kind = read_word(*word, "decision.rule", "decision rule",
                            "\"simple\", \"iso-14253-1\" or \"guard-band\"",
                            parse_decision_rule_word);
    if (const toml::node* band = table.get("guard_band")) {
      if (band->is_table())
        rule.guard_band = read_kind_lengths(*band, "decision.guard_band", kKindKeys);
      else {
        const double g = read_length(*band, "decision.guard_band",
                                     "a length (a number) or a table by kind { position = ... }");
        for (auto& value : rule.guard_band.values) value = g;
      }
    }
    if (const toml::node* budget = table.get("uncertainty")) {
      rule.stated_uncertainty =
          read_kind_lengths(*budget, "decision.uncertainty", kStatedUncertaintyKeys);
      if (const toml::node* k = budget->as_table()->get("k"))
        rule.coverage_factor =
            read_number(*k, "decision.uncertainty.k", "a coverage factor (a number)");
    }
    return decision;
  }

  /// A table of lengths by characteristic kind, e.g. { position = 0.0015, size = 0.0008 }.
  template <std::size_t N>
  PerKindLength read_kind_lengths(const toml::node& node, const std::string& path,
                                  const std::array<std::string_view, N>& allowed) const {
    const toml::table& table =
        as_table(node, path, "a table by kind { position = ..., size = ..., ... }");
    check_keys(table, path, allowed, "in " + path);
    PerKindLength lengths;
    for (auto&& [key, value] : table)
      if (const auto kind = parse_characteristic_kind_word(key.str()))
        lengths[*kind] =
            read_length(value, path + "." + std::string(key.str()), "a length (a number)");
    return lengths;
  }

  // ------------------------------------------------------------------ [audit]

  /// The mapping of another system's summary (audit_plan.hpp): column names as written, the
  /// summary's unit, the same-plane tolerance (a length in the plan's unit, > 0) and the
  /// summary file (relative to the plan's folder; its existence is checked when it is read).
  PlanAudit read_audit(const toml::node& node) const {
    const toml::table& table = as_table(node, "audit", "an [audit] table");
    check_keys(table, "audit", kAuditKeys, "in [audit]");
    PlanAudit audit;
    audit.line = line_of(table);
    if (const toml::node* summary = table.get("summary")) {
      const std::string given = read_string(*summary, "audit.summary", "a file path (a string)");
      if (given.empty()) fail(line_of(*summary), "audit.summary", "the summary path is empty");
      audit.summary = (base_ / std::filesystem::path(given)).lexically_normal();
    }
    if (const toml::node* units = table.get("units"))
      audit.units = read_word(*units, "audit.units", "unit", "\"mm\" or \"inch\"", parse_unit);
    if (const toml::node* t = table.get("same_plane_tolerance")) {
      const double value = read_length(*t, "audit.same_plane_tolerance", "a length (a number)");
      if (!(value > 0.0) || value > 1000.0)
        fail(line_of(*t), "audit.same_plane_tolerance",
             "expected a length above 0 (mm or the plan's unit), found " +
                 plan_number_text(value / mm_per_unit_));
      audit.same_plane_tolerance = value;
    }
    if (const toml::node* columns = table.get("columns")) {
      const toml::table& list =
          as_table(*columns, "audit.columns", "a table of columns { id = \"...\", dx = ... }");
      for (auto&& [key, value] : list) {
        const std::string name = "audit.columns." + key_text(key.str());
        const auto field = parse_summary_field(key.str());
        if (!field)
          fail(static_cast<std::size_t>(key.source().begin.line), name,
               "unknown summary field (allowed: id, dx, dy, x, y, z, position, diameter, "
               "verdict, dx2, dy2, x2, y2, z2)");
        const std::string column = read_string(value, name, "a column's header name (a string)");
        if (column.empty() || column.size() > 200)
          fail(line_of(value), name, "a column's header name must hold 1 to 200 characters");
        audit.columns[static_cast<std::size_t>(*field)] = column;
      }
    }
    return audit;
  }

  // ------------------------------------------------------------------ [uncertainty]

  /// The Monte Carlo study's defaults (docs/uncertainty.md): lengths in the plan's unit, each
  /// within its bounds here (a sigma above 0 and at most 1 mm, A at least 0 and at most 1 mm,
  /// K above 0, A and K together, trials from 2 to 10^7 or "adaptive", a seed from 0 to
  /// 2^63 - 1).
  PlanUncertainty read_uncertainty(const toml::node& node) const {
    const toml::table& table = as_table(node, "uncertainty", "an [uncertainty] table");
    check_keys(table, "uncertainty", kUncertaintyKeys, "in [uncertainty]");
    PlanUncertainty u;
    u.line = line_of(table);
    const auto length = [&](const char* name, const std::string& expected, bool zero_allowed) {
      const toml::node& value = *table.get(name);
      const std::string key = std::string("uncertainty.") + name;
      const double mm = read_length(value, key, expected);
      if (!(zero_allowed ? mm >= 0.0 : mm > 0.0) || mm > 1.0)
        fail(line_of(value), key,
             std::string("expected a length ") + (zero_allowed ? "of at least 0" : "above 0") +
                 " and at most 1 mm, found " + plan_number_text(mm / mm_per_unit_));
      return mm;
    };
    if (table.get("probing_sigma"))
      u.probing_sigma = length("probing_sigma", "the probing sigma (a number)", false);
    if (table.get("mpe_a")) u.mpe_a = length("mpe_a", "the length error's A (a number)", true);
    if (const toml::node* k = table.get("mpe_k")) {
      const double value = read_number(*k, "uncertainty.mpe_k", "the length error's K (a number)");
      if (!(value > 0.0) || !std::isfinite(value))
        fail(line_of(*k), "uncertainty.mpe_k",
             "expected K above 0 (E = A + L/K), found " + plan_number_text(value));
      u.mpe_k = value;
    }
    if (u.mpe_a.has_value() != u.mpe_k.has_value())
      fail(u.line, u.mpe_a ? "uncertainty.mpe_k" : "uncertainty.mpe_a",
           "the length error E = A + L/K needs both mpe_a and mpe_k");
    if (const toml::node* trials = table.get("trials")) {
      if (const auto* word = trials->as_string()) {
        if (word->get() != "adaptive")
          fail(line_of(*trials), "uncertainty.trials",
               "unknown trial count " + quoted_for_message(word->get()) +
                   ": expected a whole number or \"adaptive\"");
        u.adaptive = true;
      } else if (const auto* count = trials->as_integer()) {
        if (count->get() < 2 || count->get() > 10000000)
          fail(line_of(*trials), "uncertainty.trials",
               "expected 2 to 10000000 trials, found " + std::to_string(count->get()));
        u.trials = static_cast<std::size_t>(count->get());
      } else {
        fail(line_of(*trials), "uncertainty.trials",
             "expected a whole number or \"adaptive\", found " + type_text(*trials));
      }
    }
    if (const toml::node* seed = table.get("seed")) {
      const auto* value = seed->as_integer();
      if (!value)
        fail(line_of(*seed), "uncertainty.seed", "expected a whole number, found " + type_text(*seed));
      if (value->get() < 0)
        fail(line_of(*seed), "uncertainty.seed",
             "the seed must not be negative (found " + std::to_string(value->get()) + ")");
      u.seed = static_cast<std::uint64_t>(value->get());
    }
    return u;
  }

  std::string read_time(const toml::node& node) const {
    const std::string expected =
        "a date-time with a zone, e.g. 2026-12-02T17:40:00Z (a TOML offset date-time)";
    const auto* value = node.as_date_time();
    if (!value || !value->get().offset)
      fail(line_of(node), "part.time", "expected " + expected + ", found " + type_text(node) +
                                           (value ? " without a zone" : ""));
    const toml::date_time& t = value->get();
    char text[48];
    const int minutes = t.offset->minutes;
    if (minutes == 0)
      std::snprintf(text, sizeof text, "%04d-%02d-%02dT%02d:%02d:%02dZ", int(t.date.year),
                    int(t.date.month), int(t.date.day), int(t.time.hour), int(t.time.minute),
                    int(t.time.second));
    else
      std::snprintf(text, sizeof text, "%04d-%02d-%02dT%02d:%02d:%02d%c%02d:%02d",
                    int(t.date.year), int(t.date.month), int(t.date.day), int(t.time.hour),
                    int(t.time.minute), int(t.time.second), minutes < 0 ? '-' : '+',
                    std::abs(minutes) / 60, std::abs(minutes) % 60);
    return text;
  }

  std::filesystem::path file_;
  std::string file_name_;
  std::filesystem::path base_;
  bool check_files_ = true;
  double mm_per_unit_ = 1.0;
  bool scan_given_ = false;  ///< the plan has a [scan]: features may leave out `points`
};

}  // namespace

PartPlan parse_plan(std::string_view text, const std::filesystem::path& file, bool check_files) {
  PartPlan plan = PlanParser(file, check_files).parse(text);
  validate_plan(plan);
  plan.sha256 = detail::sha256_of_bytes(text);
  return plan;
}

}  // namespace cylzone
