// The rules of a part plan (validate_plan.hpp, docs/plan.md). Every message names the plan
// file, the line where the value was written (recorded by the reader in PlanLocation::lines;
// 0 for a plan built in code) and the key path, and quotes user text with quoted_for_message.
#include "cylzone/plan/validate_plan.hpp"

#include <Eigen/LU>

#include <algorithm>
#include <cctype>
#include <cmath>
#include <optional>
#include <string>
#include <vector>

#include "cylzone/core/errors.hpp"
#include "plan/detail/plan_text.hpp"

namespace cylzone {
namespace {

using detail::plan_number_text;

constexpr double pi = 3.14159265358979323846;
/// Why a stated U above a tolerance is warned about (docs/plan.md, rule 37).
constexpr const char* kNoConformance =
    "under the ISO 14253-1 rule no such value can be proven to conform";

/// Checks one plan; holds the file name and unit that every message needs.
class PlanRules {
 public:
  explicit PlanRules(const PartPlan& plan)
      : plan_(plan),
        file_name_(plan.file.string()),
        mm_per_unit_(millimetres_per(plan.unit)),
        unit_(unit_name(plan.unit)) {}

  /// Checks every rule; returns the plausibility warnings (one line each).
  std::vector<std::string> check() {
    const PlanLocation& top = plan_.where;
    if (plan_.name.find_first_not_of(" \t") == std::string::npos)
      fail(top.at("name"), "the part's name must not be empty");
    check_probe();
    if (plan_.section_gap)
      positive_length(*plan_.section_gap, top.at("section_gap"), "the section gap");
    check_sampling(plan_.sampling, top, "sampling");
    check_datums();
    check_bores();
    check_scan();
    check_part_identity();
    check_decision();
    return std::move(warnings_);
  }

 private:
  [[noreturn]] void fail(const PlanLocation& at, const std::string& problem) const {
    throw InputError(file_name_, at.line, problem, at.key);
  }

  /// A plausibility warning: "key (line N): message", the line left out for a plan built in code.
  void warn(const PlanLocation& at, const std::string& message) const {
    warnings_.push_back(at.key +
                        (at.line > 0 ? " (line " + std::to_string(at.line) + ")" : std::string()) +
                        ": " + message);
  }

  /// A length as written in the plan (its unit), for messages.
  std::string shown(double mm) const { return plan_number_text(mm / mm_per_unit_); }

  void bounded_length(double value, const PlanLocation& at, const std::string& what) const {
    if (!(std::abs(value) <= plan_length_limit))
      fail(at, what + " is beyond the plan's bound of 10 m (" +
                   plan_number_text(plan_length_limit) + " mm) in magnitude: found " +
                   shown(value) + " " + unit_);
  }

  void positive_length(double value, const PlanLocation& at, const std::string& what) const {
    if (!(value > 0.0))
      fail(at, what + " must be greater than zero (found " + shown(value) + ")");
    bounded_length(value, at, what);
  }

  /// Sampling thresholds (evaluate/sampling_coverage.hpp): a section circle needs 3 points, so
  /// asking for fewer is meaningless; a coverage is an arc of (0, 360] degrees; the
  /// magnification is at least 1 by definition (the range joined with the span is never shorter
  /// than the span); the upper bounds refuse a value typed in the wrong place.
  void check_sampling(const PlanSampling& s, const PlanLocation& at, const std::string& table) const {
    if (s.min_section_points && (*s.min_section_points < 3 || *s.min_section_points > 100000))
      fail(at.at(table + ".min_section_points"),
           "the least number of points per section must be from 3 (a circle needs 3) to 100000 "
           "(found " + std::to_string(*s.min_section_points) + ")");
    if (s.min_coverage_deg && !(*s.min_coverage_deg > 0.0 && *s.min_coverage_deg <= 360.0))
      fail(at.at(table + ".min_coverage"),
           "the least angular coverage must be above 0 and at most 360 degrees (found " +
               plan_number_text(*s.min_coverage_deg) + ")");
    if (s.max_magnification && !(*s.max_magnification >= 1.0 && *s.max_magnification <= 1000.0))
      fail(at.at(table + ".max_magnification"),
           "the largest magnification must be from 1 (no extrapolation) to 1000 (found " +
               plan_number_text(*s.max_magnification) + ")");
  }

  void below_tolerance_ceiling(double value, const PlanLocation& at,
                               const std::string& what) const {
    if (!(value <= plan_tolerance_limit))
      fail(at, what + " exceeds the plan's ceiling of " + plan_number_text(plan_tolerance_limit) +
                   " mm: found " + shown(value) + " " + unit_);
  }

  template <class Vector>
  void unit_direction(const Vector& v, const PlanLocation& at) const {
    const double length = v.norm();
    if (!v.allFinite()) fail(at, "the direction must be finite");
    if (!(length > 1e-12)) fail(at, "direction has zero length");
    if (std::abs(length - 1.0) > 1e-9)
      fail(at, "the direction must be a unit vector (found length " + plan_number_text(length) +
                   ")");
  }

  template <class Vector>
  void bounded_location(const Vector& v, const PlanLocation& at, const std::string& what) const {
    for (Eigen::Index i = 0; i < v.size(); ++i)
      bounded_length(v[i], at, what + " (element " + std::to_string(i + 1) + ")");
  }

  void check_size(const SizeLimits& size, const PlanLocation& at) const {
    if (!(size.lower > 0.0))
      fail(at.at("lower"), "the lower limit of size must be greater than zero (found " +
                               shown(size.lower) + ")");
    if (!(size.lower < size.upper))
      fail(at, "the lower limit " + shown(size.lower) + " must be less than the upper limit " +
                   shown(size.upper));
    bounded_length(size.upper, at.at("upper"), "the upper limit of size");
  }

  // ---- Raw probe points: tip diameters, and ball centres only with a tip to compensate by.

  void check_probe() const {
    const PlanLocation& top = plan_.where;
    // 0 means "not given" (ProbeSettings); the reader refuses a written 0.
    if (plan_.probe.tip_diameter != 0.0)
      positive_length(plan_.probe.tip_diameter, top.at("probe.tip_diameter"), "the tip diameter");
    for (const PlanDatum& d : plan_.datums)
      check_feature_probe(d.probe, d.where, std::string("datum ") + d.label,
                          d.kind == FeatureKind::bore && d.size ? std::optional<double>(d.size->lower)
                                                                : std::nullopt);
    for (const PlanBore& b : plan_.bores)
      check_feature_probe(b.probe, b.where, "bore " + b.id,
                          b.size ? std::optional<double>(b.size->lower) : std::nullopt);
  }

  /// One feature's probe settings; `smallest_hole` is a hole's lower limit of size, which the
  /// stylus ball must pass.
  void check_feature_probe(const ProbeOverrides& own, const PlanLocation& where,
                           const std::string& feature, std::optional<double> smallest_hole) const {
    if (own.tip_diameter)
      positive_length(*own.tip_diameter, where.at("probe.tip_diameter"),
                      "the tip diameter of " + feature);
    const ProbeSettings probe = resolved_probe(plan_.probe, own);
    if (!probe.ball_centres) return;
    const PlanLocation at = own.ball_centres ? where.at("probe.points")
                                             : plan_.where.at("probe.points");
    if (!(probe.tip_diameter > 0.0))
      fail(at, feature + "'s points are ball centres but no tip diameter is given: "
                         "compensation needs probe.tip_diameter");
    if (smallest_hole && probe.tip_diameter >= *smallest_hole)
      fail(own.tip_diameter ? where.at("probe.tip_diameter") : plan_.where.at("probe.tip_diameter"),
           "the tip diameter " + shown(probe.tip_diameter) + " " + unit_ + " does not fit " +
               feature + " (lower limit of size " + shown(*smallest_hole) + " " + unit_ + ")");
  }

  // ---------------------------------------------------------------- datums

  void check_datums() const {
    const std::vector<PlanDatum>& datums = plan_.datums;
    if (datums.empty() || datums.front().label != 'A')
      fail(plan_.where.at("datum.A"),
           "required table is missing: expected [datum.A], the primary datum plane");
    for (std::size_t i = 0; i < datums.size(); ++i) {
      const PlanDatum& d = datums[i];
      const PlanLocation at = located(d);
      const bool known = d.label == 'A' || d.label == 'B' || d.label == 'C';
      if (!known || (i > 0 && d.label <= datums[i - 1].label))
        fail(at, "datums are A (primary plane), then B (secondary), then C (tertiary), each once");
      if (d.label == 'C' && !plan_.datum('B'))
        fail(at, "datum C needs datum B: C clocks the frame about B's axis (define [datum.B], or "
                 "name this datum B)");
      check_datum(d, at);
    }
  }

  PlanLocation located(const PlanDatum& d) const {
    if (!d.where.key.empty()) return d.where;
    PlanLocation at = d.where;
    at.key = std::string("datum.") + d.label;
    return at;
  }

  void check_datum(const PlanDatum& d, const PlanLocation& at) const {
    const std::string kind = quoted_for_message(feature_kind_name(d.kind));
    if (d.label == 'A' && d.kind != FeatureKind::plane)
      fail(at.at("feature"),
           "datum A must be a plane: the frame is built on a primary datum plane (found " + kind +
               ")");
    if (d.label == 'B' && d.kind != FeatureKind::bore && d.kind != FeatureKind::pin)
      fail(at.at("feature"),
           "datum B must be a bore or a pin: it locates the frame's origin with its axis (found " +
               kind + ")");
    if (d.points.empty() && !plan_.scan)
      fail(at.at("points"), "the path of the point file is empty");
    if (d.material_side) unit_direction(*d.material_side, at.at("material_side"));
    if (d.size) check_size(*d.size, at.at("size"));
    if (d.mmb_size) check_mmb(d, at.at("mmb"));

    if (d.label == 'C' && d.kind != FeatureKind::plane) {
      const PlanLocation basic = at.at("basic");
      if (!d.basic_location)
        fail(basic, "required key is missing: expected the basic location [x, y] of C in the "
                    "frame");
      bounded_location(*d.basic_location, basic, "the basic location of C");
      if (!(d.basic_location->norm() > 1e-9))
        fail(basic,
             "the basic location of C must not be at datum B's axis (the origin): C clocks the "
             "frame by its direction from B");
    }
    if (d.label == 'C' && d.kind == FeatureKind::plane) {
      const PlanLocation normal = at.at("outward_normal");
      if (!d.outward_normal)
        fail(normal, "required key is missing: expected the direction [x, y] of C's outward "
                     "normal in the frame");
      unit_direction(*d.outward_normal, normal);
    }
  }

  // ---------------------------------------------------------------- [scan]

  /// The whole-part cloud and the nominal shape of every feature that takes points from it
  /// (docs/plan.md, "[scan]"): without a shape there is no band to take points from.
  void check_scan() const {
    for (const PlanDatum& d : plan_.datums) check_nominal_datum(d, located(d));
    for (const PlanBore& b : plan_.bores) {
      PlanLocation at = b.where;
      if (at.key.empty()) at.key = "bore[" + b.id + "]";
      check_nominal_bore(b, at);
    }
    if (!plan_.scan) return;
    const PlanScan& scan = *plan_.scan;
    PlanLocation at = scan.where;
    if (at.key.empty()) at.key = "scan";
    if (scan.points.empty()) fail(at.at("points"), "the path of the point file is empty");
    positive_length(scan.segment.band, at.at("band"), "the band's half-width");
    if (scan.segment.margin && !(*scan.segment.margin >= 0.0))
      fail(at.at("margin"), "the margin must not be negative (found " +
                                shown(*scan.segment.margin) + ")");
    if (scan.segment.margin) bounded_length(*scan.segment.margin, at.at("margin"), "the margin");
    const double agreement = scan.segment.normal_agreement_deg;
    if (!(agreement > 0.0 && agreement <= 90.0))
      fail(at.at("normal_agreement"),
           "the normal agreement is an angle in degrees greater than 0 and at most 90 (found " +
               plan_number_text(agreement) + ")");
    check_placement(scan.placement, at.at("placement"));
    if (scan.find_placement) {
      // Finding a placement needs the whole frame's nominal features from the scan: A's plane,
      // B's axis on it, and C to clock it (docs/plan.md, rule 39).
      for (const char label : {'A', 'B', 'C'}) {
        const PlanDatum* d = plan_.datum(label);
        if (!d || !d->from_scan())
          fail(at.at("placement"),
               std::string("without a placement (or with placement = \"find\") the scan is "
                           "placed by the nominal datum features A, B and C, and datum ") +
                   label + (d ? " names its own points file" : " is not defined") +
                   ": give a rough placement, a 4x4 matrix or { rotation, translation }");
      }
    }
    bool datum = false;
    for (const PlanDatum& d : plan_.datums) datum = datum || d.from_scan();
    if (scan.register_placement && !datum)
      fail(at.at("register"), "register = true registers the scan to the nominal datum features "
                              "that take their points from it, and none does");
    bool any = datum;
    for (const PlanBore& b : plan_.bores) any = any || b.from_scan();
    if (!any)
      fail(at, "no feature takes its points from [scan]: every datum and bore names its own "
               "point file (leave out a feature's points to segment it from the scan)");
  }

  /// A rigid placement: a proper rotation (orthonormal, determinant +1) and a bounded shift.
  void check_placement(const RigidPlacement& p, const PlanLocation& at) const {
    if (!p.rotation.allFinite()) fail(at, "the placement's rotation must be finite");
    const double off =
        (p.rotation.transpose() * p.rotation - Eigen::Matrix3d::Identity()).cwiseAbs().maxCoeff();
    // 1e-6: a matrix written with 7 significant digits is a rotation to that precision.
    if (!(off <= 1e-6))
      fail(at, "the placement's rotation is not orthonormal (R^T R differs from the identity by " +
                   plan_number_text(off) + "): give a rotation matrix, rows of unit length at "
                                           "right angles, to 7 digits or better");
    if (!(p.rotation.determinant() > 0.0))
      fail(at, "the placement's rotation has determinant -1, a reflection: a rigid placement "
               "keeps the handedness of the part");
    bounded_location(p.translation, at, "the placement's translation");
  }

  /// A [low, high] range of a nominal shape (`extent.x`, `span`): bounded, low < high.
  void check_range(const Eigen::Vector2d& range, const PlanLocation& key,
                   const std::string& what) const {
    bounded_location(range, key, what);
    if (!(range[0] < range[1]))
      fail(key, what + " must be [low, high] with low < high (found [" + shown(range[0]) + ", " +
                    shown(range[1]) + "])");
  }

  /// What segmenting a scan needs of a datum: its nominal shape (docs/plan.md, "[scan]").
  void check_nominal_datum(const PlanDatum& d, const PlanLocation& at) const {
    if (d.nominal_size) positive_length(*d.nominal_size, at.at("nominal_size"), "the nominal size");
    check_depth(d.depth_top, d.depth_bottom, at, false);
    for (const auto& [range, name] : {std::pair{d.extent_x, "x"}, std::pair{d.extent_y, "y"}})
      if (range)
        check_range(*range, at.at(std::string("extent.") + name),
                    std::string("the extent in ") + name);
    if (d.span) check_range(*d.span, at.at("span"), "the span of C's face");
    if (d.offset) bounded_length(*d.offset, at.at("offset"), "the offset of C's face");
    if (!plan_.scan || !d.from_scan()) return;
    const std::string name = std::string("datum ") + d.label;
    if (d.kind == FeatureKind::plane && d.label == 'A') {
      if (!d.extent_x)
        fail(at.at("extent"), "datum A takes its points from [scan] and needs its nominal "
                              "extent on A: give extent = { x = [low, high], y = [low, high] } "
                              "(in the frame), or its own points");
      return;
    }
    const bool width = d.kind == FeatureKind::slot || d.kind == FeatureKind::tab;
    const std::string kind(feature_kind_name(d.kind));
    if (d.kind == FeatureKind::plane) {
      // A plane C: the face n . p = offset, over `span` along it and `depth` in z.
      if (!d.offset)
        fail(at.at("offset"), name + " as a plane takes its points from [scan] and needs its "
                                     "nominal face: give offset = ..., the distance of the face "
                                     "from B's axis along outward_normal");
    } else if (!d.nominal_size && !d.size) {
      fail(at.at("nominal_size"),
           name + " takes its points from [scan] and needs its nominal " +
               (width ? "width" : "size") +
               ": give nominal_size = ... or size = { lower = ..., upper = ... }");
    }
    if ((d.kind == FeatureKind::plane || width) && !d.span)
      fail(at.at("span"), name + " as a " + kind +
                              " takes its points from [scan] and needs the nominal length of its "
                              "face: give span = [low, high], along the face parallel to A " +
                              (width ? "(from B's axis toward basic)" : "(across outward_normal)"));
    check_depth(d.depth_top, d.depth_bottom, at, true);
  }

  void check_nominal_bore(const PlanBore& b, const PlanLocation& at) const {
    if (b.nominal_size) positive_length(*b.nominal_size, at.at("nominal_size"), "the nominal size");
    if (!plan_.scan || !b.from_scan()) return;
    if (!b.nominal_size && !b.size)
      fail(at.at("nominal_size"),
           "bore " + b.id + " takes its points from [scan] and needs its nominal size: give "
                            "nominal_size = ... or size = { lower = ..., upper = ... }");
    check_depth(b.depth_top, b.depth_bottom, at, true);
  }

  /// A z range (a bore's evaluated range, a datum feature's nominal one); `required`: both
  /// ends, for a feature segmented from a scan.
  void check_depth(const std::optional<double>& top, const std::optional<double>& bottom,
                           const PlanLocation& at, bool required) const {
    if (required && !(top && bottom))
      fail(at.at("depth"), "a feature that takes its points from [scan] needs its nominal z "
                           "range: give depth = { top = ..., bottom = ... } with both ends");
    if (top) bounded_length(*top, at.at("depth.top"), "the top of the range");
    if (bottom) bounded_length(*bottom, at.at("depth.bottom"), "the bottom of the range");
    if (top && bottom && !(*top > *bottom))
      fail(at.at("depth"), "top " + shown(*top) + " must be greater than bottom " +
                               shown(*bottom) + " (z in the frame, negative inside the material)");
  }

  void check_mmb(const PlanDatum& d, const PlanLocation& at) const {
    const double value = *d.mmb_size;
    positive_length(value, at, "the maximum material boundary");
    if (!d.size)
      fail(at, "mmb is given without size: give the limits of size too, size = { lower = ..., "
               "upper = ... }");
    // The MMB of a datum feature of size is its MMC size or, with an orientation or location
    // tolerance at MMC, its virtual condition: never larger than MMC for a bore, never smaller
    // for a pin (ASME Y14.5-2018, datum feature simulators; common practice).
    // A slot follows the rule of a bore, a tab that of a pin.
    const double mmc = d.size->mmc(d.kind);
    const double tol = 1e-12 * std::max(1.0, mmc);
    const std::string kind_text(feature_kind_name(d.kind));
    if (!is_external(d.kind) && value > mmc + tol)
      fail(at, "the MMB of a " + kind_text + " must not exceed its MMC size (lower limit " +
                   shown(mmc) + "), found " + shown(value));
    if (is_external(d.kind) && value < mmc - tol)
      fail(at, "the MMB of a " + kind_text + " must not be below its MMC size (upper limit " +
                   shown(mmc) + "), found " + shown(value));
  }

  // ---------------------------------------------------------------- bores

  void check_bores() const {
    if (plan_.bores.empty())
      fail(plan_.where.at("bore"), "no bore: a plan needs at least one toleranced bore");
    for (std::size_t i = 0; i < plan_.bores.size(); ++i) check_bore(i);
  }

  void check_bore(std::size_t i) const {
    const PlanBore& bore = plan_.bores[i];
    const std::string index_path = "bore[" + std::to_string(i + 1) + "]";
    PlanLocation at = bore.where;
    if (at.key.empty()) at.key = detail::usable_bore_id(bore.id) ? "bore[" + bore.id + "]" : index_path;

    PlanLocation id_at = at.at("id");
    id_at.key = index_path + ".id";
    if (!detail::usable_bore_id(bore.id))
      fail(id_at,
           "the bore's identifier must be non-empty, without control characters or leading or "
           "trailing spaces (found " +
               quoted_for_message(bore.id) + ")");
    for (std::size_t j = 0; j < i; ++j)
      if (plan_.bores[j].id == bore.id)
        fail(id_at, "duplicate bore id " + quoted_for_message(bore.id) +
                        ": already used by bore " + std::to_string(j + 1) +
                        (plan_.bores[j].where.line > 0
                             ? " (line " + std::to_string(plan_.bores[j].where.line) + ")"
                             : std::string()));
    if (bore.points.empty() && !plan_.scan)
      fail(at.at("points"), "the path of the point file is empty");
    bounded_location(bore.basic_location, at.at("basic"), "the true position");

    const PlanLocation direction = at.at("direction");
    const Eigen::Vector3d& d = bore.nominal_direction;
    unit_direction(d, direction);
    // A bore's axis must cross A, where its true position is given.
    if (std::abs(d.z()) < 1e-6)
      fail(direction,
           "the direction lies in datum plane A: a bore's axis must cross A, where its basic "
           "location is given");
    // The sense of an axis carries no information; it is held pointing out of the material
    // (+z), the sense of the default and of the zone frame's heights. The reader turns it so.
    if (d.z() < 0.0)
      fail(direction, "the nominal direction must point out of the material (z > 0)");

    check_depth(bore.depth_top, bore.depth_bottom, at, false);
    if (bore.size) check_size(*bore.size, at.at("size"));
    if (bore.section_gap) positive_length(*bore.section_gap, at.at("section_gap"), "the section gap");
    check_sampling(bore.sampling, at, "sampling");
    check_bore_uncertainty(bore, at);
    // ---- axis_direction (docs/plan.md): a value the reader knows; a derived median line is
    // made of section centres and has no single direction to hold.
    if (bore.axis_direction != AxisDirection::fitted &&
        bore.axis_direction != AxisDirection::nominal)
      fail(at.at("axis_direction"), "unknown axis direction: expected \"fitted\" or \"nominal\"");
    if (bore.axis_direction == AxisDirection::nominal && bore.axis == BoreAxisMethod::median_line)
      fail(at.at("axis_direction"),
           "axis_direction = \"nominal\" holds a straight axis's direction: not available with "
           "axis = \"median-line\" (section centres); use \"mating-envelope\" or "
           "\"least-squares\"");

    if (bore.position) check_tolerance(*bore.position, bore, at, "position");
    if (bore.position) check_tolerance_share(*bore.position, bore, at, "position");
    if (bore.perpendicularity)
      check_tolerance_share(*bore.perpendicularity, bore, at, "perpendicularity");
    if (bore.perpendicularity) {
      const PlanTolerance& t = *bore.perpendicularity;
      const PlanLocation t_at = tolerance_location(t, at, "perpendicularity");
      check_tolerance(t, bore, at, "perpendicularity");
      // Perpendicularity is an orientation tolerance at 90 degrees to A; an inclined nominal
      // axis would call for angularity (ASME Y14.5-2018; ISO 1101:2017), which cylzone does
      // not evaluate.
      const double inclination = std::atan2(std::hypot(d.x(), d.y()), d.z());
      if (inclination > 1e-9)
        fail(t_at, "perpendicularity needs a nominal direction perpendicular to A, but direction" +
                       (direction.line > 0 ? " (line " + std::to_string(direction.line) + ")"
                                           : std::string()) +
                       " is inclined " + plan_number_text(inclination * 180.0 / pi, 4) +
                       " degrees from A's normal");
    }
    if (bore.cylindricity) {
      const PlanLocation c_at = at.at("cylindricity");
      const double value = *bore.cylindricity;
      if (!(value > 0.0))
        fail(c_at, "the cylindricity tolerance must be greater than zero (found " + shown(value) +
                       ")");
      below_tolerance_ceiling(value, c_at, "the cylindricity tolerance");
    }
    if (!bore.position && !bore.perpendicularity && !bore.cylindricity)
      fail(at, "the bore has no tolerance: give position, perpendicularity or cylindricity");
  }

  static PlanLocation tolerance_location(const PlanTolerance& t, const PlanLocation& bore,
                                         const std::string& name) {
    if (!t.where.key.empty()) return t.where;
    PlanLocation at = bore.at(name);
    at.lines = t.where.lines;
    return at;
  }

  void check_tolerance(const PlanTolerance& t, const PlanBore& bore, const PlanLocation& bore_at,
                       const std::string& name) const {
    const bool is_position = name == "position";
    const PlanLocation at = tolerance_location(t, bore_at, name);
    const PlanLocation tolerance = at.at("tolerance");
    // Zero is allowed here and checked against the modifier below: "0 at MMC" is legitimate
    // zero tolerancing at MMC (ASME Y14.5-2018, from memory for the section), the whole zone
    // coming from the bonus.
    if (!(t.tolerance >= 0.0))
      fail(tolerance, "the tolerance must not be negative (found " + shown(t.tolerance) + ")");
    below_tolerance_ceiling(t.tolerance, tolerance, "the tolerance");
    // MMC/LMC give a bonus from the bore's actual size: its limits must be known
    // (ASME Y14.5-2018; ISO 2692:2021).
    if (t.condition != MaterialCondition::rfs && !bore.size)
      fail(at.at("modifier"), "a tolerance at " + std::string(condition_name(t.condition)) +
                                  " needs the bore's limits of size: give size = { lower = ..., "
                                  "upper = ... }");
    if (t.tolerance == 0.0 && t.condition == MaterialCondition::rfs)
      fail(tolerance,
           "the tolerance must be greater than zero (found 0); a zero tolerance is only "
           "meaningful at MMC or LMC");

    if (is_position) {
      check_datum_references(t.datums, at.at("datums"));
      if (t.projected_height) {
        const PlanLocation projected = at.at("projected");
        positive_length(*t.projected_height, projected, "the projected height");
        // A projected zone extends the axis of the feature as a straight line beyond A; a
        // derived median line is not straight and cannot be projected (ISO 1101:2017).
        if (bore.axis == BoreAxisMethod::median_line)
          fail(projected,
               "a projected tolerance zone needs a straight axis: not available with axis = "
               "\"median-line\"");
      }
      if (t.projected_from) {
        const PlanLocation from = at.at("projected_from");
        if (!t.projected_height)
          fail(from, "projected_from is given without projected: give the projected height too");
        bounded_length(*t.projected_from, from, "the face the projected zone starts from");
        bounded_length(*t.projected_from + *t.projected_height, from,
                       "the far end of the projected zone");
      }
    } else {
      // Perpendicularity in cylzone is always to datum plane A (RMB: a plane has no size).
      if (t.datums.size() != 1 || t.datums.front().label != 'A' ||
          t.datums.front().boundary != MaterialBoundary::rmb)
        fail(at.at("datums"),
             "perpendicularity is always to datum A: datums must be \"A\" (found " +
                 quoted_for_message(datum_references_text(t.datums)) + ")");
      if (t.projected_height || t.projected_from)
        fail(at.at("projected"), "perpendicularity is evaluated over the bore's own depth: it "
                                 "takes no projected zone");
    }
  }

  /// The datum section of a feature control frame: "A", "A|B", "A|B|C", each of B and C
  /// optionally at MMB or LMB. cylzone's frame is A (plane, primary), B (origin), C
  /// (clocking), so that is the only order (ASME Y14.5-2018; ISO 5459:2011).
  void check_datum_references(const std::vector<DatumReference>& refs,
                              const PlanLocation& at) const {
    const std::string text = quoted_for_message(datum_references_text(refs));
    if (refs.empty())
      fail(at, "required key is missing: expected the datum reference, e.g. \"A|B|C\"");
    std::string defined;
    for (const PlanDatum& d : plan_.datums) {
      if (!defined.empty()) defined += ", ";
      defined += d.label;
    }
    for (std::size_t k = 0; k < refs.size(); ++k) {
      const DatumReference& ref = refs[k];
      const std::string label = std::string("datum ") + ref.label;
      const PlanDatum* datum = plan_.datum(ref.label);
      if (!datum) fail(at, label + " is not defined (defined: " + defined + ")");
      for (std::size_t j = 0; j < k; ++j)
        if (refs[j].label == ref.label) fail(at, label + " is repeated in " + text);
      if (k >= 3 || ref.label != "ABC"[k])
        fail(at,
             "datum order must be A first, then B, then C: expected \"A\", \"A|B\" or \"A|B|C\" "
             "(found " + text + ")");
      if (ref.translating && ref.label != 'C')
        fail(at, quoted_for_message(std::string(1, ref.label) + "(T)") +
                     ": the translating simulator (T) applies to datum C only");
      if (ref.translating && datum->kind == FeatureKind::plane)
        fail(at, "datum C is a plane, not a feature of size: it takes no (T) modifier");
      if (ref.boundary != MaterialBoundary::rmb) {
        const std::string modifier = ref.boundary == MaterialBoundary::mmb ? "(M)" : "(L)";
        if (datum->kind == FeatureKind::plane)
          fail(at, label + " is a plane, not a feature of size: it takes no " + modifier +
                       " modifier");
        if (!datum->size)
          fail(at, label + " is referenced at " + std::string(boundary_name(ref.boundary)) +
                       " but [datum." + ref.label +
                       "] has no size: give size = { lower = ..., upper = ... }");
      }
    }
  }

  // ---------------------------------------------------------------- plausibility

  /// A zone diameter compared with the bore's size (its lower limit, the MMC size): the rule
  /// of zone_share_finding, unless the plan says `wide_zone_intended = true`.
  void check_tolerance_share(const PlanTolerance& t, const PlanBore& bore,
                             const PlanLocation& bore_at, const std::string& name) const {
    if (!bore.size || t.wide_zone_intended) return;
    const std::optional<ZoneShareFinding> finding =
        zone_share_finding(name, t.tolerance, bore.size->lower, "the bore's size", plan_.unit);
    if (!finding) return;
    const PlanLocation at = tolerance_location(t, bore_at, name).at("tolerance");
    if (finding->error) fail(at, finding->message);
    warn(at, finding->message);
  }

  /// The [decision] table (docs/plan.md, rules 34 to 37; docs/evaluation.md, "Decision rules").
  void check_decision() {
    const DecisionRule& rule = plan_.decision.rule;
    PlanLocation at = plan_.decision.where;
    if (at.key.empty()) at.key = "decision";
    // Where a per-kind value was written: its own line, or the line of a single guard band.
    const auto where = [&](const std::string& table, CharacteristicKind kind) {
      const std::string name = table + "." + std::string(characteristic_kind_word(kind));
      return at.lines.count(name) || !at.lines.count(table) ? at.at(name) : at.at(table);
    };
    for (CharacteristicKind kind : characteristic_kinds) {
      const std::string word(characteristic_kind_word(kind));
      if (const auto& g = rule.guard_band[kind]) {
        // One band for every kind is named as written, once.
        const PlanLocation w = where("guard_band", kind);
        const bool own = w.key.size() > word.size() &&
                         w.key.compare(w.key.size() - word.size(), word.size(), word) == 0;
        margin_in_bounds(*g, w, own ? "the guard band for " + word : "the guard band");
      }
      if (const auto& u = rule.stated_uncertainty[kind])
        margin_in_bounds(*u, where("uncertainty", kind), "the expanded uncertainty U of " + word);
    }
    // k = 2 gives about 95 % coverage for a normal distribution (GUM, ISO/IEC Guide 98-3, 6.3;
    // common practice); below 1 the interval covers less than one standard uncertainty.
    if (!(rule.coverage_factor >= 1.0 && rule.coverage_factor <= 10.0))
      fail(at.at("uncertainty.k"), "the coverage factor k must be from 1 to 10 (found " +
                                        plan_number_text(rule.coverage_factor) + ")");
    if (rule.kind == DecisionRuleKind::guard_band && !rule.guard_band.any())
      fail(at.at("rule"),
           "rule = \"guard-band\" needs the agreed guard band: give guard_band (a length, or a "
           "table by kind)");
    // Against every bore's tolerance of each kind: a guard band wider than half the tolerance
    // leaves less than half the zone to accept (for a size, no acceptance zone at all) and is
    // refused as a likely typing error; a U above the tolerance is warned (no value of the kind
    // can then be proven to conform under the ISO 14253-1 rule). A zero tolerance at MMC or
    // LMC is all bonus and is not compared.
    for (CharacteristicKind kind : characteristic_kinds) {
      const auto& g = rule.guard_band[kind];
      const auto& u = rule.stated_uncertainty[kind];
      if (!g && !u) continue;
      const std::string word(characteristic_kind_word(kind));
      std::size_t exceeded = 0;
      std::string first;
      for (const PlanBore& bore : plan_.bores) {
        const std::optional<double> t = kind_tolerance(bore, kind);
        if (!t || !(*t > 0.0)) continue;
        if (g && *g > 0.5 * *t)
          fail(where("guard_band", kind),
               "the guard band " + shown(*g) + " " + unit_ + " for " + word +
                   " is more than half of bore " + quoted_for_message(bore.id) + "'s " + word +
                   " tolerance " + shown(*t) + " " + unit_ +
                   ": the acceptance zone would keep less than half of it");
        if (u && *u > *t && exceeded++ == 0)
          first = "bore " + quoted_for_message(bore.id) + "'s " + word + " tolerance " + shown(*t) +
                  " " + unit_;
      }
      if (exceeded > 0) {
        warn(where("uncertainty", kind),
             "the expanded uncertainty " + shown(*u) + " " + unit_ + " exceeds " + first +
                 (exceeded > 1 ? " (and " + std::to_string(exceeded - 1) + " more)"
                               : std::string()) +
                 ": " + kNoConformance);
      }
    }
  }

  /// A bore's own stated U (docs/plan.md, rules 34 and 37, for the bore alone).
  void check_bore_uncertainty(const PlanBore& bore, const PlanLocation& at) const {
    for (CharacteristicKind kind : characteristic_kinds) {
      const auto& u = bore.uncertainty[kind];
      if (!u) continue;
      const std::string word(characteristic_kind_word(kind));
      const PlanLocation w = at.at("uncertainty." + word);
      margin_in_bounds(*u, w, "the expanded uncertainty U of " + word);
      const std::optional<double> t = kind_tolerance(bore, kind);
      if (t && *t > 0.0 && *u > *t)
        warn(w, "the expanded uncertainty " + shown(*u) + " " + unit_ + " exceeds the bore's " +
                    word + " tolerance " + shown(*t) + " " + unit_ + ": " + kNoConformance);
    }
  }

  void margin_in_bounds(double value, const PlanLocation& at, const std::string& what) const {
    if (!(value >= 0.0)) fail(at, what + " must not be negative (found " + shown(value) + ")");
    below_tolerance_ceiling(value, at, what);
  }

  /// The tolerance a guard band or U of `kind` is compared with, mm: the stated zone, or for a
  /// size the span between its limits; none for a virtual condition (a boundary, not a zone).
  static std::optional<double> kind_tolerance(const PlanBore& bore, CharacteristicKind kind) {
    switch (kind) {
      case CharacteristicKind::position:
        if (bore.position) return bore.position->tolerance;
        break;
      case CharacteristicKind::perpendicularity:
        if (bore.perpendicularity) return bore.perpendicularity->tolerance;
        break;
      case CharacteristicKind::size:
        if (bore.size) return bore.size->upper - bore.size->lower;
        break;
      case CharacteristicKind::form: return bore.cylindricity;
      case CharacteristicKind::virtual_condition: break;
    }
    return std::nullopt;
  }

  /// The part's identity ends up in CSV cells, a table header and JSON: one printable line each.
  void check_part_identity() const {
    const PlanPart& part = plan_.part;
    PlanLocation at = part.where;
    if (at.key.empty()) at.key = "part";
    const auto printable = [&](const std::string& text, const PlanLocation& where,
                               const std::string& what) {
      for (char c : text)
        if (static_cast<unsigned char>(c) < 0x20 || c == 0x7f)
          fail(where, what + " must be one printable line: control characters are not allowed");
      if (text.size() > plan_identity_text_limit)
        fail(where, what + " is longer than " + std::to_string(plan_identity_text_limit) +
                        " bytes (found " + std::to_string(text.size()) + ")");
    };
    printable(part.id, at.at("id"), "the part id");
    printable(part.serial, at.at("serial"), "the serial number");
    for (std::size_t i = 0; i < part.notes.size(); ++i) {
      const auto& [key, value] = part.notes[i];
      const bool usable_key =
          !key.empty() && key.size() <= 64 && std::all_of(key.begin(), key.end(), [](char c) {
            return std::isalnum(static_cast<unsigned char>(c)) || c == '_' || c == '-' || c == '.';
          });
      PlanLocation note = at.at("notes." + key);
      note.key = usable_key ? "part.notes." + key : std::string("part.notes");
      if (!usable_key)
        fail(note, "the note key " + quoted_for_message(key) +
                       " may hold letters, digits, '_', '-' and '.' only (at most 64)");
      for (std::size_t j = 0; j < i; ++j)
        if (part.notes[j].first == key)
          fail(note, "the note key " + quoted_for_message(key) + " is given twice");
      printable(value, note, "the note " + key);
    }
  }

  const PartPlan& plan_;
  std::string file_name_;
  double mm_per_unit_;
  std::string unit_;
  /// The plausibility warnings found so far (the rules are otherwise const checks).
  mutable std::vector<std::string> warnings_;
};

}  // namespace

std::optional<ZoneShareFinding> zone_share_finding(const std::string& name, double tolerance,
                                                  double size, const std::string& size_what,
                                                  LengthUnit unit) {
  if (!(size > 0.0)) return std::nullopt;
  const double share = tolerance / size;
  if (!(share > plan_tolerance_share_warning)) return std::nullopt;
  const double per_unit = millimetres_per(unit);
  const std::string u(unit_name(unit));
  ZoneShareFinding finding;
  finding.error = share > 1.0;
  finding.message = "the " + name + " tolerance " + plan_number_text(tolerance / per_unit) + " " +
                    u + " is " + plan_number_text(100.0 * share, 3) + " % of " + size_what + " " +
                    plan_number_text(size / per_unit) + " " + u +
                    (finding.error ? ", wider than the bore itself"
                                   : ", more than " +
                                         plan_number_text(100.0 * plan_tolerance_share_warning) +
                                         " %") +
                    ": was " + plan_number_text(tolerance / per_unit / 1000.0, 6) +
                    " meant? (wide_zone_intended = true if the zone is intended)";
  return finding;
}

MaterialBoundary referenced_boundary(const PartPlan& plan, char label) noexcept {
  MaterialBoundary used = MaterialBoundary::rmb;
  for (const PlanBore& bore : plan.bores)
    for (const auto* tolerance : {&bore.position, &bore.perpendicularity})
      if (*tolerance)
        for (const DatumReference& ref : (*tolerance)->datums)
          if (ref.label == label && ref.boundary != MaterialBoundary::rmb &&
              used != MaterialBoundary::mmb)
            used = ref.boundary;
  return used;
}

void validate_plan(PartPlan& plan) {
  plan.warnings = PlanRules(plan).check();
  for (PlanDatum& datum : plan.datums) datum.boundary = referenced_boundary(plan, datum.label);
}

}  // namespace cylzone
