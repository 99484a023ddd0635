// The report model (report/report_model.hpp): built once from a part check; the renderers read
// nothing else but the model (and, for the JSON's detailed blocks, the result it refers to).
#include "cylzone/report/report_model.hpp"

#include <cstdio>

#include "cylzone/version.hpp"

namespace cylzone {
namespace {

/// The axis along the evaluated range of the position that decides.
DepthProfile depth_profile(const PositionResult& p, const std::string& id, std::size_t count) {
  DepthProfile d;
  d.characteristic_id = id;
  d.range_top = p.range_top;
  d.range_bottom = p.range_bottom;
  d.projected = p.projected;
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
  m.inputs = r.inputs;
  m.evaluation = &r;

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
  m.frame_notes = d.notes;

  m.characteristics = report_characteristics(r);
  for (const BoreResult& b : r.bores) {
    BoreSummary s;
    s.id = b.id;
    s.verdict = combine(m.of_feature(b.id));
    s.axis_method = std::string(axis_method_name(b.axis_method));
    s.probed_top = b.probed_top;
    s.probed_bottom = b.probed_bottom;
    s.tilt_rad = b.tilt.angle_rad;
    s.tilt_azimuth_deg = b.tilt.azimuth_deg;
    if (b.position_with_mobility)
      s.depth = depth_profile(*b.position_with_mobility, b.id + "/position/mobility",
                              options.depth_samples);
    else if (b.position)
      s.depth = depth_profile(*b.position, b.id + "/position", options.depth_samples);
    if (b.position_with_mobility) s.mobility = b.mobility_reason;
    s.warnings = b.warnings;
    m.bores.push_back(std::move(s));
  }
  m.sensitivity = r.sensitivity;
  m.verdict = combine(m.characteristics);
  m.warnings = r.warnings;
  return m;
}

}  // namespace cylzone
