#pragma once
/// \file report_model.hpp
/// The report model: what every report of a part check says, built once from a
/// `PartCheckResult` and rendered by one renderer per format (report.hpp: table, JSON, CSV).
///
/// Units. The model holds lengths in millimetres, as the library does, together with one
/// `ReportUnits` (the plan's unit). Every renderer converts and formats lengths through that one
/// object and nowhere else, so the table, the JSON and the CSV cannot disagree on a unit or a
/// rounding. docs/report-schema.md describes the model and the formats.
///
/// Verdicts. Every verdict a report prints comes from the model's characteristics (found by id)
/// or from `combine()` over them: a bore's verdict combines its characteristics, the part's
/// combines all of them.

#include <Eigen/Core>
#include <filesystem>
#include <optional>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

#include "cylzone/check/part_check.hpp"
#include "cylzone/core/units.hpp"
#include "cylzone/decide/characteristic.hpp"
#include "cylzone/evaluate/axis_zone.hpp"
#include "cylzone/evaluate/bore_evaluation.hpp"
#include "cylzone/evaluate/surface_map.hpp"
#include "cylzone/forecast/probing_advice.hpp"
#include "cylzone/uncertainty/monte_carlo.hpp"

namespace cylzone {

/// Printed in every report: verdicts support, and do not replace, the approved procedure.
inline constexpr std::string_view safety_caution =
    "Caution: cylzone's verdicts support, and do not replace, the approved inspection "
    "procedure, the governing standard named on the drawing and sign-off by qualified "
    "personnel. Parts may go into safety-critical assemblies.";

/// The schema identifier written into, and required by the reader of, the JSON report.
inline constexpr std::string_view report_schema = "cylzone-report-1";

/// Lengths from millimetres to the report's unit, and their fixed-point text.
class ReportUnits {
 public:
  explicit ReportUnits(LengthUnit unit = LengthUnit::millimetre) noexcept;
  LengthUnit unit() const noexcept { return unit_; }
  std::string_view name() const noexcept { return unit_name(unit_); }
  /// mm: 4 decimals (0.1 µm); inch: 5 decimals (0.25 µm): finer than a micrometre.
  int decimals() const noexcept { return unit_ == LengthUnit::inch ? 5 : 4; }
  /// A length in mm expressed in the report's unit.
  double length(double mm) const noexcept { return mm * per_mm_; }
  /// A length in the report's unit back in mm (the reader's direction).
  double millimetres(double length) const noexcept { return length * millimetres_per(unit_); }
  /// `length(mm)` with `decimals()` decimals.
  std::string text(double mm) const { return fixed(length(mm), decimals()); }
  /// "%.*f": fixed-point text of any number (also angles and unitless figures).
  static std::string fixed(double value, int decimals);

 private:
  LengthUnit unit_;
  double per_mm_;
};

/// The axis along the depth, for plots (a top view of dx, dy and a side view of the single-plane
/// position against height) and for the table's along-the-depth lines. All lengths in mm.
struct DepthProfile {
  std::string characteristic_id;  ///< the deciding position characteristic, e.g. "P2/position"
  double range_top = 0.0;         ///< evaluated range, heights from A along the nominal direction
  double range_bottom = 0.0;
  bool projected = false;          ///< the range is a projected zone above A
  /// Where the range comes from: only plan_depth and projected_zone are fixed by the drawing;
  /// probed_extent means the bore's full depth is unknown to the tool.
  RangeSource range_source = RangeSource::plan_depth;
  double allowed = 0.0;            ///< diameter of the zone allowed (tolerance + bonus)
  /// From range_top to range_bottom: deviation (dx, dy) from the true-position axis and the
  /// single-plane position 2 sqrt(dx^2 + dy^2) at each height. A straight axis is sampled at
  /// evenly spaced heights, both ends exact (its deviation is affine in height, axis_zone.hpp);
  /// a derived median line gives its section centres.
  std::vector<AxisDeviation> samples;
  std::optional<double> leaves_zone_at;  ///< first height, from the top, outside the zone
  /// The axis's deviation at leaves_zone_at, for marking the exit in a plot: interpolated
  /// linearly between the samples around it (exact for a straight axis, whose deviation is
  /// affine in height; a median line is taken as straight between centres, as where it leaves
  /// the zone is found). Empty when the axis stays inside.
  std::optional<AxisDeviation> exit;
};

/// The axis's deviation at `profile.leaves_zone_at` (DepthProfile::exit): linear between the
/// two samples around that height; empty when the axis stays inside or there are no samples.
/// make_report_model and the JSON reader fill DepthProfile::exit with it.
std::optional<AxisDeviation> exit_deviation(const DepthProfile& profile);

/// The axis along the evaluated range of the position that decides bore `b` (after datum
/// mobility when the frame may move, else in the frame as built), sampled at `samples` heights
/// (a derived median line: its section centres), with its exit point; empty without a position.
/// make_report_model fills BoreSummary::depth with it; the audit's page draws it.
std::optional<DepthProfile> deciding_depth_profile(const BoreResult& b, std::size_t samples = 11);

/// One datum feature as the reports summarise it. Lengths in mm.
struct DatumSummary {
  char label = 'A';
  std::string feature;  ///< "plane", "bore", "pin", "slot", "tab"
  std::string association;  ///< datum A: how the plane was associated; else empty
  std::optional<double> flatness;  ///< datum A
  bool material_side_inferred = false;
  /// A feature of size: its related mating size (a diameter, or for a slot or tab a width).
  std::optional<double> mating_size;
  bool mating_is_width = false;
  std::optional<MaterialBoundary> boundary;
  std::optional<double> mmb_size;
  double shift_allowance = 0.0;
};

/// One bore as the reports summarise it. Lengths in mm.
struct BoreSummary {
  std::string id;
  Verdict verdict = Verdict::conforms;  ///< combine() of the bore's characteristics
  std::string axis_method;
  double probed_top = 0.0;
  double probed_bottom = 0.0;
  /// Where the bore's own depth range (perpendicularity, position unless projected) comes from.
  RangeSource depth_source = RangeSource::plan_depth;
  double tilt_rad = 0.0;
  double tilt_azimuth_deg = 0.0;
  std::optional<DepthProfile> depth;  ///< when the bore has a position tolerance
  /// What the datum reference let the frame do for the bore's pattern, with the reading of datum
  /// C's simulator (BoreResult::mobility_reason); empty when the frame stayed fixed.
  std::string mobility;
  /// How the virtual condition figure was found when it needs saying (boundary_reason): after
  /// a frame motion of the datum mobility, or the conservative envelope figure; else empty.
  std::string boundary;
  std::vector<std::string> warnings;
  // ---- Evaluation status (BoreResult::not_evaluated, direction_held).
  /// Empty when the bore was evaluated; else why not (then only `id`, `verdict` and
  /// `axis_method` are meaningful).
  std::string not_evaluated;
  /// "fitted" or "nominal" (plan key axis_direction): the axis direction held at the nominal one.
  std::string axis_direction = "fitted";
  /// Sampling adequacy (BoreResult::sampling: probed span against the evaluated range, sections,
  /// points per section, angular coverage), its warnings in the report's unit. Empty for a bore
  /// not evaluated and in a model read from a report written before the field existed.
  std::optional<SamplingCoverage> sampling;
  /// The unrolled surface: least-squares residuals, angle against depth, mean per cell
  /// (evaluate/surface_map.hpp), for the HTML report's map. Empty when not evaluated and in a
  /// model read back from JSON.
  std::optional<SurfaceMap> surface;
  /// The uncertainty predicted for the pattern actually probed (`check --predict-probing`,
  /// forecast/probing_advice.hpp: predict_measured_bore); empty unless asked for.
  std::optional<ProbingPrediction> probing_prediction;
  bool evaluated() const noexcept { return not_evaluated.empty(); }
};

/// Which part the report is about, so rows from many parts can be told apart (CSV columns,
/// the JSON's `part` object, the table's header). Given by the caller: the library reads no
/// clock, so `timestamp` is whatever the caller passes (the CLI: the run's UTC time, ISO 8601).
struct PartIdentity {
  std::string id;         ///< part number / id; empty: not given
  std::string serial;     ///< serial number; empty: not given
  std::string timestamp;  ///< ISO 8601, e.g. "2026-12-02T17:40:00Z"; empty: not given
  std::vector<std::pair<std::string, std::string>> notes;  ///< free KEY=VALUE, given order

  bool empty() const noexcept {
    return id.empty() && serial.empty() && timestamp.empty() && notes.empty();
  }
  /// The notes as "KEY=VALUE; KEY=VALUE" (the CSV's `notes` column and the table header).
  std::string notes_text() const;
};

/// The identity a report carries: the plan's [part] table (PartPlan::part) overridden by
/// `given` (the command line) field by field: a non-empty id, serial or timestamp replaces the
/// plan's; a note replaces the plan's note of the same key in its place, new keys follow the
/// plan's notes in the order given.
PartIdentity merged_identity(const PlanPart& plan, const PartIdentity& given);

/// Checks `text` as an ISO 8601 date-time with a zone: YYYY-MM-DDThh:mm[:ss[.fff]] followed by
/// Z or +hh:mm / -hh:mm (ISO 8601-1:2019, extended format; RFC 3339 profile). Field ranges are
/// checked (month 1-12, day 1-31, hour 0-23, minute and second 0-59, 60 for a leap second).
bool is_iso8601_timestamp(std::string_view text);

struct ReportModelOptions {
  /// Heights sampled along a straight axis for the depth profile, both ends included (>= 2).
  std::size_t depth_samples = 11;
  PartIdentity part;
};

struct ReportModel {
  std::string tool_version;
  ReportUnits units;
  std::string plan_name;
  PartIdentity part;
  std::filesystem::path plan_file;
  std::vector<InputRecord> inputs;
  std::vector<DatumSummary> datums;     ///< A, B, C as present
  std::vector<std::string> frame_notes;
  std::vector<Characteristic> characteristics;  ///< every bore's, plan order
  std::vector<BoreSummary> bores;               ///< plan order
  std::vector<BoreSensitivity> sensitivity;
  Verdict verdict = Verdict::conforms;  ///< combine() of every characteristic
  std::vector<std::string> warnings;    ///< part-level
  /// What the prepare stage did to each feature's points (datums, then bores): compensation,
  /// outliers removed with their file lines. Empty in a model read back from JSON.
  std::vector<FeaturePreparation> preparation;
  /// How the plan's whole-part scan was segmented among the features: points taken, angular
  /// and depth coverage (PartInputs::scan); empty without a [scan].
  std::optional<ScanSegmentation> scan;
  /// The segmentation record of the input `role` ("datum A", "bore P3"), or null.
  const FeatureSegmentation* segmentation_of(std::string_view role) const noexcept;
  /// The result the model was built from, for the JSON report's detailed blocks (fits, datum
  /// geometry, stray points). Not owned: it must outlive the model. Null in a model read back
  /// from JSON (report_reader.hpp), which carries the summary only.
  const PartCheckResult* evaluation = nullptr;
  /// The Monte Carlo study (uncertainty/monte_carlo.hpp), when one was run (`check
  /// --uncertainty`); lengths in mm like every figure, converted by the renderers. Absent, the
  /// reports are as without the stage.
  std::optional<MonteCarloSummary> uncertainty;

  /// The characteristic with this id, or null.
  const Characteristic* find(std::string_view id) const noexcept;
  /// The input record with this role ("datum A", "bore P3"), or null.
  const InputRecord* input(std::string_view role) const noexcept;
  /// The file line of point `index` (0-based, data order) of the input `role`, when known.
  std::optional<std::size_t> file_line(std::string_view role, std::size_t index) const noexcept;
  /// The prepare record of the input `role` ("datum A", "bore P3"), or null.
  const FeaturePreparation* preparation_of(std::string_view role) const noexcept;
  /// Whether any feature's points were compensated or passed an outlier stage (the table then
  /// lists what was done).
  bool points_prepared() const noexcept;
  /// The summary of the bore with this id, or null.
  const BoreSummary* bore(std::string_view id) const noexcept;
  /// Where the range of characteristic `c` comes from: its bore's depth profile for a position,
  /// its bore's own depth range otherwise; empty for a feature that is not a bore.
  std::optional<RangeSource> range_source(const Characteristic& c) const noexcept;
  /// The characteristics of one feature (bore or datum), in order.
  std::vector<Characteristic> of_feature(std::string_view feature) const;
};

/// Every bore's characteristics, decided, in plan order, with ids "<bore>/position",
/// "<bore>/position/mobility", "<bore>/perpendicularity", "<bore>/size/lower",
/// "<bore>/size/upper", "<bore>/cylindricity", "<bore>/virtual-condition"
/// (decide/characteristic.hpp). The one place the report takes them from.
std::vector<Characteristic> report_characteristics(const PartCheckResult& result);

/// `text` (a warning or note written by the evaluation in millimetres) with every length in the
/// form "<number> mm" rewritten in `units` through ReportUnits::text ("0.0123 mm" -> "0.00048
/// in" for an inch report). Unchanged for a millimetre report.
std::string in_report_unit(const std::string& text, const ReportUnits& units);

/// `text` with every point number "#N" of a stray-point message (1-based, the file's data order;
/// prepare/stray_points.hpp) followed by its file line: "#N (line L)". Unchanged when `text` is
/// not a stray-point message or `lines` is empty (a mesh has no lines).
std::string with_file_lines(const std::string& text, const std::vector<std::size_t>& lines);

/// Builds the model. `result` must outlive it (see ReportModel::evaluation). Warnings and frame
/// notes are given in the report's unit (in_report_unit), stray points with their file lines
/// (with_file_lines).
ReportModel make_report_model(const PartCheckResult& result,
                              const ReportModelOptions& options = {});

}  // namespace cylzone
