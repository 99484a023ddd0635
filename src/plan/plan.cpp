#include "cylzone/plan/plan.hpp"
#include "io/detail/file_digest.hpp"

#include <toml++/toml.h>

#include <algorithm>
#include <array>
#include <cctype>
#include <cmath>
#include <fstream>
#include <iterator>
#include <sstream>
#include <system_error>
#include <utility>

#include "cylzone/core/errors.hpp"

// The plan format is documented for users in docs/plan.md; this file implements exactly that
// text. Every error names the plan file, the line of the offending key (toml++ source regions)
// and its dotted key path. Bores are named in key paths by their id, `bore[P3].position`, once
// the id is known; errors in the id itself, or in a bore without a usable id, use the 1-based
// index of the [[bore]] table, `bore[3].id`.

namespace cylzone {

std::string_view association_name(PlaneAssociation method) noexcept {
  switch (method) {
    case PlaneAssociation::tangent_least_squares: return "tangent-least-squares";
    case PlaneAssociation::tangent_minimax: return "tangent-minimax";
    case PlaneAssociation::least_squares: return "least-squares";
    case PlaneAssociation::minimum_zone: return "minimum-zone";
  }
  return "tangent-least-squares";
}

std::optional<PlaneAssociation> parse_association(std::string_view text) noexcept {
  for (PlaneAssociation m :
       {PlaneAssociation::tangent_least_squares, PlaneAssociation::tangent_minimax,
        PlaneAssociation::least_squares, PlaneAssociation::minimum_zone})
    if (text == association_name(m)) return m;
  return std::nullopt;
}

std::string_view axis_method_name(BoreAxisMethod method) noexcept {
  switch (method) {
    case BoreAxisMethod::mating_envelope: return "mating-envelope";
    case BoreAxisMethod::least_squares: return "least-squares";
    case BoreAxisMethod::median_line: return "median-line";
  }
  return "mating-envelope";
}

std::optional<BoreAxisMethod> parse_axis_method(std::string_view text) noexcept {
  for (BoreAxisMethod m : {BoreAxisMethod::mating_envelope, BoreAxisMethod::least_squares,
                           BoreAxisMethod::median_line})
    if (text == axis_method_name(m)) return m;
  return std::nullopt;
}

const PlanDatum* PartPlan::datum(char label) const noexcept {
  for (const PlanDatum& d : datums)
    if (d.label == label) return &d;
  return nullptr;
}

namespace {

constexpr std::string_view kFormat = "cylzone-plan-1";

std::string in_quotes(std::string_view text) { return "\"" + std::string(text) + "\""; }

std::string number_text(double value, int significant_digits = 12) {
  std::ostringstream out;
  out.precision(significant_digits);
  out << value;
  return out.str();
}

std::string join_path(const std::string& path, std::string_view name) {
  return path.empty() ? std::string(name) : path + "." + std::string(name);
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
constexpr auto kRootKeys = keys("format", "name", "units", "probe", "datum", "bore");
constexpr auto kProbeKeys = keys("points", "tip_diameter");
constexpr auto kDatumAKeys = keys("feature", "points", "association", "material_side");
constexpr auto kDatumBKeys = keys("feature", "points", "size", "mmb");
constexpr auto kDatumCSizeKeys = keys("feature", "points", "basic", "size", "mmb");
constexpr auto kDatumCPlaneKeys = keys("feature", "points", "outward_normal", "material_side");
constexpr auto kDatumCAnyKeys =
    keys("feature", "points", "basic", "size", "mmb", "outward_normal", "material_side");
constexpr auto kBoreKeys = keys("id", "points", "basic", "direction", "depth", "size", "axis",
                                "position", "perpendicularity", "cylindricity");
constexpr auto kSizeKeys = keys("lower", "upper");
constexpr auto kDepthKeys = keys("top", "bottom");
constexpr auto kPositionKeys = keys("tolerance", "modifier", "datums", "projected");
constexpr auto kPerpendicularityKeys = keys("tolerance", "modifier", "datums");

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

    // `format` first: a TOML file that is not a plan at all gets the most useful message.
    const toml::node& format = require(root, "", "format", "the plan format " + in_quotes(kFormat));
    const std::string format_text = read_string(format, "format", "a string");
    if (format_text != kFormat)
      fail(
          line_of(format), "format",
          "unsupported plan format " + in_quotes(format_text) + ": expected " + in_quotes(kFormat));
    check_keys(root, "", kRootKeys, "at the top level");

    const toml::node& name = require(root, "", "name", "the part's name (a string)");
    plan.name = read_string(name, "name", "the part's name (a string)");
    if (plan.name.find_first_not_of(" \t") == std::string::npos)
      fail(line_of(name), "name", "the part's name must not be empty");

    const toml::node& units = require(root, "", "units", "\"mm\" or \"inch\"");
    const std::string unit_text = read_string(units, "units", "\"mm\" or \"inch\"");
    const std::optional<LengthUnit> unit = parse_unit(unit_text);
    if (!unit)
      fail(line_of(units), "units",
           "unknown unit " + in_quotes(unit_text) + ": expected \"mm\" or \"inch\"");
    plan.unit = *unit;
    mm_per_unit_ = millimetres_per(*unit);

    if (const toml::node* probe = root.get("probe")) plan.probe = read_probe(*probe);
    read_datums(root, plan);
    read_bores(root, plan);
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
      fail(static_cast<std::size_t>(first->source().begin.line), join_path(path, first->str()),
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
      fail(line_of(node), key, "expected " + expected + ", found " + number_text(value));
    return value;
  }

  /// A length in the plan's unit, returned in millimetres.
  double read_length(const toml::node& node, const std::string& key,
                     const std::string& expected) const {
    return read_number(node, key, expected) * mm_per_unit_;
  }

  /// A length that must be > 0: tolerances, heights, the tip diameter.
  double read_positive_length(const toml::node& node, const std::string& key,
                              const std::string& what) const {
    const double value = read_number(node, key, what + " (a number)");
    if (!(value > 0.0))
      fail(line_of(node), key,
           what + " must be greater than zero (found " + number_text(value) + ")");
    return value * mm_per_unit_;
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
    const double length = v.norm();
    if (!(length > 1e-12)) fail(line_of(node), key, "direction has zero length");
    return v / length;
  }

  std::filesystem::path read_points_path(const toml::table& table, const std::string& path) const {
    const std::string key = join_path(path, "points");
    const toml::node& node =
        require(table, path, "points", "the path of the point file (a string)");
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
             "point file " + resolved.string() + " cannot be accessed: " + ec.message());
      if (!std::filesystem::exists(status))
        fail(line_of(node), key,
             "point file " + resolved.string() +
                 " does not exist (paths are relative to the plan's folder)");
      if (std::filesystem::is_directory(status))
        fail(line_of(node), key, resolved.string() + " is a folder, not a point file");
    }
    return resolved;
  }

  SizeLimits read_size(const toml::node& node, const std::string& key) const {
    const std::string expected = "limits of size { lower = ..., upper = ... }";
    const toml::table& table = as_table(node, key, expected);
    check_keys(table, key, kSizeKeys, "in a size");
    const toml::node& lower = require(table, key, "lower", "the lower limit of size (a number)");
    const toml::node& upper = require(table, key, "upper", "the upper limit of size (a number)");
    const double lo = read_number(lower, key + ".lower", "the lower limit of size (a number)");
    const double up = read_number(upper, key + ".upper", "the upper limit of size (a number)");
    if (!(lo > 0.0))
      fail(line_of(lower), key + ".lower",
           "the lower limit of size must be greater than zero (found " + number_text(lo) + ")");
    if (!(lo < up))
      fail(line_of(table), key,
           "the lower limit " + number_text(lo) + " must be less than the upper limit " +
               number_text(up));
    return SizeLimits{lo * mm_per_unit_, up * mm_per_unit_};
  }

  // ------------------------------------------------------------------ [probe]

  ProbeSettings read_probe(const toml::node& node) const {
    const toml::table& table = as_table(node, "probe", "a [probe] table");
    check_keys(table, "probe", kProbeKeys, "in [probe]");
    ProbeSettings probe;
    if (const toml::node* points = table.get("points")) {
      const std::string expected = "\"surface\" or \"ball-centre\"";
      const std::string value = read_string(*points, "probe.points", expected);
      if (value == "ball-centre")
        fail(line_of(*points), "probe.points",
             "probe compensation of ball-centre points is not yet supported: export compensated "
             "surface points");
      if (value != "surface")
        fail(line_of(*points), "probe.points",
             "unknown kind of points " + in_quotes(value) + ": expected " + expected);
    }
    if (const toml::node* tip = table.get("tip_diameter"))
      probe.tip_diameter = read_positive_length(*tip, "probe.tip_diameter", "the tip diameter");
    return probe;
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
    if (const toml::node* c = datums.get("C")) {
      if (!datums.get("B"))
        fail(line_of(*c), "datum.C",
             "datum C needs datum B: C clocks the frame about B's axis (define [datum.B], or "
             "name this datum B)");
      plan.datums.push_back(read_datum(*c, 'C'));
    }
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
    else if (peeked == "bore" || peeked == "pin" || peeked == "slot" || peeked == "tab")
      check_keys(table, path, kDatumCSizeKeys, "for datum C as a " + peeked);
    else
      check_keys(table, path, kDatumCAnyKeys, "for datum C");

    PlanDatum d;
    d.label = label;
    d.where = {line_of(table), path};

    const std::string feature_key = path + ".feature";
    const std::string allowed_text =
        label == 'A'   ? "\"plane\""
        : label == 'B' ? "\"bore\" or \"pin\""
                       : "\"bore\", \"pin\", \"slot\", \"tab\" or \"plane\"";
    const toml::node& feature = require(table, path, "feature", allowed_text);
    const std::string kind = read_string(feature, feature_key, allowed_text);
    const bool width = kind == "slot" || kind == "tab";
    if (kind == "plane" && label != 'B')
      d.kind = FeatureKind::plane;
    else if (kind == "bore" && label != 'A')
      d.kind = FeatureKind::bore;
    else if (kind == "pin" && label != 'A')
      d.kind = FeatureKind::pin;
    else if (kind == "slot" && label == 'C')
      d.kind = FeatureKind::slot;
    else if (kind == "tab" && label == 'C')
      d.kind = FeatureKind::tab;
    else if (label == 'A' && (kind == "bore" || kind == "pin" || width))
      fail(line_of(feature), feature_key,
           "datum A must be a plane: the frame is built on a primary datum plane (found " +
               in_quotes(kind) + ")");
    else if (label == 'B' && (kind == "plane" || width))
      fail(line_of(feature), feature_key,
           "datum B must be a bore or a pin: it locates the frame's origin with its axis (found " +
               in_quotes(kind) + ")");
    else
      fail(line_of(feature), feature_key,
           "unknown feature " + in_quotes(kind) + ": expected " + allowed_text);

    d.points = read_points_path(table, path);

    if (const toml::node* association = table.get("association")) {
      const std::string expected =
          "\"tangent-least-squares\", \"tangent-minimax\", \"least-squares\" or "
          "\"minimum-zone\"";
      const std::string value = read_string(*association, path + ".association", expected);
      const std::optional<PlaneAssociation> method = parse_association(value);
      if (!method)
        fail(line_of(*association), path + ".association",
             "unknown association " + in_quotes(value) + ": expected " + expected);
      d.association = *method;
    }
    if (const toml::node* side = table.get("material_side"))
      d.material_side = read_direction<3>(*side, path + ".material_side",
                                          "a direction [x, y, z] in measurement coordinates");

    if (const toml::node* size = table.get("size")) d.size = read_size(*size, path + ".size");
    if (const toml::node* mmb = table.get("mmb")) {
      const std::string key = path + ".mmb";
      const double value = read_positive_length(*mmb, key, "the maximum material boundary");
      if (!d.size)
        fail(line_of(*mmb), key,
             "mmb is given without size: give the limits of size too, size = { lower = ..., "
             "upper = ... }");
      // The MMB of a datum feature of size is its MMC size or, with an orientation or location
      // tolerance at MMC, its virtual condition: never larger than MMC for a bore, never smaller
      // for a pin (ASME Y14.5-2018, datum feature simulators; common practice).
      // A slot follows the rule of a bore, a tab that of a pin.
      const double mmc = d.size->mmc(d.kind);
      const double tol = 1e-12 * std::max(1.0, mmc);
      const std::string kind_text(feature_kind_name(d.kind));
      if (!is_external(d.kind) && value > mmc + tol)
        fail(line_of(*mmb), key,
             "the MMB of a " + kind_text + " must not exceed its MMC size (lower limit " +
                 number_text(mmc / mm_per_unit_) + "), found " + number_text(value / mm_per_unit_));
      if (is_external(d.kind) && value < mmc - tol)
        fail(line_of(*mmb), key,
             "the MMB of a " + kind_text + " must not be below its MMC size (upper limit " +
                 number_text(mmc / mm_per_unit_) + "), found " + number_text(value / mm_per_unit_));
      d.mmb_size = value;
    }

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
      if (!(d.basic_location->norm() > 1e-9))
        fail(line_of(basic), key,
             "the basic location of C must not be at datum B's axis (the origin): C clocks the "
             "frame by its direction from B");
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
      plan.bores.push_back(read_bore(*array->get(i)->as_table(), i + 1, plan));
  }

  PlanBore read_bore(const toml::table& table, std::size_t index, const PartPlan& plan) const {
    const std::string index_path = "bore[" + std::to_string(index) + "]";

    // The key path names the bore by its id when it has a usable one (see the file comment).
    std::string path = index_path;
    if (const toml::node* id = table.get("id"))
      if (const auto* s = id->as_string(); s && valid_id(s->get())) path = "bore[" + s->get() + "]";
    check_keys(table, path, kBoreKeys, "in a [[bore]]");

    PlanBore bore;
    const std::string id_key = index_path + ".id";
    const toml::node& id = require(table, index_path, "id", "the bore's identifier (a string)");
    bore.id = read_string(id, id_key, "the bore's identifier (a string)");
    if (!valid_id(bore.id))
      fail(line_of(id), id_key,
           "the bore's identifier must be non-empty, without control characters or leading or "
           "trailing spaces (found " +
               in_quotes(bore.id) + ")");
    for (std::size_t j = 0; j < plan.bores.size(); ++j)
      if (plan.bores[j].id == bore.id)
        fail(line_of(id), id_key,
             "duplicate bore id " + in_quotes(bore.id) + ": already used by bore " +
                 std::to_string(j + 1) + " (line " + std::to_string(plan.bores[j].where.line) +
                 ")");
    bore.where = {line_of(table), path};

    bore.points = read_points_path(table, path);

    const toml::node& basic =
        require(table, path, "basic", "the true position [x, y] on datum plane A");
    bore.basic_location =
        read_vector<2>(basic, path + ".basic", "the true position [x, y] (2 numbers)") *
        mm_per_unit_;

    const toml::node* direction = table.get("direction");
    if (direction) {
      const std::string key = path + ".direction";
      Eigen::Vector3d d = read_direction<3>(*direction, key, "a direction [x, y, z] in the frame");
      // A bore's axis must cross A, where its true position is given.
      if (std::abs(d.z()) < 1e-6)
        fail(line_of(*direction), key,
             "the direction lies in datum plane A: a bore's axis must cross A, where its basic "
             "location is given");
      // The sense of an axis carries no information; it is stored pointing out of the material
      // (+z), the sense of the default and of the zone frame's heights.
      if (d.z() < 0.0) d = -d;
      bore.nominal_direction = d;
    }

    if (const toml::node* depth = table.get("depth")) read_depth(*depth, path + ".depth", bore);
    if (const toml::node* size = table.get("size")) bore.size = read_size(*size, path + ".size");

    if (const toml::node* axis = table.get("axis")) {
      const std::string expected = "\"mating-envelope\", \"least-squares\" or \"median-line\"";
      const std::string value = read_string(*axis, path + ".axis", expected);
      const std::optional<BoreAxisMethod> method = parse_axis_method(value);
      if (!method)
        fail(line_of(*axis), path + ".axis",
             "unknown axis " + in_quotes(value) + ": expected " + expected);
      bore.axis = *method;
    }

    if (const toml::node* position = table.get("position"))
      bore.position =
          read_tolerance(*position, path + ".position", ToleranceKind::position, plan, bore);
    if (const toml::node* perpendicularity = table.get("perpendicularity")) {
      bore.perpendicularity = read_tolerance(*perpendicularity, path + ".perpendicularity",
                                             ToleranceKind::perpendicularity, plan, bore);
      // Perpendicularity is an orientation tolerance at 90 degrees to A; an inclined nominal
      // axis would call for angularity (ASME Y14.5-2018; ISO 1101:2017), which cylzone does
      // not evaluate.
      const Eigen::Vector3d& d = bore.nominal_direction;
      const double inclination = std::atan2(std::hypot(d.x(), d.y()), d.z());
      if (inclination > 1e-9)
        fail(line_of(*perpendicularity), path + ".perpendicularity",
             "perpendicularity needs a nominal direction perpendicular to A, but direction (line " +
                 std::to_string(line_of(*direction)) + ") is inclined " +
                 number_text(inclination * 180.0 / 3.14159265358979323846, 4) +
                 " degrees from A's normal");
    }
    if (const toml::node* cylindricity = table.get("cylindricity"))
      bore.cylindricity =
          read_positive_length(*cylindricity, path + ".cylindricity", "the cylindricity tolerance");

    if (!bore.position && !bore.perpendicularity && !bore.cylindricity)
      fail(line_of(table), path,
           "the bore has no tolerance: give position, perpendicularity or cylindricity");
    return bore;
  }

  static bool valid_id(const std::string& id) {
    if (id.empty() || id.front() == ' ' || id.back() == ' ') return false;
    for (unsigned char c : id)
      if (std::iscntrl(c)) return false;
    return true;
  }

  void read_depth(const toml::node& node, const std::string& key, PlanBore& bore) const {
    const toml::table& table =
        as_table(node, key, "a depth range { top = ..., bottom = ... } (z in the frame)");
    check_keys(table, key, kDepthKeys, "in a depth range");
    const toml::node* top = table.get("top");
    const toml::node* bottom = table.get("bottom");
    if (!top && !bottom)
      fail(line_of(table), key, "the depth range is empty: give top, bottom or both");
    if (top) bore.depth_top = read_length(*top, key + ".top", "the top of the range (a number)");
    if (bottom)
      bore.depth_bottom =
          read_length(*bottom, key + ".bottom", "the bottom of the range (a number)");
    if (top && bottom && !(*bore.depth_top > *bore.depth_bottom))
      fail(line_of(table), key,
           "top " + number_text(*bore.depth_top / mm_per_unit_) + " must be greater than bottom " +
               number_text(*bore.depth_bottom / mm_per_unit_) +
               " (z in the frame, negative inside the material)");
  }

  PlanTolerance read_tolerance(const toml::node& node, const std::string& key, ToleranceKind kind,
                               const PartPlan& plan, const PlanBore& bore) const {
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
    t.where = {line_of(table), key};
    const toml::node& tolerance =
        require(table, key, "tolerance", "the diameter of the tolerance zone (a number)");
    // Zero is allowed here and checked against the modifier below: "0 at MMC" is legitimate
    // zero tolerancing at MMC (ASME Y14.5-2018, from memory for the section), the whole zone
    // coming from the bonus.
    t.tolerance = read_length(tolerance, key + ".tolerance", "the tolerance (a number)");
    if (!(t.tolerance >= 0.0))
      fail(line_of(tolerance), key + ".tolerance",
           "the tolerance must not be negative (found " +
               number_text(t.tolerance / mm_per_unit_) + ")");

    if (const toml::node* modifier = table.get("modifier")) {
      const std::string expected = "\"RFS\", \"MMC\" or \"LMC\"";
      const std::string value = read_string(*modifier, key + ".modifier", expected);
      if (value == "RFS")
        t.condition = MaterialCondition::rfs;
      else if (value == "MMC")
        t.condition = MaterialCondition::mmc;
      else if (value == "LMC")
        t.condition = MaterialCondition::lmc;
      else
        fail(line_of(*modifier), key + ".modifier",
             "unknown modifier " + in_quotes(value) + ": expected " + expected);
      // MMC/LMC give a bonus from the bore's actual size: its limits must be known
      // (ASME Y14.5-2018; ISO 2692:2021).
      if (t.condition != MaterialCondition::rfs && !bore.size)
        fail(line_of(*modifier), key + ".modifier",
             "a tolerance at " + std::string(condition_name(t.condition)) +
                 " needs the bore's limits of size: give size = { lower = ..., upper = ... }");
    }

    if (t.tolerance == 0.0 && t.condition == MaterialCondition::rfs)
      fail(line_of(tolerance), key + ".tolerance",
           "the tolerance must be greater than zero (found 0); a zero tolerance is only "
           "meaningful at MMC or LMC");

    if (is_position) {
      const toml::node& datums =
          require(table, key, "datums", "the datum reference, e.g. \"A|B|C\" (a string)");
      t.datums = read_datum_references(datums, key + ".datums", plan);
      if (const toml::node* projected = table.get("projected")) {
        t.projected_height =
            read_positive_length(*projected, key + ".projected", "the projected height");
        // A projected zone extends the axis of the feature as a straight line beyond A; a
        // derived median line is not straight and cannot be projected (ISO 1101:2017).
        if (bore.axis == BoreAxisMethod::median_line)
          fail(line_of(*projected), key + ".projected",
               "a projected tolerance zone needs a straight axis: not available with axis = "
               "\"median-line\"");
      }
    } else {
      // Perpendicularity in cylzone is always to datum plane A.
      if (const toml::node* datums = table.get("datums")) {
        const std::string value = read_string(*datums, key + ".datums", "\"A\"");
        if (value != "A")
          fail(line_of(*datums), key + ".datums",
               "perpendicularity is always to datum A: datums must be \"A\" (found " +
                   in_quotes(value) + ")");
      }
      t.datums = {DatumReference{'A', MaterialBoundary::rmb}};
    }
    return t;
  }

  /// The datum section of a feature control frame: "A", "A|B", "A|B|C", each of B and C
  /// optionally followed by (M) (MMB) or (L) (LMB), and C by (T) (translating). cylzone's frame is A (plane, primary), B
  /// (origin), C (clocking), so that is the only order (ASME Y14.5-2018; ISO 5459:2011).
  std::vector<DatumReference> read_datum_references(const toml::node& node, const std::string& key,
                                                    const PartPlan& plan) const {
    const std::string text =
        read_string(node, key, "the datum reference, e.g. \"A|B|C\" (a string)");
    const std::size_t line = line_of(node);
    std::string defined;
    for (const PlanDatum& d : plan.datums) {
      if (!defined.empty()) defined += ", ";
      defined += d.label;
    }

    std::vector<DatumReference> refs;
    std::size_t start = 0;
    while (true) {
      const std::size_t bar = text.find('|', start);
      std::string part =
          text.substr(start, bar == std::string::npos ? std::string::npos : bar - start);
      const std::size_t first = part.find_first_not_of(' ');
      const std::size_t last = part.find_last_not_of(' ');
      part = first == std::string::npos ? std::string() : part.substr(first, last - first + 1);

      DatumReference ref;
      if (part.empty())
        fail(line, key,
             "empty datum in " + in_quotes(text) + ": expected \"A\", \"A|B\" or \"A|B|C\"");
      const bool letter = part[0] >= 'A' && part[0] <= 'Z';
      std::string rest = part.substr(1);
      // "(T)" last: datum C's simulator translates (docs/plan.md); the default keeps it fixed
      // at its basic location.
      if (rest.size() >= 3 && rest.compare(rest.size() - 3, 3, "(T)") == 0) {
        ref.translating = true;
        rest.erase(rest.size() - 3);
      }
      if (!letter || !(rest.empty() || rest == "(M)" || rest == "(L)"))
        fail(line, key,
             in_quotes(part) +
                 " is not a datum reference: expected a datum letter, optionally "
                 "followed by (M) or (L) and, for C, (T), e.g. \"A|B(M)|C\"");
      if (ref.translating && part[0] != 'C')
        fail(line, key,
             in_quotes(part) + ": the translating simulator (T) applies to datum C only");
      ref.label = part[0];
      ref.boundary = rest == "(M)"   ? MaterialBoundary::mmb
                     : rest == "(L)" ? MaterialBoundary::lmb
                                     : MaterialBoundary::rmb;

      const PlanDatum* datum = plan.datum(ref.label);
      if (!datum)
        fail(line, key,
             std::string("datum ") + ref.label + " is not defined (defined: " + defined + ")");
      for (const DatumReference& r : refs)
        if (r.label == ref.label)
          fail(line, key, std::string("datum ") + ref.label + " is repeated in " + in_quotes(text));
      const char expected_label = "ABC"[refs.size()];
      if (ref.label != expected_label)
        fail(line, key,
             "datum order must be A first, then B, then C: expected \"A\", \"A|B\" or \"A|B|C\" "
             "(found " +
                 in_quotes(text) + ")");
      if (ref.translating && datum->kind == FeatureKind::plane)
        fail(line, key,
             "datum C is a plane, not a feature of size: it takes no (T) modifier");
      if (ref.boundary != MaterialBoundary::rmb) {
        const std::string modifier = ref.boundary == MaterialBoundary::mmb ? "(M)" : "(L)";
        if (datum->kind == FeatureKind::plane)
          fail(line, key,
               std::string("datum ") + ref.label +
                   " is a plane, not a feature of size: it takes "
                   "no " +
                   modifier + " modifier");
        if (!datum->size)
          fail(line, key,
               std::string("datum ") + ref.label + " is referenced at " +
                   std::string(boundary_name(ref.boundary)) + " but [datum." + ref.label +
                   "] has no size: give size = { lower = ..., upper = ... }");
      }
      refs.push_back(ref);
      if (bar == std::string::npos) break;
      start = bar + 1;
    }
    return refs;
  }

  std::filesystem::path file_;
  std::string file_name_;
  std::filesystem::path base_;
  bool check_files_ = true;
  double mm_per_unit_ = 1.0;
};

}  // namespace

PartPlan parse_plan(std::string_view text, const std::filesystem::path& file, bool check_files) {
  PartPlan plan = PlanParser(file, check_files).parse(text);
  plan.sha256 = detail::sha256_of_bytes(text);
  return plan;
}

PartPlan read_plan(const std::filesystem::path& file) {
  std::error_code ec;
  const std::filesystem::file_status status = std::filesystem::status(file, ec);
  if (!std::filesystem::exists(status))
    throw InputError(file.string(), 0, "plan file does not exist");
  if (std::filesystem::is_directory(status))
    throw InputError(file.string(), 0, "is a folder, not a plan file");
  std::ifstream in(file, std::ios::binary);
  if (!in) throw InputError(file.string(), 0, "cannot open the plan file for reading");
  std::string text((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
  if (in.bad()) throw InputError(file.string(), 0, "error while reading the plan file");
  return parse_plan(text, file, true);
}

}  // namespace cylzone
