// The report model (report/report_model.hpp): built once from a part check; the renderers read
// nothing else but the model (and, for the JSON's detailed blocks, the result it refers to).
#include "cylzone/report/report_model.hpp"

#include <algorithm>
#include <cmath>

#include <cstdio>
#include <regex>

#include "cylzone/decide/bore_characteristics.hpp"
#include "cylzone/version.hpp"

namespace cylzone {
namespace {

/// The deviation at `height` on the polyline through `samples` (ordered by height, either way),
/// linear between the two samples around it; the nearer end outside them.
AxisDeviation deviation_at(const std::vector<AxisDeviation>& samples, double height) {
  if (samples.size() == 1) return {height, samples.front().offset};
  for (std::size_t k = 0; k + 1 < samples.size(); ++k) {
    const AxisDeviation& a = samples[k];
    const AxisDeviation& b = samples[k + 1];
    const double lo = std::min(a.height, b.height), hi = std::max(a.height, b.height);
    if (height < lo || height > hi) continue;
    const double t = b.height == a.height ? 0.0 : (height - a.height) / (b.height - a.height);
    return {height, a.offset + t * (b.offset - a.offset)};
  }
  const bool nearer_front = std::abs(height - samples.front().height) <=
                            std::abs(height - samples.back().height);
  return {height, (nearer_front ? samples.front() : samples.back()).offset};
}

/// The axis along the evaluated range of the position that decides, without its exit point.
DepthProfile sampled_profile(const PositionResult& p, const std::string& id, std::size_t count) {
  DepthProfile d;
  d.characteristic_id = id;
  d.range_top = p.range_top;
  d.range_bottom = p.range_bottom;
  d.projected = p.projected;
  d.range_source = p.range_source;
  d.allowed = p.allowed;
  d.leaves_zone_at = p.leaves_zone_at;
  if (!p.section_centres.empty()) {
    d.samples = p.section_centres;  // the median line is known at its centres only
    return d;
  }
  // Straight axis: the deviation is affine in height (axis_zone.hpp), so interpolating between
  // the exact ends is exact; the ends are copied, not recomputed.
  const double span = p.bottom.height - p.top.height;
  if (count < 2 || span == 0.0) {
    d.samples = {p.top};
    if (span != 0.0) d.samples.push_back(p.bottom);
    return d;
  }
  d.samples.push_back(p.top);
  for (std::size_t k = 1; k + 1 < count; ++k) {
    const double t = static_cast<double>(k) / static_cast<double>(count - 1);
    d.samples.push_back(
        {p.top.height + t * span, p.top.offset + t * (p.bottom.offset - p.top.offset)});
  }
  d.samples.push_back(p.bottom);
  return d;
}

/// The same with where the axis leaves the zone located on the samples.
DepthProfile depth_profile(const PositionResult& p, const std::string& id, std::size_t count) {
  DepthProfile d = sampled_profile(p, id, count);
  d.exit = exit_deviation(d);
  return d;
}

DatumSummary size_datum_summary(const SizeDatumResult& s) {
  DatumSummary d;
  d.label = s.label;
  d.feature = std::string(feature_kind_name(s.kind));
  d.mating_size = s.mating_size;
  d.boundary = s.boundary;
  d.mmb_size = s.mmb_size;
  d.shift_allowance = s.shift_allowance;
  return d;
}

}  // namespace

std::optional<DepthProfile> deciding_depth_profile(const BoreResult& b, std::size_t samples) {
  if (b.position_with_mobility)
    return depth_profile(*b.position_with_mobility, b.id + "/position/mobility", samples);
  if (b.position) return depth_profile(*b.position, b.id + "/position", samples);
  return std::nullopt;
}

std::optional<AxisDeviation> exit_deviation(const DepthProfile& profile) {
  if (!profile.leaves_zone_at || profile.samples.empty()) return std::nullopt;
  return deviation_at(profile.samples, *profile.leaves_zone_at);
}

std::string PartIdentity::notes_text() const {
  std::string text;
  for (const auto& [key, value] : notes) text += (text.empty() ? "" : "; ") + key + "=" + value;
  return text;
}

PartIdentity merged_identity(const PlanPart& plan, const PartIdentity& given) {
  PartIdentity part;
  part.id = given.id.empty() ? plan.id : given.id;
  part.serial = given.serial.empty() ? plan.serial : given.serial;
  part.timestamp = given.timestamp.empty() ? plan.timestamp : given.timestamp;
  part.notes = plan.notes;
  for (const auto& note : given.notes) {
    auto same = std::find_if(part.notes.begin(), part.notes.end(),
                             [&](const auto& n) { return n.first == note.first; });
    if (same != part.notes.end())
      same->second = note.second;
    else
      part.notes.push_back(note);
  }
  return part;
}

bool is_iso8601_timestamp(std::string_view text) {
  // YYYY-MM-DDThh:mm[:ss[.f+]](Z|+hh:mm|-hh:mm)
  static const std::regex form(
      R"((\d{4})-(\d{2})-(\d{2})T(\d{2}):(\d{2})(?::(\d{2})(?:\.\d+)?)?(Z|[+-](\d{2}):(\d{2})))");
  std::match_results<std::string_view::const_iterator> g;
  if (!std::regex_match(text.begin(), text.end(), g, form)) return false;
  const auto n = [&](int k) { return g[k].matched ? std::stoi(g[k].str()) : 0; };
  return n(2) >= 1 && n(2) <= 12 && n(3) >= 1 && n(3) <= 31 && n(4) <= 23 && n(5) <= 59 &&
         n(6) <= 60 && n(8) <= 23 && n(9) <= 59;
}

std::string in_report_unit(const std::string& text, const ReportUnits& units) {
  if (units.unit() == LengthUnit::millimetre) return text;
  // A number directly followed by " mm" as a word: the form every evaluation message uses.
  static const std::regex length(R"((-?\d+(?:\.\d+)?(?:[eE][-+]?\d+)?) mm\b)");
  std::string out;
  auto from = text.cbegin();
  for (std::sregex_iterator it(text.begin(), text.end(), length), end; it != end; ++it) {
    out.append(from, (*it)[0].first);
    out += units.text(std::stod((*it)[1].str())) + " " + std::string(units.name());
    from = (*it)[0].second;
  }
  out.append(from, text.cend());
  return out;
}

std::string with_file_lines(const std::string& text, const std::vector<std::size_t>& lines) {
  if (lines.empty() || text.find("suspect point") == std::string::npos) return text;
  static const std::regex number(R"(#(\d+))");
  std::string out;
  auto from = text.cbegin();
  for (std::sregex_iterator it(text.begin(), text.end(), number), end; it != end; ++it) {
    out.append(from, (*it)[0].second);
    const std::size_t n = std::stoul((*it)[1].str());
    if (n >= 1 && n <= lines.size()) out += " (line " + std::to_string(lines[n - 1]) + ")";
    from = (*it)[0].second;
  }
  out.append(from, text.cend());
  return out;
}

ReportUnits::ReportUnits(LengthUnit unit) noexcept
    : unit_(unit), per_mm_(1.0 / millimetres_per(unit)) {}

std::string ReportUnits::fixed(double value, int decimals) {
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, "%.*f", decimals, value);
  return buffer;
}

const Characteristic* ReportModel::find(std::string_view id) const noexcept {
  for (const Characteristic& c : characteristics)
    if (c.id == id) return &c;
  return nullptr;
}

const InputRecord* ReportModel::input(std::string_view role) const noexcept {
  for (const InputRecord& in : inputs)
    if (in.role == role) return &in;
  return nullptr;
}

std::optional<std::size_t> ReportModel::file_line(std::string_view role,
                                                  std::size_t index) const noexcept {
  const InputRecord* in = input(role);
  if (!in || index >= in->point_lines.size()) return std::nullopt;
  return in->point_lines[index];
}

const FeatureSegmentation* ReportModel::segmentation_of(std::string_view role) const noexcept {
  if (!scan) return nullptr;
  for (const FeatureSegmentation& f : scan->features)
    if (f.role == role) return &f;
  return nullptr;
}

const FeaturePreparation* ReportModel::preparation_of(std::string_view role) const noexcept {
  for (const FeaturePreparation& p : preparation)
    if (p.role == role) return &p;
  return nullptr;
}

bool ReportModel::points_prepared() const noexcept {
  for (const FeaturePreparation& p : preparation) {
    const PrepareRecord& r = p.record;
    if (r.probe_tip.mode != CompensationMode::none || r.outliers.neighbour_filter.enabled ||
        r.outliers.residual_rejection.enabled)
      return true;
  }
  return false;
}

const BoreSummary* ReportModel::bore(std::string_view id) const noexcept {
  for (const BoreSummary& b : bores)
    if (b.id == id) return &b;
  return nullptr;
}

std::optional<RangeSource> ReportModel::range_source(const Characteristic& c) const noexcept {
  const BoreSummary* b = bore(c.feature);
  if (!b || !b->evaluated()) return std::nullopt;
  if (b->depth && (c.id == b->id + "/position" || c.id == b->id + "/position/mobility"))
    return b->depth->range_source;
  return b->depth_source;
}

std::vector<Characteristic> ReportModel::of_feature(std::string_view feature) const {
  std::vector<Characteristic> out;
  for (const Characteristic& c : characteristics)
    if (c.feature == feature) out.push_back(c);
  return out;
}

std::vector<Characteristic> report_characteristics(const PartCheckResult& result) {
  return result.characteristics;  // decided once, by the decide stage
}

ReportModel make_report_model(const PartCheckResult& r, const ReportModelOptions& options) {
  ReportModel m;
  m.tool_version = version_string;
  m.units = ReportUnits(r.plan.unit);
  m.plan_name = r.plan.name;
  m.plan_file = r.plan.file;
  m.part = options.part;
  m.inputs = r.inputs;
  m.evaluation = &r;
  m.preparation = r.preparation;
  m.scan = r.scan;
  // Where outliers were removed, the fits' point k is the file's point kept[k]: the lines that
  // name stray points (file_line, with_file_lines) follow the points the fits used.
  for (const FeaturePreparation& p : m.preparation) {
    if (p.record.outliers.removed_count() == 0) continue;
    for (InputRecord& in : m.inputs) {
      if (in.role != p.role || in.point_lines.empty()) continue;
      std::vector<std::size_t> lines;
      for (std::size_t k : p.record.kept)
        if (k < in.point_lines.size()) lines.push_back(in.point_lines[k]);
      in.point_lines = std::move(lines);
    }
  }

  const DatumFrameResult& d = r.datums;
  DatumSummary a;
  a.label = 'A';
  a.feature = "plane";
  a.association = std::string(association_name(d.a.association));
  a.flatness = d.a.flatness;
  a.material_side_inferred = d.a.material_side_inferred;
  m.datums.push_back(a);
  if (d.b) m.datums.push_back(size_datum_summary(*d.b));
  if (d.c_feature) m.datums.push_back(size_datum_summary(*d.c_feature));
  if (d.c_width) {
    DatumSummary c;
    c.label = d.c_width->label;
    c.feature = std::string(feature_kind_name(d.c_width->kind));
    c.mating_size = d.c_width->mating_width;
    c.mating_is_width = true;
    c.boundary = d.c_width->boundary;
    c.mmb_size = d.c_width->mmb_size;
    c.shift_allowance = d.c_width->shift_allowance;
    m.datums.push_back(c);
  }
  if (d.c_plane) {
    DatumSummary c;
    c.label = 'C';
    c.feature = "plane";
    m.datums.push_back(c);
  }
  for (const std::string& note : d.notes) {
    // A datum's stray-point note starts with its role, "datum B: ...".
    const InputRecord* in = note.size() > 7 && note.compare(0, 6, "datum ") == 0
                                ? m.input(note.substr(0, 7))
                                : nullptr;
    m.frame_notes.push_back(
        in_report_unit(in ? with_file_lines(note, in->point_lines) : note, m.units));
  }

  m.characteristics = report_characteristics(r);
  for (Characteristic& c : m.characteristics)
    c.not_evaluated = in_report_unit(c.not_evaluated, m.units);
  for (const BoreResult& b : r.bores) {
    BoreSummary s;
    s.id = b.id;
    s.verdict = combine(m.of_feature(b.id));
    s.axis_method = std::string(axis_method_name(b.axis_method));
    s.not_evaluated = in_report_unit(b.not_evaluated, m.units);
    s.axis_direction = std::string(axis_direction_name(
        b.direction_held ? AxisDirection::nominal : AxisDirection::fitted));
    s.probed_top = b.probed_top;
    s.probed_bottom = b.probed_bottom;
    if (b.evaluated() && b.surface_map.angle_cells > 0) s.surface = b.surface_map;
    s.depth_source = b.depth_source;
    s.tilt_rad = b.tilt.angle_rad;
    s.tilt_azimuth_deg = b.tilt.azimuth_deg;
    s.depth = deciding_depth_profile(b, options.depth_samples);
    if (b.position_with_mobility) s.mobility = in_report_unit(b.mobility_reason, m.units);
    if (b.virtual_condition &&
        (b.virtual_condition_with_mobility ||
         (b.virtual_condition->conservative && b.virtual_condition->on_true_position)))
      s.boundary = in_report_unit(boundary_reason(b), m.units);
    if (b.evaluated() && b.sampling) {
      s.sampling = b.sampling;
      for (std::string& w : s.sampling->warnings) w = in_report_unit(w, m.units);
    }
    const InputRecord* in = m.input("bore " + b.id);
    for (const std::string& w : b.warnings)
      s.warnings.push_back(in_report_unit(in ? with_file_lines(w, in->point_lines) : w, m.units));
    m.bores.push_back(std::move(s));
  }
  m.sensitivity = r.sensitivity;
  m.verdict = combine(m.characteristics);
  for (const std::string& w : r.warnings) m.warnings.push_back(in_report_unit(w, m.units));
  return m;
}

}  // namespace cylzone
