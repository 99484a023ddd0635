// Reports of a part check. Values are converted from millimetres to the plan's unit here and
// nowhere else. The JSON schema is documented in docs/report-schema.md; keep the two in step.
#include "cylzone/report/report.hpp"

#include <cstdio>
#include <nlohmann/json.hpp>
#include <sstream>

#include "cylzone/decide/bore_characteristics.hpp"
#include "cylzone/version.hpp"

namespace cylzone {
namespace {

using nlohmann::json;

/// Conversion of lengths to the report's unit, and their fixed-point text.
struct ReportUnits {
  explicit ReportUnits(LengthUnit u) : unit(u), per_mm(1.0 / millimetres_per(u)) {}
  LengthUnit unit;
  double per_mm;
  /// mm: 4 decimals (0.1 µm); inch: 5 decimals (0.25 µm): finer than a micrometre.
  int decimals() const { return unit == LengthUnit::inch ? 5 : 4; }
  double length(double mm) const { return mm * per_mm; }
  json point(const Eigen::Vector3d& p) const {
    return json::array({length(p.x()), length(p.y()), length(p.z())});
  }
  std::string text(double mm) const { return fixed(length(mm), decimals()); }
  static std::string fixed(double v, int decimals) {
    char buffer[64];
    std::snprintf(buffer, sizeof buffer, "%.*f", decimals, v);
    return buffer;
  }
};

json direction(const Eigen::Vector3d& d) { return json::array({d.x(), d.y(), d.z()}); }

json optional_number(const std::optional<double>& v, const ReportUnits& u) {
  return v ? json(u.length(*v)) : json(nullptr);
}

/// The decided verdict of characteristic `id`, or null when the bore has no such characteristic.
json verdict_json(const std::vector<Characteristic>& cs, const std::string& id) {
  const Characteristic* c = find_characteristic(cs, id);
  return c ? json(std::string(verdict_name(c->verdict))) : json(nullptr);
}

/// The combined verdict of the characteristics whose id starts with `prefix` (e.g. a bore's
/// size limits), or null when there are none.
json group_verdict_json(const std::vector<Characteristic>& cs, const std::string& prefix) {
  std::vector<Characteristic> group;
  for (const Characteristic& c : cs)
    if (c.id.compare(0, prefix.size(), prefix) == 0) group.push_back(c);
  return group.empty() ? json(nullptr) : json(std::string(verdict_name(combine(group))));
}

json deviation_json(const AxisDeviation& d, const ReportUnits& u) {
  return {{"z", u.length(d.height)},
          {"dx", u.length(d.offset.x())},
          {"dy", u.length(d.offset.y())},
          {"position", u.length(d.diameter())}};
}

json position_json(const PositionResult& p, json verdict, const ReportUnits& u) {
  json j = {{"tolerance", u.length(p.spec.tolerance)},
            {"modifier", std::string(condition_name(p.spec.condition))},
            {"datums", datum_references_text(p.spec.datums)},
            {"projected", p.projected},
            {"projected_height", optional_number(p.spec.projected_height, u)},
            {"range", {{"top", u.length(p.range_top)}, {"bottom", u.length(p.range_bottom)}}},
            {"value", u.length(p.value)},
            {"bonus", u.length(p.bonus)},
            {"allowed", u.length(p.allowed)},
            {"top", deviation_json(p.top, u)},
            {"bottom", deviation_json(p.bottom, u)},
            {"worst", deviation_json(p.worst, u)},
            {"leaves_zone_at", optional_number(p.leaves_zone_at, u)},
            {"verdict", std::move(verdict)}};
  if (!p.section_centres.empty()) {
    json centres = json::array();
    for (const AxisDeviation& c : p.section_centres) centres.push_back(deviation_json(c, u));
    j["section_centres"] = centres;
  }
  return j;
}

/// Suspect points, numbered 1-based as in the point file's data order.
json stray_json(const StrayPointReport& r, const ReportUnits& u) {
  json points = json::array();
  for (const StrayPoint& p : r.points)
    points.push_back({{"point_number", p.index + 1},
                      {"residual", u.length(p.residual)},
                      {"excess", u.length(p.excess)}});
  return {{"screened", r.screened}, {"robust_scale", u.length(r.robust_scale)}, {"points", points}};
}

json fit_json(const CylinderFit& f, const ReportUnits& u) {
  return {{"axis", {{"point", u.point(f.axis.point)}, {"direction", direction(f.axis.direction)}}},
          {"diameter", u.length(f.diameter())},
          {"rms", u.length(f.residuals.rms)},
          {"form", u.length(f.residuals.form)},
          {"ambiguity", u.length(f.ambiguity)},
          {"points", f.summary.point_count},
          {"status", f.summary.status == FitStatus::converged ? "converged" : "iteration-limit"},
          {"message", f.summary.message}};
}

json size_datum_json(const SizeDatumResult& d, const ReportUnits& u) {
  return {{"feature", std::string(feature_kind_name(d.kind))},
          {"mating_size", u.length(d.mating_size)},
          {"ambiguity", u.length(d.related_envelope.ambiguity)},
          {"axis", {{"point", u.point(d.related_envelope.axis.point)},
                    {"direction", direction(d.related_envelope.axis.direction)}}},
          {"axis_on_a", u.point(d.axis_on_a)},
          {"boundary", std::string(boundary_name(d.boundary))},
          {"mmb_size", optional_number(d.mmb_size, u)},
          {"shift_allowance",
           d.boundary == MaterialBoundary::mmb ? u.length(d.shift_allowance) : 0.0},
          {"stray_points", stray_json(d.stray_points, u)}};
}

json bore_json(const BoreResult& b, const BoreSensitivity* s,
               const std::vector<Characteristic>& cs, const ReportUnits& u) {
  json j;
  j["id"] = b.id;
  j["verdict"] = std::string(verdict_name(feature_verdict(cs, b.id)));
  j["axis_method"] = std::string(axis_method_name(b.axis_method));
  j["axis"] = {{"point", u.point(b.axis.point)}, {"direction", direction(b.axis.direction)}};
  j["probed"] = {{"top", u.length(b.probed_top)}, {"bottom", u.length(b.probed_bottom)}};
  j["tilt"] = {{"angle_rad", b.tilt.angle_rad}, {"azimuth_deg", b.tilt.azimuth_deg}};
  j["size"] = {{"lower", b.size.limits ? json(u.length(b.size.limits->lower)) : json(nullptr)},
               {"upper", b.size.limits ? json(u.length(b.size.limits->upper)) : json(nullptr)},
               {"least_squares", u.length(b.size.least_squares)},
               {"mating_envelope", u.length(b.size.mating_envelope)},
               {"related_mating_envelope", u.length(b.size.related_mating_envelope)},
               {"minimum_material_envelope", u.length(b.size.minimum_material_envelope)},
               {"two_point_min", u.length(b.size.two_point_min)},
               {"two_point_max", u.length(b.size.two_point_max)},
               {"two_point_count", b.size.two_point_count},
               {"verdict", group_verdict_json(cs, b.id + "/size/")},
               {"reason", size_reason(cs, b.id)}};
  j["form"] = {{"cylindricity", u.length(b.form.cylindricity)},
               {"tolerance", optional_number(b.form.tolerance, u)},
               {"verdict", verdict_json(cs, b.id + "/cylindricity")}};
  j["position"] =
      b.position ? position_json(*b.position, verdict_json(cs, b.id + "/position"), u) : json(nullptr);
  if (b.position_with_mobility) {
    json m = position_json(*b.position_with_mobility, verdict_json(cs, b.id + "/position/mobility"), u);
    m["motion"] = {{"shift", json::array({u.length(b.mobility_motion->shift.x()),
                                          u.length(b.mobility_motion->shift.y())})},
                   {"rotation_rad", b.mobility_motion->rotation_rad}};
    m["reason"] = b.mobility_reason;
    j["position_with_mobility"] = m;
  } else {
    j["position_with_mobility"] = nullptr;
  }
  if (b.perpendicularity) {
    const PerpendicularityResult& p = *b.perpendicularity;
    j["perpendicularity"] = {{"tolerance", u.length(p.spec.tolerance)},
                             {"modifier", std::string(condition_name(p.spec.condition))},
                             {"range", {{"top", u.length(p.range_top)},
                                        {"bottom", u.length(p.range_bottom)}}},
                             {"value", u.length(p.value)},
                             {"bonus", u.length(p.bonus)},
                             {"allowed", u.length(p.allowed)},
                             {"verdict", verdict_json(cs, b.id + "/perpendicularity")}};
  } else {
    j["perpendicularity"] = nullptr;
  }
  j["virtual_condition"] =
      b.virtual_condition
          ? json{{"boundary", u.length(b.virtual_condition->boundary)},
                 {"clearance", u.length(b.virtual_condition->clearance)},
                 {"verdict", verdict_json(cs, b.id + "/virtual-condition")}}
          : json(nullptr);
  j["fits"] = {{"least_squares", fit_json(b.least_squares, u)},
               {"mating_envelope", fit_json(b.mating_envelope, u)},
               {"related_envelope", fit_json(b.related_envelope, u)},
               {"minimum_material", fit_json(b.minimum_material, u)},
               {"minimum_zone", fit_json(b.minimum_zone, u)}};
  json sensitivity = json::array();
  if (s)
    for (const AssociationSensitivity& row : s->rows)
      sensitivity.push_back(
          {{"association", std::string(association_name(row.association))},
           {"position", u.length(row.position)},
           {"position_verdict", row.position_verdict
                                    ? json(std::string(verdict_name(*row.position_verdict)))
                                    : json(nullptr)},
           {"perpendicularity", u.length(row.perpendicularity)},
           {"perpendicularity_verdict",
            row.perpendicularity_verdict
                ? json(std::string(verdict_name(*row.perpendicularity_verdict)))
                : json(nullptr)}});
  j["sensitivity"] = sensitivity;
  j["stray_points"] = stray_json(b.stray_points, u);
  j["warnings"] = b.warnings;
  return j;
}

const BoreSensitivity* sensitivity_of(const PartCheckResult& r, const std::string& id) {
  for (const BoreSensitivity& s : r.sensitivity)
    if (s.bore_id == id) return &s;
  return nullptr;
}

std::string csv_field(const std::string& text) {
  if (text.find_first_of(",\"\n") == std::string::npos) return text;
  std::string quoted = "\"";
  for (char c : text) {
    if (c == '"') quoted += '"';
    quoted += c;
  }
  return quoted + "\"";
}

std::string pad(std::string text, std::size_t width) {
  if (text.size() < width) text.append(width - text.size(), ' ');
  return text;
}

std::string pad_left(std::string text, std::size_t width) {
  if (text.size() < width) text.insert(0, width - text.size(), ' ');
  return text;
}

}  // namespace

std::vector<CharacteristicRow> characteristic_rows(const PartCheckResult& result) {
  std::vector<CharacteristicRow> rows;
  for (const Characteristic& c : result.characteristics)
    rows.push_back({c.feature, c.name, c.reference, c.value, c.tolerance, c.bonus, c.allowed,
                    std::string(comparison_symbol(c.comparison)), c.verdict, c.decisive});
  return rows;
}

std::string format_json(const PartCheckResult& r) {
  const ReportUnits u(r.plan.unit);
  json j;
  j["schema"] = "cylzone-report-1";
  j["tool"] = {{"name", "cylzone"}, {"version", version_string}};
  j["caution"] = std::string(safety_caution);
  j["plan"] = {{"name", r.plan.name}, {"file", r.plan.file.string()},
               {"units", std::string(unit_name(r.plan.unit))}};
  json inputs = json::array();
  for (const InputRecord& in : r.inputs)
    inputs.push_back({{"role", in.role}, {"path", in.path.string()}, {"sha256", in.sha256},
                      {"points", in.points}});
  j["inputs"] = inputs;

  const DatumFrame& f = r.datums.frame;
  j["frame"] = {{"origin", u.point(f.origin)},
                {"x_axis", direction(f.rotation.row(0).transpose())},
                {"y_axis", direction(f.rotation.row(1).transpose())},
                {"z_axis", direction(f.rotation.row(2).transpose())},
                {"rotation_fixed", r.datums.rotation_fixed},
                {"translation_fixed", r.datums.translation_fixed},
                {"notes", r.datums.notes}};
  json datums;
  datums["A"] = {{"feature", "plane"},
                 {"association", std::string(association_name(r.datums.a.association))},
                 {"point", u.point(r.datums.a.plane.point)},
                 {"normal", direction(r.datums.a.plane.normal)},
                 {"flatness", u.length(r.datums.a.flatness)},
                 {"material_side_inferred", r.datums.a.material_side_inferred},
                 {"stray_points", stray_json(r.datums.a.stray_points, u)}};
  if (r.datums.b) datums["B"] = size_datum_json(*r.datums.b, u);
  // The plan's basic location of a bore, pin, slot or tab C (the plan requires it), in the frame.
  const auto c_basic = [&]() -> json {
    const PlanDatum* c = r.plan.datum('C');
    if (!c || !c->basic_location) return nullptr;
    return json::array({u.length(c->basic_location->x()), u.length(c->basic_location->y())});
  };
  if (r.datums.c_feature) {
    datums["C"] = size_datum_json(*r.datums.c_feature, u);
    datums["C"]["basic"] = c_basic();
  }
  if (r.datums.c_width) {
    const ClockingWidthResult& w = *r.datums.c_width;
    datums["C"] = {{"feature", std::string(feature_kind_name(w.kind))},
                   {"mating_width", u.length(w.mating_width)},
                   {"centre_plane_normal", direction(w.centre_plane_normal)},
                   {"centre_direction", direction(w.centre_direction)},
                   {"basic", c_basic()},
                   {"boundary", std::string(boundary_name(w.boundary))},
                   {"mmb_size", optional_number(w.mmb_size, u)},
                   {"shift_allowance",
                    w.boundary == MaterialBoundary::mmb ? u.length(w.shift_allowance) : 0.0},
                   {"stray_points", stray_json(w.stray_points, u)}};
  }
  if (r.datums.c_plane)
    datums["C"] = {{"feature", "plane"},
                   {"point", u.point(r.datums.c_plane->plane.point)},
                   {"normal", direction(r.datums.c_plane->plane.normal)},
                   {"stray_points", stray_json(r.datums.c_plane->stray_points, u)}};
  j["datums"] = datums;

  json bores = json::array();
  for (const BoreResult& b : r.bores)
    bores.push_back(bore_json(b, sensitivity_of(r, b.id), r.characteristics, u));
  j["bores"] = bores;
  j["verdict"] = std::string(verdict_name(r.verdict));
  j["warnings"] = r.warnings;
  return j.dump(2) + "\n";
}

std::string format_csv(const PartCheckResult& r) {
  const ReportUnits u(r.plan.unit);
  std::ostringstream out;
  out << "part,bore,characteristic,reference,value,tolerance,bonus,allowed,comparison,verdict,"
         "decisive,units\n";
  for (const CharacteristicRow& row : characteristic_rows(r)) {
    out << csv_field(r.plan.name) << ',' << csv_field(row.bore_id) << ','
        << csv_field(row.characteristic) << ',' << csv_field(row.reference) << ','
        << u.text(row.value) << ',' << u.text(row.tolerance) << ',' << u.text(row.bonus) << ','
        << u.text(row.allowed) << ',' << row.comparison << ',' << verdict_name(row.verdict)
        << ',' << (row.decisive ? "yes" : "no") << ',' << unit_name(r.plan.unit) << '\n';
  }
  return out.str();
}

std::string format_table(const PartCheckResult& r) {
  const ReportUnits u(r.plan.unit);
  const int w = u.decimals() + 5;
  std::ostringstream out;
  out << "cylzone " << version_string << " check: " << r.plan.name << "  (" << r.plan.file.filename().string()
      << ", values in " << unit_name(r.plan.unit) << ")\n\n";

  // Datum reference frame, in a few lines.
  const DatumFrameResult& d = r.datums;
  out << "Datum reference frame\n";
  out << "  A  plane, " << association_name(d.a.association) << ", flatness "
      << u.text(d.a.flatness) << (d.a.material_side_inferred ? ", material side inferred" : "")
      << '\n';
  // One line per datum feature of size: its related mating size (a diameter, or a width), the
  // boundary it is used at and, at MMB or LMB, the boundary size and the shift it allows.
  auto size_line = [&](char label, FeatureKind kind, const char* measure, double mating,
                       MaterialBoundary boundary, const std::optional<double>& mmb,
                       double allowance) {
    out << "  " << label << "  " << feature_kind_name(kind) << ", related mating " << measure
        << " " << u.text(mating) << ", " << boundary_name(boundary);
    // The datum mobility applies MMB only; LMB is left fixed, which is conservative.
    if (boundary == MaterialBoundary::mmb && mmb)
      out << " " << u.text(*mmb) << ", shift allowance " << u.text(allowance);
    if (boundary == MaterialBoundary::lmb) out << " (shift not applied: conservative)";
    out << '\n';
  };
  for (const auto* s : {&d.b, &d.c_feature})
    if (*s)
      size_line((*s)->label, (*s)->kind, "size", (*s)->mating_size, (*s)->boundary,
                (*s)->mmb_size, (*s)->shift_allowance);
  if (d.c_width)
    size_line(d.c_width->label, d.c_width->kind, "width", d.c_width->mating_width,
              d.c_width->boundary, d.c_width->mmb_size, d.c_width->shift_allowance);
  if (d.c_plane) out << "  C  plane, tangent least squares perpendicular to A\n";
  for (const std::string& note : d.notes) out << "  note: " << note << '\n';
  out << '\n';

  // One row per bore and characteristic.
  out << pad("bore", 7) << pad("characteristic", 33) << pad("reference", 19)
      << pad_left("value", w) << "    " << pad_left("limit", w) << pad_left("bonus", w)
      << pad_left("allowed", w) << "   verdict\n";
  const std::vector<CharacteristicRow> rows = characteristic_rows(r);
  std::string previous;
  bool footnote = false;
  for (const CharacteristicRow& row : rows) {
    if (!previous.empty() && row.bore_id != previous) out << '\n';
    previous = row.bore_id;
    std::string verdict(verdict_name(row.verdict));
    if (!row.decisive) {
      verdict = "(" + verdict + ")*";
      footnote = true;
    } else if (row.verdict == Verdict::does_not_conform) {
      verdict = "DOES NOT CONFORM";
    }
    out << pad(row.bore_id, 7) << pad(row.characteristic, 33) << pad(row.reference, 19)
        << pad_left(u.text(row.value), w) << ' ' << row.comparison << ' '
        << pad_left(u.text(row.tolerance), w) << pad_left(u.text(row.bonus), w)
        << pad_left(u.text(row.allowed), w) << "   " << verdict << '\n';
  }
  if (footnote)
    out << "\n* shown for comparison: the datum reference lets the frame move, and the "
           "'datum mobility' row decides.\n";

  // Along the depth: what single-plane summaries hide.
  out << "\nAlong the depth (z from datum A; dx, dy from true position; 2D = single-plane "
         "position)\n";
  out << pad("bore", 8) << pad_left("top z", w) << pad_left("dx", w) << pad_left("dy", w)
      << pad_left("2D", w) << pad_left("bottom z", w + 1) << pad_left("dx", w)
      << pad_left("dy", w) << pad_left("2D", w) << pad_left("probed z", 17)
      << pad_left("tilt urad", 11) << pad_left("toward", 8) << "  leaves zone at\n";
  for (const BoreResult& b : r.bores) {
    if (!b.position) continue;
    const PositionResult& p = b.position_with_mobility ? *b.position_with_mobility : *b.position;
    out << pad(b.id, 8) << pad_left(u.text(p.top.height), w) << pad_left(u.text(p.top.offset.x()), w)
        << pad_left(u.text(p.top.offset.y()), w) << pad_left(u.text(p.top.diameter()), w)
        << pad_left(u.text(p.bottom.height), w + 1) << pad_left(u.text(p.bottom.offset.x()), w)
        << pad_left(u.text(p.bottom.offset.y()), w) << pad_left(u.text(p.bottom.diameter()), w)
        << pad_left(ReportUnits::fixed(u.length(b.probed_top), u.decimals() - 2) + " .. " +
                        ReportUnits::fixed(u.length(b.probed_bottom), u.decimals() - 2),
                    17)
        << pad_left(ReportUnits::fixed(b.tilt.angle_rad * 1e6, 1), 11)
        << pad_left(ReportUnits::fixed(b.tilt.azimuth_deg, 0), 7) << "d  "
        << (p.leaves_zone_at ? "z = " + u.text(*p.leaves_zone_at) : std::string("stays inside"))
        << '\n';
  }

  if (!r.sensitivity.empty() && !r.sensitivity.front().rows.empty()) {
    out << "\nSensitivity to the association of datum A (position / perpendicularity; ! = the "
           "verdict differs from the plan's association)\n";
    out << pad("bore", 8);
    for (const AssociationSensitivity& row : r.sensitivity.front().rows)
      out << pad_left(std::string(association_name(row.association)), 2 * w + 6);
    out << pad_left("spread", 2 * w + 6) << '\n';
    bool any_change = false;
    for (const BoreSensitivity& s : r.sensitivity) {
      out << pad(s.bore_id, 8);
      const AssociationSensitivity& planned = s.rows.front();
      for (const AssociationSensitivity& row : s.rows) {
        const bool p_changed = row.position_verdict != planned.position_verdict;
        const bool q_changed = row.perpendicularity_verdict != planned.perpendicularity_verdict;
        any_change = any_change || p_changed || q_changed;
        out << pad_left(u.text(row.position) + (p_changed ? "!" : " ") + "/ " +
                            u.text(row.perpendicularity) + (q_changed ? "!" : " "),
                        2 * w + 6);
      }
      out << pad_left(u.text(s.position_spread) + " / " + u.text(s.perpendicularity_spread) + " ",
                      2 * w + 6)
          << '\n';
    }
    if (any_change)
      out << "A verdict that changes with the association of A is decided by the datum method, "
             "not the part:\nagree the method with the customer before comparing results.\n";
  }

  for (const BoreResult& b : r.bores)
    for (const std::string& warning : b.warnings)
      out << "warning: bore " << b.id << ": " << warning << '\n';
  for (const std::string& warning : r.warnings) out << "warning: " << warning << '\n';

  std::size_t failing = 0;
  for (const BoreResult& b : r.bores)
    failing += feature_verdict(r.characteristics, b.id) == Verdict::does_not_conform;
  out << "\nPart verdict: "
      << (r.verdict == Verdict::conforms ? std::string("CONFORMS")
                                         : "DOES NOT CONFORM (" + std::to_string(failing) +
                                               " of " + std::to_string(r.bores.size()) +
                                               " bores)")
      << "\n\n"
      << safety_caution << '\n';
  return out.str();
}

}  // namespace cylzone
