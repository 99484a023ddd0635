#pragma once
/// \file plan.hpp
/// The part plan: a human-written TOML file saying where the points of each datum feature and
/// bore are, the datum reference frame to build, and each bore's basic location, size limits and
/// tolerances. docs/plan.md documents the format with a complete annotated example.
///
/// All lengths are converted to millimetres on reading; `unit` keeps the plan's unit for
/// reporting. Paths are resolved against the plan's directory. Every error is an InputError
/// naming the plan file, the line and the key.
///
/// Reading (parse_plan, read_plan) checks syntax, types and units and records where each value
/// was written; the rules that give the values their meaning (limits of size in order, datum
/// references to defined datums, tolerances within bounds, ...) are validate_plan's
/// (validate_plan.hpp), so a plan built in code is held to exactly the same rules.

#include <Eigen/Core>
#include <cstddef>
#include <filesystem>
#include <functional>
#include <map>
#include <cstdint>
#include <optional>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

#include "cylzone/decide/characteristic.hpp"
#include "cylzone/plan/audit_plan.hpp"
#include "cylzone/plan/tolerance_types.hpp"
#include "cylzone/core/units.hpp"
#include "cylzone/prepare/segment_scan.hpp"

namespace cylzone {

/// How datum plane A is associated with its points (ASME Y14.5-2018 and ISO 5459:2011).
enum class PlaneAssociation {
  tangent_least_squares,  ///< constrained L2 plane on the material side (default; Y14.5-2018)
  tangent_minimax,        ///< minimax plane on the material side (ISO 5459 default)
  least_squares,          ///< Gaussian plane through the points (not a datum per the standards)
  minimum_zone            ///< mid-plane of the Chebyshev (flatness) zone
};

/// Which axis of a bore is toleranced.
enum class BoreAxisMethod {
  mating_envelope,  ///< axis of the unrelated actual mating envelope (ASME Y14.5; default)
  least_squares,    ///< least-squares cylinder axis
  median_line       ///< derived median line: LS circle centres of sections (ISO 1101, 17450-3)
};

/// "tangent-least-squares", "tangent-minimax", "least-squares", "minimum-zone".
std::string_view association_name(PlaneAssociation method) noexcept;
std::optional<PlaneAssociation> parse_association(std::string_view text) noexcept;
/// "mating-envelope", "least-squares", "median-line".
std::string_view axis_method_name(BoreAxisMethod method) noexcept;
std::optional<BoreAxisMethod> parse_axis_method(std::string_view text) noexcept;

// ---- The direction of a bore's toleranced axis (plan key `axis_direction`).
/// How the direction of a bore's associated cylinders is found.
enum class AxisDirection {
  fitted,  ///< free: fitted to the points (default)
  /// Held at the plan's nominal direction (`direction`, in the datum frame): only the axis's
  /// location and the size are fitted. For a bore probed at one level, whose direction the
  /// points cannot determine. Perpendicularity is then not evaluated (it would only restate the
  /// nominal direction), and position is evaluated on that axis.
  nominal
};
/// "fitted", "nominal".
std::string_view axis_direction_name(AxisDirection direction) noexcept;
std::optional<AxisDirection> parse_axis_direction(std::string_view text) noexcept;

/// Where something was written in the plan, for messages.
struct PlanLocation {
  std::size_t line = 0;
  /// Dotted key path, e.g. "datum.B.size" or "bore[P3].position.tolerance": a bore is named by
  /// its id, or by its 1-based index ("bore[3].id") for errors in the id itself.
  std::string key;
  /// Lines of the keys written inside this table, by their dotted name relative to it (e.g.
  /// "mmb", "size.lower"), so that a rule can name the very line of the value it refuses.
  /// Empty for a plan built in code.
  std::map<std::string, std::size_t, std::less<>> lines;

  /// The location of key `name` inside this table: its own line when recorded, else the
  /// table's; the key path `key.name` (or `name` alone at the top level).
  PlanLocation at(std::string_view name) const;
};

// ---- Raw probe points: probe-tip compensation and outlier stages (docs/plan.md, "[probe]";
// prepare/probe_compensation.hpp, prepare/outlier_rejection.hpp).

/// The plan-wide settings of the raw points, and (resolved) one feature's.
struct ProbeSettings {
  /// Points are stylus-ball centres, compensated by half the tip diameter in the prepare step
  /// (validate_plan requires a tip diameter then).
  bool ball_centres = false;
  double tip_diameter = 0.0;   ///< mm; 0: not given
  bool neighbour_filter = false;    ///< outlier stage 1: remove the stray-point screen's flags
  bool residual_rejection = false;  ///< outlier stage 2: Hampel's identifier after the fit
};

/// A feature's own `probe` table: each value given overrides the plan-wide one.
struct ProbeOverrides {
  std::optional<bool> ball_centres;
  std::optional<double> tip_diameter;  ///< mm
  std::optional<bool> neighbour_filter;
  std::optional<bool> residual_rejection;
  bool any() const noexcept {
    return ball_centres || tip_diameter || neighbour_filter || residual_rejection;
  }
};

/// The plan-wide settings with a feature's overrides applied.
ProbeSettings resolved_probe(const ProbeSettings& plan_wide, const ProbeOverrides& own) noexcept;

/// Sampling thresholds (plan [sampling] plan-wide, or a bore's own `sampling` table; docs/plan.md;
/// evaluate/sampling_coverage.hpp): each value given overrides the evaluation's default. A
/// parsed plan holds in every bore its own values, else the plan-wide ones.
struct PlanSampling {
  std::optional<std::size_t> min_section_points;  ///< fewer points in a section: warned
  std::optional<double> min_coverage_deg;         ///< angular coverage below this: warned
  std::optional<double> max_magnification;        ///< tilt-error magnification above this: warned
  bool any() const noexcept { return min_section_points || min_coverage_deg || max_magnification; }
};

struct PlanDatum {
  char label = 'A';
  FeatureKind kind = FeatureKind::plane;
  std::filesystem::path points;
  /// Plane datums: association method, and optionally the direction INTO the material in
  /// measurement coordinates (otherwise inferred from the bores' points).
  PlaneAssociation association = PlaneAssociation::tangent_least_squares;
  std::optional<Eigen::Vector3d> material_side;
  /// Features of size: limits of size and the maximum material boundary for MMB references.
  /// `mmb_size` is empty unless the plan gives it; then the MMC size applies, which is right when
  /// the feature has no orientation tolerance at MMC.
  std::optional<SizeLimits> size;
  std::optional<double> mmb_size;
  /// Clocking feature C: basic location of its axis (bore/pin) in the frame, or for a plane the
  /// direction of its outward normal in the frame (a unit 2-vector in the xy plane).
  std::optional<Eigen::Vector2d> basic_location;
  std::optional<Eigen::Vector2d> outward_normal;
  /// The material boundary this datum feature is referenced at, settled by validate_plan from
  /// the plan's datum references: MMB when any position or perpendicularity references it at
  /// MMB (its shift must be known), else LMB when any does, else RMB. A plane is always RMB.
  MaterialBoundary boundary = MaterialBoundary::rmb;
  ProbeOverrides probe;  ///< this datum's own `probe` table
  // ---- Nominal shape, for a datum that takes its points from the plan's [scan] (`points`
  // empty then). A bore or pin B or C: its nominal size (`nominal_size`, else the middle of
  // `size`) and its z range (`depth`); its axis is perpendicular to A through the origin (B) or
  // `basic_location` (C). Datum A: the rectangle it covers on the plane z = 0 (`extent`). A
  // plane C: `offset`, `span`, `depth`; a slot or tab C: its nominal width, `span`, `depth`.
  std::optional<double> nominal_size;  ///< mm
  std::optional<double> depth_top;     ///< z in the frame, mm
  std::optional<double> depth_bottom;
  std::optional<Eigen::Vector2d> extent_x;  ///< datum A: [low, high] of x in the frame, mm
  std::optional<Eigen::Vector2d> extent_y;  ///< datum A: [low, high] of y in the frame, mm
  /// A plane C from the scan (plan key `offset`): the signed distance, mm, from B's axis (the
  /// origin) to C's nominal face along its `outward_normal`; the face is the plane
  /// n . p = offset, n = (outward_normal, 0).
  std::optional<double> offset;
  /// A plane, slot or tab C from the scan (plan key `span`): the face's [low, high] range, mm,
  /// along the face and parallel to A. A plane C: along z x n from the foot of the origin on
  /// the face; a slot or tab: along the direction of `basic` from B's axis. Its z range is
  /// `depth`; a slot's or tab's width is `nominal_size` (else the middle of `size`): two faces
  /// at +-width/2 from the centre plane through B's axis toward `basic`.
  std::optional<Eigen::Vector2d> span;
  /// Whether the points come from the plan's [scan] rather than a file of the datum's own.
  bool from_scan() const noexcept { return points.empty(); }
  PlanLocation where;
};

struct PlanTolerance {
  double tolerance = 0.0;  ///< diameter of the cylindrical zone, mm
  MaterialCondition condition = MaterialCondition::rfs;
  std::vector<DatumReference> datums;  ///< in order of precedence; perpendicularity: just A
  std::optional<double> projected_height;  ///< projected tolerance zone height, mm
  /// Where a projected zone starts: the height (z in the frame, mm) of the face it stands on,
  /// e.g. the top of a boss above A. Empty: datum plane A (z = 0). The zone spans
  /// [projected_from, projected_from + projected_height].
  std::optional<double> projected_from;
  /// Plausibility (validate_plan): the plan acknowledges a zone wider than the feature's size
  /// (`wide_zone_intended = true`), which is otherwise refused as a likely typing error.
  bool wide_zone_intended = false;
  PlanLocation where;
};

struct PlanBore {
  std::string id;
  std::filesystem::path points;
  Eigen::Vector2d basic_location = Eigen::Vector2d::Zero();  ///< true position (x, y) on A
  /// Nominal axis direction in the frame (unit, z > 0: out of the material); perpendicular to A,
  /// i.e. (0, 0, 1), by default.
  Eigen::Vector3d nominal_direction = Eigen::Vector3d::UnitZ();
  /// Depth range to evaluate, as z in the frame: top (nearer A) and bottom, each optional; an end
  /// not given is the probed extent. When both are given, top > bottom.
  std::optional<double> depth_top;
  std::optional<double> depth_bottom;
  std::optional<SizeLimits> size;
  BoreAxisMethod axis = BoreAxisMethod::mating_envelope;
  std::optional<PlanTolerance> position;
  std::optional<PlanTolerance> perpendicularity;
  std::optional<double> cylindricity;  ///< tolerance, mm
  /// Gap (mm) that separates probed section levels, and the slab thickness of scanned clouds
  /// (BoreEvaluationOptions::section_gap). Empty: the evaluation's option. A parsed plan holds
  /// the bore's own `section_gap`, else the plan-wide one.
  std::optional<double> section_gap;
  /// Plan key `axis_direction`: the axis direction fitted (default) or held at the nominal one.
  AxisDirection axis_direction = AxisDirection::fitted;
  ProbeOverrides probe;  ///< this bore's own `probe` table
  /// Nominal diameter for segmenting a [scan] (plan key `nominal_size`); empty: the middle of
  /// `size`.
  std::optional<double> nominal_size;
  /// Whether the points come from the plan's [scan] rather than a file of the bore's own.
  bool from_scan() const noexcept { return points.empty(); }
  PlanLocation where;
  /// Sampling thresholds: the bore's own `sampling` table, else the plan-wide [sampling].
  PlanSampling sampling;
  /// The bore's own stated expanded uncertainty per kind (plan key `uncertainty`, mm): each
  /// value given replaces the [decision] budget's for this bore (bore_characteristics).
  PerKindLength uncertainty;
};

// ---- One cloud of the whole part (docs/plan.md, "[scan]").

/// The plan's [scan] table: one cloud of the whole part, segmented among the features that give
/// no point file of their own (prepare/segment_scan.hpp).
struct PlanScan {
  std::filesystem::path points;  ///< the cloud (any point format read_points reads)
  /// The cloud into the part's nominal coordinates (the datum reference frame as drawn):
  /// p' = rotation p + translation, mm. Only the segmentation uses it: every fit works on the
  /// cloud's own coordinates, as with per-feature files.
  RigidPlacement placement;
  SegmentOptions segment;  ///< band, margin, normal agreement (mm, degrees)
  /// Plan key `register`: refine `placement` by registering the cloud to the nominal datum
  /// features that take scan points (register_to_nominal) before segmenting.
  bool register_placement = false;
  /// No placement in the plan, or `placement = "find"`: the placement is found from the cloud
  /// and the nominal datum features A, B and C alone (find_placement), `placement` unused.
  bool find_placement = false;
  PlanLocation where;
};

// ---- Part identity and plausibility warnings (docs/plan.md, "[part]").

/// Which part the plan's reports are about, as the plan's optional [part] table gives it; the
/// command line overrides it field by field (and note by note). Every text is one printable
/// line of at most `plan_identity_text_limit` bytes (validate_plan).
struct PlanPart {
  std::string id;         ///< part number / id; empty: not given
  std::string serial;     ///< serial number; empty: not given
  std::string timestamp;  ///< ISO 8601 with a zone, from a TOML offset date-time; empty: none
  /// Free KEY = "text" notes, in the order written; keys hold letters, digits, '_', '-', '.'.
  std::vector<std::pair<std::string, std::string>> notes;
  PlanLocation where;  ///< the [part] table (empty key when the plan has none)
};

/// The optional `[uncertainty]` table (docs/plan.md, docs/uncertainty.md): the defaults of
/// `cylzone check --uncertainty`. Lengths in mm (converted from the plan's unit when read).
struct PlanUncertainty {
  std::size_t line = 0;
  /// Isotropic probing sigma per coordinate; empty: estimated from each feature's least-squares
  /// residuals.
  std::optional<double> probing_sigma;
  std::optional<double> mpe_a;  ///< E = A + L/K: A in mm (given with mpe_k)
  std::optional<double> mpe_k;  ///< K: L in mm, L/K in micrometres
  std::optional<std::size_t> trials;  ///< empty: not given; see `adaptive`
  bool adaptive = false;              ///< trials = "adaptive"
  std::optional<std::uint64_t> seed;
};

// ---- The decision rule (docs/plan.md, "[decision]"; decide/characteristic.hpp).

/// The plan's optional [decision] table: the rule every characteristic is decided by, the
/// agreed guard bands and the laboratory's stated expanded uncertainty per kind (mm). Without
/// the table: simple acceptance, no U.
struct PlanDecision {
  DecisionRule rule;
  PlanLocation where;  ///< the [decision] table (empty key when the plan has none)
};

struct PartPlan {
  std::filesystem::path file;
  /// SHA-256 (lower-case hex) of exactly the plan text that was parsed, for the input records.
  std::string sha256;
  std::string name;
  LengthUnit unit = LengthUnit::millimetre;
  ProbeSettings probe;
  std::vector<PlanDatum> datums;  ///< A, then B and C when present, in that order
  std::vector<PlanBore> bores;
  /// The plan-wide section gap, mm (already applied by the parser to bores without their own).
  std::optional<double> section_gap;
  /// The top level: line 1, lines of its keys (e.g. "name", "probe.points").
  PlanLocation where;
  /// Part identity from the plan's [part] table (all empty without one).
  PlanPart part;
  /// One cloud of the whole part; empty when every feature names its own point file.
  std::optional<PlanScan> scan;
  /// Plausibility warnings found by validate_plan (e.g. a tolerance above a tenth of the
  /// bore's size), one line each naming the plan key, lengths in the plan's unit; carried into
  /// every report by check_part.
  std::vector<std::string> warnings;
  /// The plan-wide [sampling] thresholds (already applied by the parser to every bore, value by
  /// value, where the bore gives none).
  PlanSampling sampling;
  /// The optional `[audit]` table: how `cylzone audit` reads another system's summary.
  std::optional<PlanAudit> audit;
  /// The optional `[uncertainty]` table: the Monte Carlo study's defaults.
  std::optional<PlanUncertainty> uncertainty;
  /// The `[decision]` table: the decision rule, guard bands, stated uncertainties.
  PlanDecision decision;

  const PlanDatum* datum(char label) const noexcept;
};

/// Turns an outlier stage on or off for the whole plan, a feature's own setting included (the
/// command line overrides the plan). An empty optional leaves the stage as the plan says.
void override_outlier_stages(PartPlan& plan, std::optional<bool> neighbour_filter,
                             std::optional<bool> residual_rejection);

/// The command line's `--decision-rule` over the plan's [decision].rule, checked as the plan's
/// rule is (a guard band rule needs a stated guard band; validate_plan). Throws
/// std::invalid_argument naming the option when the plan cannot support the rule.
void override_decision_rule(PartPlan& plan, DecisionRuleKind rule);

/// Reads and validates a plan (validate_plan). Throws InputError (file, line, key, problem) on
/// any error: syntax, unknown or missing keys, values of the wrong type, a missing point file,
/// and every rule of validate_plan (unknown datum, negative or zero tolerance, a modifier on a
/// datum that is not a feature of size, a bore with no tolerance, duplicate bore ids,
/// ball-centre points without a tip diameter, values beyond the plan's bounds, and so on).
/// Messages quote user text escaped and bounded (quoted_for_message). With `check_files`
/// false, point files are not required to exist beside the plan (a batch looks them up in each
/// part's folder: check/batch.hpp).
PartPlan read_plan(const std::filesystem::path& file, bool check_files = true);

/// Same, from text; `file` names it in messages and is the base for relative paths.
/// With `check_files` false, point files are not required to exist (for tests of the parser).
PartPlan parse_plan(std::string_view text, const std::filesystem::path& file,
                    bool check_files = true);

}  // namespace cylzone
