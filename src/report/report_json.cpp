// Everything JSON in the library (nlohmann-json stays in this file): the part report writer
// (schema cylzone-report-1, docs/report-schema.md), its reader, and the `cylzone fit` object
// (docs/fit-json.md). Keep each in step with its document.
#include <algorithm>
#include <cmath>
#include <nlohmann/json.hpp>
#include <stdexcept>

#include "cylzone/core/errors.hpp"
#include "cylzone/decide/bore_characteristics.hpp"
#include "cylzone/report/audit_report.hpp"
#include "cylzone/report/batch_report.hpp"
#include "cylzone/report/fit_report.hpp"
#include "cylzone/report/forecast_report.hpp"
#include "cylzone/report/probing_report.hpp"
#include "cylzone/report/report.hpp"
#include "cylzone/report/report_reader.hpp"
#include "cylzone/version.hpp"

namespace cylzone {
namespace {

using nlohmann::json;

// ---------------------------------------------------------------------------------- writer

json direction(const Eigen::Vector3d& d) { return json::array({d.x(), d.y(), d.z()}); }

json point(const Eigen::Vector3d& p, const ReportUnits& u) {
  return json::array({u.length(p.x()), u.length(p.y()), u.length(p.z())});
}

json optional_number(const std::optional<double>& v, const ReportUnits& u) {
  return v ? json(u.length(*v)) : json(nullptr);
}

json verdict_json(const std::optional<Verdict>& v) {
  return v ? json(std::string(verdict_name(*v))) : json(nullptr);
}

/// The verdict of the characteristic `id`, or null when the model has none.
json verdict_of(const ReportModel& m, const std::string& id) {
  const Characteristic* c = m.find(id);
  return c ? json(std::string(verdict_name(c->verdict))) : json(nullptr);
}

/// combine() of the characteristics with these ids that exist, or null when none does.
json combined_verdict(const ReportModel& m, std::initializer_list<std::string> ids) {
  std::vector<Characteristic> found;
  for (const std::string& id : ids)
    if (const Characteristic* c = m.find(id)) found.push_back(*c);
  return found.empty() ? json(nullptr) : json(std::string(verdict_name(combine(found))));
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
            {"range_source", range_source_name(p.range_source)},
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

/// Suspect points, numbered 1-based as in the point file's data order, with the file line of
/// each when the input `role` has them (null otherwise: a mesh has no lines).
json stray_json(const StrayPointReport& r, const ReportModel& m, const std::string& role) {
  const ReportUnits& u = m.units;
  json points = json::array();
  for (const StrayPoint& p : r.points)
    points.push_back({{"point_number", p.index + 1},
                      {"line", m.file_line(role, p.index) ? json(*m.file_line(role, p.index))
                                                          : json(nullptr)},
                      {"residual", u.length(p.residual)},
                      {"excess", u.length(p.excess)}});
  return {{"screened", r.screened}, {"robust_scale", u.length(r.robust_scale)}, {"points", points}};
}

json fit_json(const CylinderFit& f, const ReportUnits& u) {
  return {{"axis", {{"point", point(f.axis.point, u)}, {"direction", direction(f.axis.direction)}}},
          {"diameter", u.length(f.diameter())},
          {"rms", u.length(f.residuals.rms)},
          {"form", u.length(f.residuals.form)},
          {"ambiguity", u.length(f.ambiguity)},
          {"points", f.summary.point_count},
          {"status", f.summary.status == FitStatus::converged ? "converged" : "iteration-limit"},
          {"message", f.summary.message}};
}

json size_datum_json(const SizeDatumResult& d, const ReportModel& m) {
  const ReportUnits& u = m.units;
  return {{"feature", std::string(feature_kind_name(d.kind))},
          {"mating_size", u.length(d.mating_size)},
          {"ambiguity", u.length(d.related_envelope.ambiguity)},
          {"axis", {{"point", point(d.related_envelope.axis.point, u)},
                    {"direction", direction(d.related_envelope.axis.direction)}}},
          {"axis_on_a", point(d.axis_on_a, u)},
          {"boundary", std::string(boundary_name(d.boundary))},
          {"mmb_size", optional_number(d.mmb_size, u)},
          {"shift_allowance",
           d.boundary == MaterialBoundary::mmb ? u.length(d.shift_allowance) : 0.0},
          {"stray_points", stray_json(d.stray_points, m, std::string("datum ") + d.label)}};
}

json depth_json(const std::optional<DepthProfile>& d, const ReportUnits& u) {
  if (!d) return nullptr;
  json samples = json::array();
  for (const AxisDeviation& s : d->samples) samples.push_back(deviation_json(s, u));
  return {{"characteristic", d->characteristic_id},
          {"range", {{"top", u.length(d->range_top)}, {"bottom", u.length(d->range_bottom)}}},
          {"projected", d->projected},
          {"range_source", range_source_name(d->range_source)},
          {"allowed", u.length(d->allowed)},
          {"leaves_zone_at", optional_number(d->leaves_zone_at, u)},
          {"samples", samples}};
}

/// size_reason() with its figures in the report's unit (it prints the characteristics' values
/// and limits as they are, and those are in mm).
std::string size_reason_in_unit(const ReportModel& m, const std::string& bore) {
  if (m.units.unit() == LengthUnit::millimetre) return size_reason(m.characteristics, bore);
  std::vector<Characteristic> own = m.of_feature(bore);
  for (Characteristic& c : own) {
    c.value = m.units.length(c.value);
    c.tolerance = m.units.length(c.tolerance);
  }
  return size_reason(own, bore);
}

json text_or_null(const std::string& text) { return text.empty() ? json(nullptr) : json(text); }

json part_json(const PartIdentity& p) {
  json notes = json::object();
  for (const auto& [key, value] : p.notes) notes[key] = value;
  return {{"id", text_or_null(p.id)},
          {"serial", text_or_null(p.serial)},
          {"timestamp", text_or_null(p.timestamp)},
          {"notes", notes}};
}

json characteristic_json(const Characteristic& c, const ReportUnits& u) {
  const bool evaluated = c.not_evaluated.empty();
  return {{"id", c.id},
          {"feature", c.feature},
          {"name", c.name},
          {"reference", c.reference},
          {"value", evaluated ? json(u.length(c.value)) : json(nullptr)},
          {"status", evaluated ? "evaluated" : "not evaluated"},
          {"reason", text_or_null(c.not_evaluated)},
          {"tolerance", u.length(c.tolerance)},
          {"bonus", u.length(c.bonus)},
          {"allowed", u.length(c.allowed)},
          {"comparison", std::string(comparison_symbol(c.comparison))},
          {"decisive", c.decisive},
          {"verdict", std::string(verdict_name(c.verdict))},
          {"rule", std::string(decision_rule_name(c.rule))},
          // The decision rule's inputs and limits (docs/evaluation.md, "Decision rules").
          {"effective_tolerance", u.length(c.allowed)},
          {"uncertainty", c.uncertainty ? json{{"expanded", u.length(c.uncertainty->expanded)},
                                               {"k", c.uncertainty->coverage_factor},
                                               {"source", c.uncertainty->source}}
                                        : json(nullptr)},
          {"acceptance_limit", u.length(c.acceptance_limit)},
          {"rejection_limit", u.length(c.rejection_limit)},
          {"rule_note", text_or_null(c.rule_note)}};
}

/// A bore's sampling adequacy (docs/report-schema.md, "sampling"): heights along the nominal
/// direction from A, in the report's unit; angles in degrees.
json sampling_json(const SamplingCoverage& s, const ReportUnits& u) {
  json sections = json::array();
  for (const SectionSampling& section : s.sections)
    sections.push_back({{"z", u.length(section.height)},
                        {"points", section.points},
                        {"coverage_deg", section.coverage_deg}});
  return {{"span", {{"top", u.length(s.span_top)},
                    {"bottom", u.length(s.span_bottom)},
                    {"length", u.length(s.span())}}},
          {"range", {{"top", u.length(s.range_top)},
                     {"bottom", u.length(s.range_bottom)},
                     {"length", u.length(s.range_top - s.range_bottom)}}},
          {"extrapolation", {{"top", u.length(s.extrapolation_top)},
                             {"bottom", u.length(s.extrapolation_bottom)}}},
          {"magnification", s.magnification ? json(*s.magnification) : json(nullptr)},
          {"section_count", s.sections.size()},
          {"section_points_min", s.section_points_min},
          {"section_points_median", s.section_points_median},
          {"sparse_sections", s.sparse_sections},
          {"coverage_deg", s.coverage_deg},
          {"worst_section_coverage_deg", s.worst_section_coverage_deg},
          {"worst_section_z", u.length(s.worst_section_height)},
          {"sections", sections},
          {"thresholds", {{"min_section_points", s.thresholds.min_section_points},
                          {"min_coverage_deg", s.thresholds.min_coverage_deg},
                          {"max_magnification", s.thresholds.max_magnification}}},
          {"warnings", s.warnings}};
}

/// A probing prediction (`cylzone advise`, `check --predict-probing`).
json probing_prediction_json(const ProbingPrediction& p, const ReportUnits& u) {
  json heights = json::array();
  for (double h : p.pattern.section_heights) heights.push_back(u.length(h));
  json j;
  j["pattern"] = {{"section_heights", heights},
                  {"points_per_section", p.pattern.points_per_section},
                  {"arc_deg", p.pattern.arc_deg},
                  {"arc_centre_deg", p.pattern.arc_centre_deg},
                  {"total_points", p.pattern.total_points()}};
  j["probing_sigma"] = u.length(p.probing_sigma);
  j["status"] = p.status == PredictionStatus::predicted ? "predicted" : "undetermined";
  j["message"] = text_or_null(p.message);
  if (p.status == PredictionStatus::undetermined) return j;
  const auto figure = [&](const SimulatedFigure& f) {
    return json{{"mean", u.length(f.mean)},
                {"standard_deviation", u.length(f.standard_deviation)},
                {"quantile95", u.length(f.quantile95)}};
  };
  const auto end = [&](const EndPrediction& e) {
    return json{{"height", u.length(e.height)},
                {"u_x", u.length(e.u_x)},
                {"u_y", u.length(e.u_y)},
                {"position", figure(e.position)}};
  };
  const auto decision = [&](const FigureUncertainty& f) {
    return json{{"tolerance", u.length(f.tolerance)},
                {"expanded", u.length(f.expanded)},
                {"share", f.share},
                {"meets_target", f.meets_target}};
  };
  j["trials"] = p.trials;
  j["adaptive"] = p.adaptive;
  j["batches"] = p.batches;
  j["converged"] = p.converged;
  j["magnification"] = p.magnification ? json(*p.magnification) : json(nullptr);
  j["u_tilt_urad"] = p.u_tilt * 1e6;
  j["top"] = end(p.top);
  j["bottom"] = end(p.bottom);
  j["full_depth"] = figure(p.full_depth);
  j["perpendicularity"] = figure(p.perpendicularity);
  j["position_uncertainty"] = decision(p.position);
  j["perpendicularity_uncertainty"] =
      p.perpendicularity_uncertainty ? decision(*p.perpendicularity_uncertainty) : json(nullptr);
  j["meets_target"] = p.meets_target;
  return j;
}

json bore_json(const BoreResult& b, const BoreSummary& s, const BoreSensitivity* sens,
               const ReportModel& m) {
  const ReportUnits& u = m.units;
  json j;
  j["id"] = b.id;
  j["verdict"] = std::string(verdict_name(s.verdict));
  j["axis_method"] = s.axis_method;
  j["status"] = s.evaluated() ? "evaluated" : "not evaluated";
  j["reason"] = text_or_null(s.not_evaluated);
  j["axis_direction"] = s.axis_direction;
  if (!s.evaluated()) {
    // Nothing was measured: no figures, only why (docs/report-schema.md).
    for (const char* key : {"axis", "probed", "depth_source", "tilt", "size", "form", "position",
                            "position_with_mobility", "perpendicularity", "virtual_condition",
                            "fits", "depth_profile", "stray_points", "sampling"})
      j[key] = nullptr;
    j["sensitivity"] = json::array();
    j["sensitivity_skipped"] = text_or_null(sens ? sens->skipped : std::string());
    j["warnings"] = s.warnings;
    return j;
  }
  j["axis"] = {{"point", point(b.axis.point, u)}, {"direction", direction(b.axis.direction)}};
  j["probed"] = {{"top", u.length(s.probed_top)}, {"bottom", u.length(s.probed_bottom)}};
  j["depth_source"] = range_source_name(s.depth_source);
  j["tilt"] = {{"angle_rad", s.tilt_rad}, {"azimuth_deg", s.tilt_azimuth_deg}};
  j["size"] = {{"lower", b.size.limits ? json(u.length(b.size.limits->lower)) : json(nullptr)},
               {"upper", b.size.limits ? json(u.length(b.size.limits->upper)) : json(nullptr)},
               {"least_squares", u.length(b.size.least_squares)},
               {"mating_envelope", u.length(b.size.mating_envelope)},
               {"related_mating_envelope", u.length(b.size.related_mating_envelope)},
               {"minimum_material_envelope", u.length(b.size.minimum_material_envelope)},
               {"two_point_min", u.length(b.size.two_point_min)},
               {"two_point_max", u.length(b.size.two_point_max)},
               {"two_point_count", b.size.two_point_count},
               {"verdict", combined_verdict(m, {b.id + "/size/lower",
                                                b.id + "/size/lower/two-point",
                                                b.id + "/size/upper"})},
               {"reason", size_reason_in_unit(m, b.id)}};
  j["form"] = {{"cylindricity", u.length(b.form.cylindricity)},
               {"tolerance", optional_number(b.form.tolerance, u)},
               {"verdict", verdict_of(m, b.id + "/cylindricity")}};
  j["position"] =
      b.position ? position_json(*b.position, verdict_of(m, b.id + "/position"), u) : json(nullptr);
  if (b.position_with_mobility) {
    json p = position_json(*b.position_with_mobility,
                           verdict_of(m, b.id + "/position/mobility"), u);
    p["motion"] = {{"shift", json::array({u.length(b.mobility_motion->shift.x()),
                                          u.length(b.mobility_motion->shift.y())})},
                   {"rotation_rad", b.mobility_motion->rotation_rad}};
    p["reason"] = in_report_unit(b.mobility_reason, u);
    p["datum_c_simulator"] = b.mobility_c_simulator;
    j["position_with_mobility"] = p;
  } else if (!b.mobility_not_evaluated.empty()) {
    // The pattern could not be evaluated as a whole: the reason instead of the figures.
    j["position_with_mobility"] = {{"status", "not evaluated"},
                                   {"reason", in_report_unit(b.mobility_not_evaluated, u)},
                                   {"verdict", verdict_of(m, b.id + "/position/mobility")}};
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
                             {"verdict", verdict_of(m, b.id + "/perpendicularity")}};
  } else {
    j["perpendicularity"] = nullptr;
  }
  if (b.virtual_condition) {
    // The deciding figure: after the boundaries' own frame motion when the datum reference
    // leaves the frame mobile (docs/report-schema.md).
    const VirtualConditionResult& v =
        b.virtual_condition_with_mobility ? *b.virtual_condition_with_mobility
                                          : *b.virtual_condition;
    json vc{{"boundary", u.length(v.boundary)},
            {"clearance", u.length(v.clearance)},
            {"verdict", verdict_of(m, b.id + "/virtual-condition")},
            {"basis", in_report_unit(v.basis, u)},
            {"conservative", v.conservative},
            {"reason", in_report_unit(boundary_reason(b), u)}};
    vc["motion"] = v.motion ? json{{"shift", json::array({u.length(v.motion->shift.x()),
                                                          u.length(v.motion->shift.y())})},
                                   {"rotation_rad", v.motion->rotation_rad}}
                            : json(nullptr);
    j["virtual_condition"] = vc;
  } else {
    j["virtual_condition"] = nullptr;
  }
  j["fits"] = {{"least_squares", fit_json(b.least_squares, u)},
               {"mating_envelope", fit_json(b.mating_envelope, u)},
               {"related_envelope", fit_json(b.related_envelope, u)},
               {"minimum_material", fit_json(b.minimum_material, u)},
               {"minimum_zone", fit_json(b.minimum_zone, u)}};
  json sensitivity = json::array();
  if (sens)
    for (const AssociationSensitivity& row : sens->rows)
      sensitivity.push_back({{"association", std::string(association_name(row.association))},
                             {"position", u.length(row.position)},
                             {"position_verdict", verdict_json(row.position_verdict)},
                             {"perpendicularity", u.length(row.perpendicularity)},
                             {"perpendicularity_verdict",
                              verdict_json(row.perpendicularity_verdict)}});
  j["sensitivity"] = sensitivity;
  j["depth_profile"] = depth_json(s.depth, u);
  j["stray_points"] = stray_json(b.stray_points, m, "bore " + b.id);
  j["sampling"] = s.sampling ? sampling_json(*s.sampling, u) : json(nullptr);
  // Only with `check --predict-probing`: without it the report is as before.
  if (s.probing_prediction)
    j["probing_prediction"] = probing_prediction_json(*s.probing_prediction, u);
  j["warnings"] = s.warnings;
  return j;
}

const BoreSensitivity* sensitivity_of(const ReportModel& m, const std::string& id) {
  for (const BoreSensitivity& s : m.sensitivity)
    if (s.bore_id == id) return &s;
  return nullptr;
}

json datums_json(const PartCheckResult& r, const ReportModel& m) {
  const ReportUnits& u = m.units;
  json datums;
  datums["A"] = {{"feature", "plane"},
                 {"association", std::string(association_name(r.datums.a.association))},
                 {"point", point(r.datums.a.plane.point, u)},
                 {"normal", direction(r.datums.a.plane.normal)},
                 {"flatness", u.length(r.datums.a.flatness)},
                 {"material_side_inferred", r.datums.a.material_side_inferred},
                 {"stray_points", stray_json(r.datums.a.stray_points, m, "datum A")}};
  if (r.datums.b) datums["B"] = size_datum_json(*r.datums.b, m);
  // The plan's basic location of a bore, pin, slot or tab C (the plan requires it), in the frame.
  const auto c_basic = [&]() -> json {
    const PlanDatum* c = r.plan.datum('C');
    if (!c || !c->basic_location) return nullptr;
    return json::array({u.length(c->basic_location->x()), u.length(c->basic_location->y())});
  };
  if (r.datums.c_feature) {
    datums["C"] = size_datum_json(*r.datums.c_feature, m);
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
                   {"stray_points",
                    stray_json(w.stray_points, m, std::string("datum ") + w.label)}};
  }
  if (r.datums.c_plane)
    datums["C"] = {{"feature", "plane"},
                   {"point", point(r.datums.c_plane->plane.point, u)},
                   {"normal", direction(r.datums.c_plane->plane.normal)},
                   {"stray_points", stray_json(r.datums.c_plane->stray_points, m, "datum C")}};
  return datums;
}

// ---------------------------------------------------------------------------------- reader

/// Walks a parsed report; every failure is an InputError naming the source and the JSON path.
class ReportReader {
 public:
  explicit ReportReader(std::string source) : source_(std::move(source)) {}

  [[noreturn]] void fail(const std::string& path, const std::string& problem) const {
    throw InputError(source_, 0, problem, path);
  }
  const json& key(const json& object, const std::string& path, const char* name) const {
    if (!object.is_object()) fail(path, "expected an object");
    const auto it = object.find(name);
    if (it == object.end()) fail(join(path, name), "missing");
    return *it;
  }
  static std::string join(const std::string& path, const char* name) {
    return path.empty() ? std::string(name) : path + "." + name;
  }
  const json& array(const json& object, const std::string& path, const char* name) const {
    const json& a = key(object, path, name);
    if (!a.is_array()) fail(join(path, name), "expected an array");
    return a;
  }
  std::string text(const json& object, const std::string& path, const char* name) const {
    const json& v = key(object, path, name);
    if (!v.is_string()) fail(join(path, name), "expected a string");
    return v.get<std::string>();
  }
  double number(const json& object, const std::string& path, const char* name) const {
    const json& v = key(object, path, name);
    if (!v.is_number()) fail(join(path, name), "expected a number");
    return v.get<double>();
  }
  std::optional<double> number_or_null(const json& object, const std::string& path,
                                       const char* name) const {
    const json& v = key(object, path, name);
    if (v.is_null()) return std::nullopt;
    return number(object, path, name);
  }
  /// A string or null (null and a missing key read as empty).
  std::string text_or_empty(const json& object, const std::string& path, const char* name) const {
    if (!object.is_object()) fail(path, "expected an object");
    const auto it = object.find(name);
    if (it == object.end() || it->is_null()) return {};
    return text(object, path, name);
  }
  /// A range source by its name; `fallback` when the key is missing (a report written before
  /// the key existed).
  RangeSource range_source(const json& object, const std::string& path, const char* name,
                           RangeSource fallback) const {
    if (!object.is_object() || !object.contains(name)) return fallback;
    const std::string v = text(object, path, name);
    for (RangeSource s : {RangeSource::plan_depth, RangeSource::probed_extent,
                          RangeSource::plan_depth_and_probed, RangeSource::projected_zone})
      if (v == range_source_name(s)) return s;
    fail(join(path, name), "unknown range source '" + v + "'");
  }
  bool boolean(const json& object, const std::string& path, const char* name) const {
    const json& v = key(object, path, name);
    if (!v.is_boolean()) fail(join(path, name), "expected true or false");
    return v.get<bool>();
  }
  std::vector<std::string> texts(const json& object, const std::string& path,
                                 const char* name) const {
    std::vector<std::string> out;
    const json& a = array(object, path, name);
    for (std::size_t k = 0; k < a.size(); ++k) {
      if (!a[k].is_string())
        fail(join(path, name) + "[" + std::to_string(k) + "]", "expected a string");
      out.push_back(a[k].get<std::string>());
    }
    return out;
  }
  Verdict verdict(const json& object, const std::string& path, const char* name) const {
    const std::string v = text(object, path, name);
    for (Verdict candidate : {Verdict::conforms, Verdict::does_not_conform, Verdict::not_proven})
      if (v == verdict_name(candidate)) return candidate;
    fail(join(path, name), "unknown verdict '" + v + "'");
  }
  std::size_t count(const json& object, const std::string& path, const char* name) const {
    const json& v = key(object, path, name);
    if (!v.is_number_unsigned()) fail(join(path, name), "expected a non-negative integer");
    return v.get<std::size_t>();
  }

 private:
  std::string source_;
};

std::size_t line_of(std::string_view bytes, std::size_t byte) {
  std::size_t line = 1;
  for (std::size_t k = 0; k < byte && k < bytes.size(); ++k) line += bytes[k] == '\n';
  return line;
}

}  // namespace

/// One outlier stage of a feature's preparation: what ran and every point it removed.
json outlier_stage_json(const OutlierStageRecord& s, const ReportUnits& u) {
  json removed = json::array();
  for (const RemovedPoint& p : s.removed)
    removed.push_back({{"point_number", p.index + 1},
                       {"line", p.line ? json(p.line) : json(nullptr)},
                       {"residual", u.length(p.residual)},
                       {"envelope_contact", p.contact}});
  return {{"enabled", s.enabled},
          {"skipped", s.skipped.empty() ? json(nullptr) : json(s.skipped)},
          {"examined", s.examined},
          {"iterations", s.iterations},
          {"robust_scale", u.length(s.robust_scale)},
          {"kept_as_form", s.kept_as_form},
          {"removed_count", s.removed.size()},
          {"removed", removed}};
}

/// The prepare stage's record of every feature (docs/report-schema.md, "preparation").
json preparation_json(const ReportModel& m) {
  const ReportUnits& u = m.units;
  json out = json::array();
  for (const FeaturePreparation& p : m.preparation) {
    const ProbeTipRecord& t = p.record.probe_tip;
    out.push_back(
        {{"role", p.role},
         {"compensation",
          {{"mode", std::string(compensation_mode_name(t.mode))},
           {"tip_diameter", t.mode == CompensationMode::none ? json(nullptr)
                                                             : json(u.length(t.tip_diameter))},
           {"points", t.points},
           {"vectors_reversed", t.vectors_reversed},
           {"largest_vector_angle_deg", t.largest_vector_angle_deg}}},
         {"neighbour_filter", outlier_stage_json(p.record.outliers.neighbour_filter, u)},
         {"residual_rejection", outlier_stage_json(p.record.outliers.residual_rejection, u)},
         {"removed_count", p.record.outliers.removed_count()},
         {"warnings", p.record.outliers.warnings}});
  }
  return out;
}

/// The whole-part scan and what each feature took from it (docs/report-schema.md,
/// "segmentation"); null without a [scan].
json segmentation_json(const ReportModel& m) {
  if (!m.scan) return nullptr;
  const ScanSegmentation& s = *m.scan;
  const ReportUnits& u = m.units;
  json registration = nullptr;
  if (const std::optional<RegistrationResult>& r = s.registration)
    registration = {{"iterations", r->iterations}, {"converged", r->converged},
                    {"points", r->points}, {"rms", u.length(r->rms)},
                    {"free_directions", r->free_directions}};
  json search = nullptr;  // the placement found from the datums alone (no placement given)
  if (const std::optional<PlacementSearchSummary>& f = s.search)
    search = {{"hypotheses", f->hypotheses}, {"inliers", f->inliers},
              {"runner_up_inliers", f->runner_up_inliers},
              {"runner_up_distance", u.length(f->runner_up_distance)}};
  json features = json::array();
  for (const FeatureSegmentation& f : s.features) {
    json one = {{"role", f.role}, {"points", f.points}};
    if (!f.face_points.empty()) one["face_points"] = f.face_points;  // a slot's or tab's faces
    if (f.is_cylinder()) {
      one["angular_coverage_deg"] = *f.angular_coverage_deg;
      one["probed_depth"] = u.length(f.probed_span);
      one["nominal_depth"] = u.length(f.nominal_span);
      one["depth_coverage"] = f.nominal_span > 0.0 ? json(f.probed_span / f.nominal_span)
                                                   : json(nullptr);
    } else {
      one["angular_coverage_deg"] = nullptr;
      one["probed_depth"] = nullptr;
      one["nominal_depth"] = nullptr;
      one["depth_coverage"] = nullptr;
    }
    features.push_back(one);
  }
  return {{"path", s.path.string()},
          {"sha256", s.sha256},
          {"points", s.points},
          {"unassigned", s.unassigned},
          {"band", u.length(s.options.band)},
          {"margin", u.length(s.options.margin.value_or(s.options.band))},
          {"normal_agreement_deg", s.options.normal_agreement_deg},
          {"normals_used", s.used_vectors},
          {"registration", registration},
          {"placement_search", search},
          {"features", features}};
}

namespace {

/// The Monte Carlo study (uncertainty/monte_carlo.hpp; docs/report-schema.md, "uncertainty"):
/// the model, the run (trials, seed, status) and per characteristic id its u, reported
/// interval (kind named), both intervals, the trials and the fit's ambiguity.
json uncertainty_json(const MonteCarloSummary& s, const ReportModel& m) {
  const ReportUnits& u = m.units;
  const auto interval = [&](const CoverageInterval& i) {
    return json::array({u.length(i.low), u.length(i.high)});
  };
  json sigma = json::array();
  for (std::size_t k = 0; k < s.feature_sigma.size(); ++k)
    sigma.push_back({{"role", k + 1 < m.inputs.size() ? json(m.inputs[k + 1].role) : json(nullptr)},
                     {"sigma", u.length(s.feature_sigma[k])}});
  json characteristics = json::object();
  for (const CharacteristicUncertainty& c : s.characteristics) {
    const bool has = c.statistics.trials >= 2;
    characteristics[c.id] = {
        {"value", u.length(c.value)},
        {"mean", has ? json(u.length(c.statistics.mean)) : json(nullptr)},
        {"u", has ? json(u.length(c.statistics.standard_uncertainty)) : json(nullptr)},
        {"interval", has ? interval(c.interval) : json(nullptr)},
        {"kind", std::string(interval_kind_name(c.kind))},
        {"probabilistically_symmetric", has ? interval(c.statistics.symmetric) : json(nullptr)},
        {"shortest", has ? interval(c.statistics.shortest) : json(nullptr)},
        {"trials", c.statistics.trials},
        {"failed_trials", c.failed_trials},
        {"seed", s.seed},
        {"ambiguity", u.length(c.ambiguity)},
        {"axis_range", u.length(c.axis_range)},
        {"interval_widening", u.length(c.ambiguity_range)},
        {"tie_breaking", c.tie_breaking},
        {"note", text_or_null(c.note)}};
  }
  json length_error = nullptr;
  if (s.length_error)
    length_error = {{"a", u.length(s.length_error->a)}, {"k", s.length_error->k},
                    {"length", u.length(s.length)}};
  return {{"method", "Monte Carlo propagation of distributions (JCGM 101:2008)"},
          {"status", std::string(monte_carlo_status_name(s.status))},
          {"message", s.message},
          {"seed", s.seed},
          {"trials", s.trials},
          {"adaptive", s.adaptive},
          {"batches", s.batches},
          {"coverage", s.coverage},
          {"probing_model", std::string(probing_model_name(s.probing))},
          {"feature_sigma", sigma},
          {"length_error", length_error},
          {"failed_trials", s.failed_trials},
          {"chebyshev_fits", s.chebyshev_fits},
          {"lp_fallbacks", s.lp_fallbacks},
          {"warm_fits", s.warm_fits},
          {"warm_descents", s.warm_descents},
          {"warm_restarts", s.warm_restarts},
          {"characteristics", characteristics},
          {"warnings", s.warnings},
          {"caution", std::string(safety_caution)}};
}

}  // namespace

std::string format_json(const ReportModel& m) {
  if (!m.evaluation)
    throw std::invalid_argument("format_json: the model has no evaluation (it was read back)");
  const PartCheckResult& r = *m.evaluation;
  const ReportUnits& u = m.units;
  json j;
  j["schema"] = std::string(report_schema);
  j["tool"] = {{"name", "cylzone"}, {"version", m.tool_version}};
  j["caution"] = std::string(safety_caution);
  j["plan"] = {{"name", m.plan_name}, {"file", m.plan_file.string()},
               {"units", std::string(u.name())}};
  j["part"] = part_json(m.part);
  json inputs = json::array();
  for (const InputRecord& in : m.inputs)
    inputs.push_back({{"role", in.role}, {"path", in.path.string()}, {"sha256", in.sha256},
                      {"points", in.points}});
  j["inputs"] = inputs;

  const DatumFrame& f = r.datums.frame;
  j["frame"] = {{"origin", point(f.origin, u)},
                {"x_axis", direction(f.rotation.row(0).transpose())},
                {"y_axis", direction(f.rotation.row(1).transpose())},
                {"z_axis", direction(f.rotation.row(2).transpose())},
                {"rotation_fixed", r.datums.rotation_fixed},
                {"translation_fixed", r.datums.translation_fixed},
                {"notes", m.frame_notes}};
  j["datums"] = datums_json(r, m);

  json characteristics = json::array();
  for (const Characteristic& c : m.characteristics)
    characteristics.push_back(characteristic_json(c, u));
  j["characteristics"] = characteristics;

  json bores = json::array();
  for (std::size_t k = 0; k < r.bores.size() && k < m.bores.size(); ++k)
    bores.push_back(bore_json(r.bores[k], m.bores[k], sensitivity_of(m, r.bores[k].id), m));
  j["bores"] = bores;
  j["preparation"] = preparation_json(m);
  j["segmentation"] = segmentation_json(m);
  j["verdict"] = std::string(verdict_name(m.verdict));
  j["warnings"] = m.warnings;
  if (m.uncertainty) j["uncertainty"] = uncertainty_json(*m.uncertainty, m);
  return j.dump(2) + "\n";
}

std::string format_json(const PartCheckResult& result) {
  return format_json(make_report_model(result));
}

/// Whether a characteristic or bore says it was not evaluated: its `status` (absent in reports
/// written before the key existed: evaluated).
bool not_evaluated(const ReportReader& in, const json& object, const std::string& path) {
  if (!object.contains("status")) return false;
  const std::string status = in.text(object, path, "status");
  if (status != "evaluated" && status != "not evaluated")
    in.fail(path + ".status", "unknown status " + quoted_for_message(status) +
                                  " (expected \"evaluated\" or \"not evaluated\")");
  return status == "not evaluated";
}

namespace {

/// probing_prediction_json read back (docs/report-schema.md, "probing_prediction"): every
/// figure the writer wrote, lengths back in mm, so a report read back renders the same tables.
ProbingPrediction read_probing_prediction(const ReportReader& in, const json& o,
                                          const std::string& path, const ReportUnits& u) {
  const auto mm = [&](const json& object, const std::string& at, const char* name) {
    return u.millimetres(in.number(object, at, name));
  };
  ProbingPrediction p;
  const std::string pp = path + ".pattern";
  const json& pattern = in.key(o, path, "pattern");
  const json& heights = in.array(pattern, pp, "section_heights");
  for (std::size_t k = 0; k < heights.size(); ++k) {
    if (!heights[k].is_number())
      in.fail(pp + ".section_heights[" + std::to_string(k) + "]", "expected a number");
    p.pattern.section_heights.push_back(u.millimetres(heights[k].get<double>()));
  }
  p.pattern.points_per_section = in.count(pattern, pp, "points_per_section");
  p.pattern.arc_deg = in.number(pattern, pp, "arc_deg");
  p.pattern.arc_centre_deg = in.number(pattern, pp, "arc_centre_deg");
  if (in.count(pattern, pp, "total_points") != p.pattern.total_points())
    in.fail(pp + ".total_points", "does not match the sections times the points per section");
  p.probing_sigma = mm(o, path, "probing_sigma");
  const std::string status = in.text(o, path, "status");
  if (status == "predicted")
    p.status = PredictionStatus::predicted;
  else if (status == "undetermined")
    p.status = PredictionStatus::undetermined;
  else
    in.fail(path + ".status", "unknown status " + quoted_for_message(status) +
                                  " (expected \"predicted\" or \"undetermined\")");
  p.message = in.text_or_empty(o, path, "message");
  if (p.status == PredictionStatus::undetermined) return p;
  const auto figure = [&](const json& object, const std::string& at, const char* name) {
    const json& f = in.key(object, at, name);
    const std::string fp = ReportReader::join(at, name);
    return SimulatedFigure{mm(f, fp, "mean"), mm(f, fp, "standard_deviation"),
                           mm(f, fp, "quantile95")};
  };
  const auto end = [&](const char* name) {
    const json& e = in.key(o, path, name);
    const std::string ep = ReportReader::join(path, name);
    return EndPrediction{mm(e, ep, "height"), mm(e, ep, "u_x"), mm(e, ep, "u_y"),
                         figure(e, ep, "position")};
  };
  const auto decision = [&](const json& f, const std::string& fp) {
    return FigureUncertainty{mm(f, fp, "tolerance"), mm(f, fp, "expanded"),
                             in.number(f, fp, "share"), in.boolean(f, fp, "meets_target")};
  };
  p.trials = in.count(o, path, "trials");
  // Written since the adaptive trial count; absent in older reports (a fixed count).
  if (o.contains("adaptive")) {
    p.adaptive = in.boolean(o, path, "adaptive");
    p.batches = in.count(o, path, "batches");
    p.converged = in.boolean(o, path, "converged");
  }
  p.magnification = in.number_or_null(o, path, "magnification");
  p.u_tilt = in.number(o, path, "u_tilt_urad") * 1e-6;
  p.top = end("top");
  p.bottom = end("bottom");
  p.full_depth = figure(o, path, "full_depth");
  p.perpendicularity = figure(o, path, "perpendicularity");
  p.position = decision(in.key(o, path, "position_uncertainty"), path + ".position_uncertainty");
  const json& q = in.key(o, path, "perpendicularity_uncertainty");
  if (!q.is_null())
    p.perpendicularity_uncertainty = decision(q, path + ".perpendicularity_uncertainty");
  p.meets_target = in.boolean(o, path, "meets_target");
  return p;
}

/// uncertainty_json read back (docs/report-schema.md, "uncertainty"). The characteristics are
/// an object keyed by id, which does not keep order: they are put back in the order of the
/// report's characteristics (the check's order), any other id after them.
MonteCarloSummary read_uncertainty(const ReportReader& in, const json& o, const ReportModel& m) {
  const ReportUnits& u = m.units;
  const std::string path = "uncertainty";
  const auto mm = [&](const json& object, const std::string& at, const char* name) {
    return u.millimetres(in.number(object, at, name));
  };
  const auto interval = [&](const json& object, const std::string& at,
                            const char* name) -> std::optional<CoverageInterval> {
    const json& a = in.key(object, at, name);
    if (a.is_null()) return std::nullopt;
    if (!a.is_array() || a.size() != 2 || !a[0].is_number() || !a[1].is_number())
      in.fail(ReportReader::join(at, name), "expected [low, high]");
    const CoverageInterval i{u.millimetres(a[0].get<double>()),
                             u.millimetres(a[1].get<double>())};
    if (!(i.low <= i.high)) in.fail(ReportReader::join(at, name), "low is above high");
    return i;
  };
  MonteCarloSummary s;
  const std::string status = in.text(o, path, "status");
  bool known = false;
  for (MonteCarloStatus candidate :
       {MonteCarloStatus::converged, MonteCarloStatus::not_converged, MonteCarloStatus::failed})
    if (status == monte_carlo_status_name(candidate)) {
      s.status = candidate;
      known = true;
    }
  if (!known) in.fail(path + ".status", "unknown status " + quoted_for_message(status));
  s.message = in.text(o, path, "message");
  s.seed = in.count(o, path, "seed");
  s.trials = in.count(o, path, "trials");
  s.adaptive = in.boolean(o, path, "adaptive");
  s.batches = in.count(o, path, "batches");
  s.coverage = in.number(o, path, "coverage");
  if (!(s.coverage > 0.0 && s.coverage < 1.0)) in.fail(path + ".coverage", "outside (0, 1)");
  const std::string model = in.text(o, path, "probing_model");
  if (model == probing_model_name(ProbingModel::sigma))
    s.probing = ProbingModel::sigma;
  else if (model == probing_model_name(ProbingModel::estimated))
    s.probing = ProbingModel::estimated;
  else
    in.fail(path + ".probing_model", "unknown probing model " + quoted_for_message(model) +
                                         " (expected \"sigma\" or \"estimated\")");
  const json& sigma = in.array(o, path, "feature_sigma");
  for (std::size_t k = 0; k < sigma.size(); ++k)
    s.feature_sigma.push_back(
        mm(sigma[k], path + ".feature_sigma[" + std::to_string(k) + "]", "sigma"));
  const json& length_error = in.key(o, path, "length_error");
  if (!length_error.is_null()) {
    const std::string lp = path + ".length_error";
    s.length_error = LengthError{mm(length_error, lp, "a"), in.number(length_error, lp, "k")};
    s.length = mm(length_error, lp, "length");
  }
  s.failed_trials = in.count(o, path, "failed_trials");
  // Reports written before these counts existed leave them at 0.
  if (o.contains("chebyshev_fits")) s.chebyshev_fits = in.count(o, path, "chebyshev_fits");
  if (o.contains("lp_fallbacks")) s.lp_fallbacks = in.count(o, path, "lp_fallbacks");
  for (const auto& [key, count] : {std::pair{"warm_fits", &s.warm_fits},
                                   std::pair{"warm_descents", &s.warm_descents},
                                   std::pair{"warm_restarts", &s.warm_restarts}})
    if (o.contains(key)) *count = in.count(o, path, key);
  const json& characteristics = in.key(o, path, "characteristics");
  if (!characteristics.is_object()) in.fail(path + ".characteristics", "expected an object");
  std::vector<std::string> ids;
  for (const Characteristic& c : m.characteristics)
    if (characteristics.contains(c.id)) ids.push_back(c.id);
  for (const auto& item : characteristics.items())
    if (std::find(ids.begin(), ids.end(), item.key()) == ids.end()) ids.push_back(item.key());
  for (const std::string& id : ids) {
    const std::string at = path + ".characteristics." + id;
    const json& co = characteristics.at(id);
    CharacteristicUncertainty c;
    c.id = id;
    c.value = mm(co, at, "value");
    c.statistics.trials = in.count(co, at, "trials");
    if (const std::optional<CoverageInterval> i = interval(co, at, "interval")) {
      c.statistics.mean = mm(co, at, "mean");
      c.statistics.standard_uncertainty = mm(co, at, "u");
      c.interval = *i;
      c.statistics.symmetric = interval(co, at, "probabilistically_symmetric").value_or(*i);
      c.statistics.shortest = interval(co, at, "shortest").value_or(*i);
    }
    const std::string kind = in.text(co, at, "kind");
    if (kind == interval_kind_name(IntervalKind::shortest))
      c.kind = IntervalKind::shortest;
    else if (kind == interval_kind_name(IntervalKind::probabilistically_symmetric))
      c.kind = IntervalKind::probabilistically_symmetric;
    else
      in.fail(at + ".kind", "unknown interval kind " + quoted_for_message(kind));
    c.failed_trials = in.count(co, at, "failed_trials");
    c.ambiguity = mm(co, at, "ambiguity");
    c.axis_range = mm(co, at, "axis_range");
    c.ambiguity_range = mm(co, at, "interval_widening");
    c.tie_breaking = in.boolean(co, at, "tie_breaking");
    c.note = in.text_or_empty(co, at, "note");
    s.characteristics.push_back(std::move(c));
  }
  s.warnings = in.texts(o, path, "warnings");
  return s;
}

}  // namespace

ReportModel read_report_json(std::string_view bytes, const std::string& source) {
  json j;
  try {
    j = json::parse(bytes.begin(), bytes.end());
  } catch (const json::parse_error& e) {
    // e.byte is 1-based, the position where parsing stopped.
    throw InputError(source, line_of(bytes, e.byte > 0 ? e.byte - 1 : 0),
                     "not valid JSON (parse error at byte " + std::to_string(e.byte) + ")");
  } catch (const json::exception& e) {
    // Valid syntax the parser still cannot hold, e.g. a number beyond double range.
    throw InputError(source, 0, std::string("not a readable JSON report: ") + e.what());
  }
  const ReportReader in(source);
  if (!j.is_object()) in.fail("", "expected a JSON object (a cylzone report)");
  const std::string schema = in.text(j, "", "schema");
  if (schema != report_schema)
    in.fail("schema", "expected '" + std::string(report_schema) + "', found '" + schema + "'");

  ReportModel m;
  m.tool_version = in.text(in.key(j, "", "tool"), "tool", "version");
  const json& plan = in.key(j, "", "plan");
  m.plan_name = in.text(plan, "plan", "name");
  m.plan_file = in.text(plan, "plan", "file");
  const std::string units = in.text(plan, "plan", "units");
  const std::optional<LengthUnit> unit = parse_unit(units);
  if (!unit) in.fail("plan.units", "unknown unit '" + units + "' (expected mm or inch)");
  m.units = ReportUnits(*unit);
  if (j.contains("part")) {  // absent in reports written before identity fields existed
    const json& part = j["part"];
    m.part.id = in.text_or_empty(part, "part", "id");
    m.part.serial = in.text_or_empty(part, "part", "serial");
    m.part.timestamp = in.text_or_empty(part, "part", "timestamp");
    const json& notes = in.key(part, "part", "notes");
    if (!notes.is_object()) in.fail("part.notes", "expected an object");
    for (const auto& [key, value] : notes.items()) {
      if (!value.is_string()) in.fail("part.notes." + key, "expected a string");
      m.part.notes.emplace_back(key, value.get<std::string>());
    }
  }
  const ReportUnits& u = m.units;
  const auto mm = [&](const json& o, const std::string& path, const char* name) {
    return u.millimetres(in.number(o, path, name));
  };
  const auto mm_or_null = [&](const json& o, const std::string& path,
                              const char* name) -> std::optional<double> {
    const std::optional<double> v = in.number_or_null(o, path, name);
    return v ? std::optional<double>(u.millimetres(*v)) : std::nullopt;
  };

  const json& inputs = in.array(j, "", "inputs");
  for (std::size_t k = 0; k < inputs.size(); ++k) {
    const std::string path = "inputs[" + std::to_string(k) + "]";
    InputRecord r;
    r.role = in.text(inputs[k], path, "role");
    r.path = in.text(inputs[k], path, "path");
    r.sha256 = in.text(inputs[k], path, "sha256");
    r.points = in.count(inputs[k], path, "points");
    m.inputs.push_back(std::move(r));
  }

  const json& frame = in.key(j, "", "frame");
  m.frame_notes = in.texts(frame, "frame", "notes");
  const json& datums = in.key(j, "", "datums");
  if (!datums.is_object()) in.fail("datums", "expected an object");
  for (const char* label : {"A", "B", "C"}) {
    if (!datums.contains(label)) continue;
    const std::string path = std::string("datums.") + label;
    const json& d = datums[label];
    DatumSummary s;
    s.label = label[0];
    s.feature = in.text(d, path, "feature");
    if (s.label == 'A') {
      s.association = in.text(d, path, "association");
      s.flatness = mm(d, path, "flatness");
      s.material_side_inferred = in.boolean(d, path, "material_side_inferred");
    } else if (s.feature != "plane") {
      s.mating_is_width = d.contains("mating_width");
      s.mating_size = mm(d, path, s.mating_is_width ? "mating_width" : "mating_size");
      const std::string boundary = in.text(d, path, "boundary");
      for (MaterialBoundary b :
           {MaterialBoundary::rmb, MaterialBoundary::mmb, MaterialBoundary::lmb})
        if (boundary == boundary_name(b)) s.boundary = b;
      if (!s.boundary) in.fail(path + ".boundary", "unknown boundary '" + boundary + "'");
      s.mmb_size = mm_or_null(d, path, "mmb_size");
      s.shift_allowance = mm(d, path, "shift_allowance");
    }
    m.datums.push_back(std::move(s));
  }

  const json& characteristics = in.array(j, "", "characteristics");
  for (std::size_t k = 0; k < characteristics.size(); ++k) {
    const std::string path = "characteristics[" + std::to_string(k) + "]";
    const json& o = characteristics[k];
    Characteristic c;
    c.id = in.text(o, path, "id");
    c.feature = in.text(o, path, "feature");
    // Later steps match characteristics by id; an id of another feature is no report of ours.
    if (c.feature.empty() || c.id.compare(0, c.feature.size() + 1, c.feature + "/") != 0)
      in.fail(path + ".id", "'" + c.id + "' is not an id of feature '" + c.feature +
                                "' (expected '" + c.feature + "/<kind>')");
    c.name = in.text(o, path, "name");
    c.reference = in.text(o, path, "reference");
    // A characteristic not evaluated has a reason and no value (written before status existed:
    // evaluated).
    if (not_evaluated(in, o, path)) {
      c.not_evaluated = in.text(o, path, "reason");
      if (c.not_evaluated.empty())
        in.fail(path + ".reason", "a characteristic not evaluated needs its reason");
    } else {
      c.value = mm(o, path, "value");
    }
    c.tolerance = mm(o, path, "tolerance");
    c.bonus = mm(o, path, "bonus");
    c.allowed = mm(o, path, "allowed");
    const std::string comparison = in.text(o, path, "comparison");
    if (comparison == comparison_symbol(Comparison::at_most))
      c.comparison = Comparison::at_most;
    else if (comparison == comparison_symbol(Comparison::at_least))
      c.comparison = Comparison::at_least;
    else
      in.fail(path + ".comparison", "unknown comparison '" + comparison + "' (expected <= or >=)");
    c.decisive = in.boolean(o, path, "decisive");
    c.verdict = in.verdict(o, path, "verdict");
    const std::string rule = in.text(o, path, "rule");
    const std::optional<DecisionRuleKind> kind = parse_decision_rule_name(rule);
    if (!kind) in.fail(path + ".rule", "unknown decision rule '" + rule + "'");
    c.rule = *kind;
    // The rule's inputs and limits; a report written before they existed: no U, both limits
    // the allowed value (simple acceptance).
    c.acceptance_limit = c.rejection_limit = c.allowed;
    if (o.contains("acceptance_limit")) c.acceptance_limit = mm(o, path, "acceptance_limit");
    if (o.contains("rejection_limit")) c.rejection_limit = mm(o, path, "rejection_limit");
    if (o.contains("effective_tolerance") &&
        std::abs(mm(o, path, "effective_tolerance") - c.allowed) > 1e-9 * (1 + std::abs(c.allowed)))
      in.fail(path + ".effective_tolerance", "differs from 'allowed'");
    c.rule_note = in.text_or_empty(o, path, "rule_note");
    if (o.contains("uncertainty") && !o["uncertainty"].is_null()) {
      const std::string at = path + ".uncertainty";
      const json& uo = o["uncertainty"];
      ExpandedUncertainty un;
      un.expanded = mm(uo, at, "expanded");
      un.coverage_factor = in.number(uo, at, "k");
      un.source = in.text(uo, at, "source");
      if (!(un.expanded >= 0.0)) in.fail(at + ".expanded", "must not be negative");
      if (!(un.coverage_factor > 0.0)) in.fail(at + ".k", "must be greater than zero");
      c.uncertainty = std::move(un);
    }
    m.characteristics.push_back(std::move(c));
  }

  const json& bores = in.array(j, "", "bores");
  for (std::size_t k = 0; k < bores.size(); ++k) {
    const std::string path = "bores[" + std::to_string(k) + "]";
    const json& o = bores[k];
    BoreSummary b;
    b.id = in.text(o, path, "id");
    b.verdict = in.verdict(o, path, "verdict");
    b.axis_method = in.text(o, path, "axis_method");
    if (o.contains("axis_direction")) {  // absent in reports written before the key existed
      b.axis_direction = in.text(o, path, "axis_direction");
      if (!parse_axis_direction(b.axis_direction))
        in.fail(path + ".axis_direction", "unknown axis direction " +
                                              quoted_for_message(b.axis_direction) +
                                              " (expected \"fitted\" or \"nominal\")");
    }
    if (not_evaluated(in, o, path)) {
      b.not_evaluated = in.text(o, path, "reason");
      if (b.not_evaluated.empty())
        in.fail(path + ".reason", "a bore not evaluated needs its reason");
      b.warnings = in.texts(o, path, "warnings");
      m.bores.push_back(std::move(b));
      continue;
    }
    const json& probed = in.key(o, path, "probed");
    b.probed_top = mm(probed, path + ".probed", "top");
    b.probed_bottom = mm(probed, path + ".probed", "bottom");
    b.depth_source = in.range_source(o, path, "depth_source", RangeSource::plan_depth);
    const json& tilt = in.key(o, path, "tilt");
    b.tilt_rad = in.number(tilt, path + ".tilt", "angle_rad");
    b.tilt_azimuth_deg = in.number(tilt, path + ".tilt", "azimuth_deg");
    const json& depth = in.key(o, path, "depth_profile");
    if (!depth.is_null()) {
      const std::string dp = path + ".depth_profile";
      DepthProfile d;
      d.characteristic_id = in.text(depth, dp, "characteristic");
      const json& range = in.key(depth, dp, "range");
      d.range_top = mm(range, dp + ".range", "top");
      d.range_bottom = mm(range, dp + ".range", "bottom");
      d.projected = in.boolean(depth, dp, "projected");
      d.range_source = in.range_source(
          depth, dp, "range_source", d.projected ? RangeSource::projected_zone : b.depth_source);
      d.allowed = mm(depth, dp, "allowed");
      d.leaves_zone_at = mm_or_null(depth, dp, "leaves_zone_at");
      const json& samples = in.array(depth, dp, "samples");
      for (std::size_t s = 0; s < samples.size(); ++s) {
        const std::string sp = dp + ".samples[" + std::to_string(s) + "]";
        d.samples.push_back({mm(samples[s], sp, "z"),
                             Eigen::Vector2d(mm(samples[s], sp, "dx"), mm(samples[s], sp, "dy"))});
      }
      d.exit = exit_deviation(d);
      b.depth = std::move(d);
    }
    // Sampling adequacy: absent in reports written before the key existed.
    if (o.contains("sampling") && !o.at("sampling").is_null()) {
      const std::string sp = path + ".sampling";
      const json& so = o.at("sampling");
      SamplingCoverage c;
      const json& span = in.key(so, sp, "span");
      c.span_top = mm(span, sp + ".span", "top");
      c.span_bottom = mm(span, sp + ".span", "bottom");
      const json& range = in.key(so, sp, "range");
      c.range_top = mm(range, sp + ".range", "top");
      c.range_bottom = mm(range, sp + ".range", "bottom");
      const json& beyond = in.key(so, sp, "extrapolation");
      c.extrapolation_top = mm(beyond, sp + ".extrapolation", "top");
      c.extrapolation_bottom = mm(beyond, sp + ".extrapolation", "bottom");
      c.magnification = in.number_or_null(so, sp, "magnification");
      c.section_points_min = in.count(so, sp, "section_points_min");
      c.section_points_median = in.number(so, sp, "section_points_median");
      c.sparse_sections = in.count(so, sp, "sparse_sections");
      c.coverage_deg = in.number(so, sp, "coverage_deg");
      c.worst_section_coverage_deg = in.number(so, sp, "worst_section_coverage_deg");
      c.worst_section_height = mm(so, sp, "worst_section_z");
      const json& sections = in.array(so, sp, "sections");
      for (std::size_t s = 0; s < sections.size(); ++s) {
        const std::string at = sp + ".sections[" + std::to_string(s) + "]";
        c.sections.push_back({mm(sections[s], at, "z"), in.count(sections[s], at, "points"),
                              in.number(sections[s], at, "coverage_deg")});
      }
      if (in.count(so, sp, "section_count") != c.sections.size())
        in.fail(sp + ".section_count", "does not match the sections listed");
      const json& limits = in.key(so, sp, "thresholds");
      c.thresholds.min_section_points =
          in.count(limits, sp + ".thresholds", "min_section_points");
      c.thresholds.min_coverage_deg = in.number(limits, sp + ".thresholds", "min_coverage_deg");
      c.thresholds.max_magnification = in.number(limits, sp + ".thresholds", "max_magnification");
      c.warnings = in.texts(so, sp, "warnings");
      b.sampling = std::move(c);
    }
    // The probing prediction (`check --predict-probing`): absent without it.
    if (o.contains("probing_prediction") && !o.at("probing_prediction").is_null())
      b.probing_prediction =
          read_probing_prediction(in, o.at("probing_prediction"), path + ".probing_prediction", u);
    b.warnings = in.texts(o, path, "warnings");
    m.bores.push_back(std::move(b));
  }
  m.verdict = in.verdict(j, "", "verdict");
  m.warnings = in.texts(j, "", "warnings");
  // The Monte Carlo study (`check --uncertainty`): absent without it.
  if (j.contains("uncertainty") && !j.at("uncertainty").is_null())
    m.uncertainty = read_uncertainty(in, j.at("uncertainty"), m);
  return m;
}

// ------------------------------------------------------------------------ `cylzone fit` JSON

std::string format_fit_json(const ElementFit& fit, const std::string& source, LengthUnit unit) {
  const double mm = millimetres_per(unit);
  const auto vector_json = [](const Eigen::Vector3d& v, double scale) {
    return json::array({v.x() / scale, v.y() / scale, v.z() / scale});
  };
  json j;
  j["tool"] = std::string("cylzone ") + version_string;
  j["source"] = source;
  j["element"] = std::string(element_name(fit.element));
  j["method"] = std::string(method_name(fit.summary.method));
  j["points"] = fit.summary.point_count;
  j["units"] = std::string(unit_name(unit));
  j["rms"] = fit.residuals.rms / mm;
  j["form"] = fit.residuals.form / mm;
  if (fit.residuals.values.size() > 0) {
    j["residual_min"] = fit.residuals.values.minCoeff() / mm;
    j["residual_max"] = fit.residuals.values.maxCoeff() / mm;
  }
  if (fit.axis)
    j["axis"] = {{"point", vector_json(fit.axis->point, mm)},
                 {"direction", vector_json(fit.axis->direction, 1.0)}};
  if (fit.extent_min && fit.extent_max)
    j["extent"] = json::array({*fit.extent_min / mm, *fit.extent_max / mm});
  if (fit.point) j["point"] = vector_json(*fit.point, mm);
  if (fit.normal) j["normal"] = vector_json(*fit.normal, 1.0);
  if (fit.centre) j["centre"] = vector_json(*fit.centre, mm);
  if (fit.radius) j["diameter"] = 2.0 * *fit.radius / mm;
  if (fit.angular_coverage_deg) j["angular_coverage_deg"] = *fit.angular_coverage_deg;
  if (fit.ambiguity) j["ambiguity"] = *fit.ambiguity / mm;
  j["status"] = fit.summary.status == FitStatus::converged ? "converged" : "iteration-limit";
  j["iterations"] = fit.summary.iterations;
  j["message"] = fit.summary.message;
  j["warnings"] = fit.summary.warnings;
  return j.dump(2) + "\n";
}

// ------------------------------------------------------------------ the audit report

namespace {

json plane_json(const PlaneFigures& p, const ReportUnits& u) {
  return {{"plane", std::string(plane_label_name(p.label))},
          {"z", u.length(p.height)},
          {"dx", u.length(p.offset.x())},
          {"dy", u.length(p.offset.y())},
          {"position", u.length(p.position)}};
}

json audit_bore_json(const BoreAudit& b, const ReportUnits& u) {
  json centres = json::array();
  for (const ReportedCentre& c : b.centres) {
    json planes = json::array();
    for (const PlaneFigures& p : c.cylzone) planes.push_back(plane_json(p, u));
    centres.push_back({{"line", c.line},
                       {"z", optional_number(c.height, u)},
                       {"dx", u.length(c.offset.x())},
                       {"dy", u.length(c.offset.y())},
                       {"rounding", {u.length(c.rounding.x()), u.length(c.rounding.y())}},
                       {"position_2d", u.length(c.position)},
                       {"cylzone", planes},
                       {"compared", std::string(plane_label_name(c.cylzone[c.compared].label))},
                       {"apart", u.length(c.discrepancy)},
                       {"apart_allowed", u.length(c.discrepancy_allowed)}});
  }
  json summary = {{"centres", centres},
                  {"position", optional_number(b.reported_position, u)},
                  {"position_rounding", u.length(b.position_rounding)},
                  {"diameter", optional_number(b.reported_diameter, u)},
                  {"verdict", b.reported_conforms ? json(*b.reported_conforms ? "conforms"
                                                                              : "does not conform")
                                                  : json(nullptr)},
                  {"verdict_text", text_or_null(b.verdict_text)},
                  {"verdict_implied", b.verdict_implied},
                  {"recomputed_position", u.length(b.recomputed_position)},
                  {"consistency_allowance", u.length(b.consistency_allowance)},
                  {"internally_consistent", b.internally_consistent},
                  {"two_depth_position", optional_number(b.two_depth_position, u)}};
  json full = nullptr;
  if (!b.position_id.empty())
    full = {{"position_id", b.position_id},
            {"range", {{"top", u.length(b.range_top)}, {"bottom", u.length(b.range_bottom)}}},
            {"position", u.length(b.position)},
            {"allowed", u.length(b.allowed)},
            {"position_verdict", std::string(verdict_name(b.position_verdict))},
            {"leaves_zone_at", optional_number(b.leaves_zone_at, u)},
            {"perpendicularity", optional_number(b.perpendicularity, u)},
            {"perpendicularity_allowed", optional_number(b.perpendicularity_allowed, u)},
            {"perpendicularity_verdict", verdict_json(b.perpendicularity_verdict)},
            {"least_squares_diameter", u.length(b.least_squares_diameter)},
            {"mating_envelope", u.length(b.mating_envelope)}};
  return {{"id", b.id},
          {"summary", summary},
          {"cylzone", full},
          {"not_evaluated", text_or_null(b.not_evaluated)},
          {"finding", std::string(summary_finding_name(b.finding))},
          {"overturned", b.overturned},
          {"reason", b.reason}};
}

}  // namespace

std::string format_audit_json(const AuditReport& r) {
  const ReportUnits& u = r.units;
  const AuditResult& a = r.audit;
  json inputs = json::array();
  for (const InputRecord& in : r.inputs)
    inputs.push_back({{"role", in.role}, {"path", in.path.string()}, {"sha256", in.sha256}});
  json bores = json::array();
  for (const BoreAudit& b : a.bores) bores.push_back(audit_bore_json(b, u));
  json rows = json::array();
  for (const UnmatchedRow& row : a.unmatched_rows)
    rows.push_back({{"line", row.line}, {"id", row.id}});
  std::size_t overturned = 0;
  for (const BoreAudit& b : a.bores) overturned += b.overturned;
  const std::string verdict = overturned > 0          ? "overturned"
                              : a.any_not_decided()   ? "not decided"
                                                      : "stands";
  json j = {{"schema", std::string(audit_report_schema)},
            {"tool", {{"name", "cylzone"}, {"version", r.tool_version}}},
            {"caution", std::string(safety_caution)},
            {"units", std::string(u.name())},
            {"plan", r.plan_name},
            {"part", part_json(r.part)},
            {"inputs", inputs},
            {"summary", {{"file", r.summary_file},
                         {"units", r.summary_unit},
                         {"columns", r.summary_deviations ? "deviations" : "coordinates"}}},
            {"same_plane_tolerance", u.length(a.same_plane_tolerance)},
            {"bores", bores},
            {"unmatched_rows", rows},
            {"unmatched_bores", a.unmatched_bores},
            {"explanation", {{"kind", std::string(frame_explanation_name(a.explanation))},
                             {"shift", {u.length(a.shift.x()), u.length(a.shift.y())}},
                             {"rotation_rad", a.rotation_rad},
                             {"text", a.explanation_text}}},
            {"warnings", r.warnings},
            {"overturned", overturned},
            {"verdict", verdict}};
  // Ids and verdict words are the summary's bytes: invalid UTF-8 is replaced, never thrown.
  return j.dump(2, ' ', false, json::error_handler_t::replace) + "\n";
}

// -------------------------------------------------------------- `cylzone forecast` JSON

std::string format_forecast_json(const CapabilityOptions& o, const CapabilityForecast& f,
                                 LengthUnit unit, const ForecastComparison* comparison) {
  const ReportUnits u(unit);
  const auto axis = [&](const AxisPositioning& a, double sigma, double bias) {
    return json{{"accuracy", u.length(a.accuracy)},
                {"repeatability", u.length(a.repeatability)},
                {"sigma", u.length(sigma)},
                {"systematic", u.length(bias)}};
  };
  const auto figures = [&](const DiameterFigures& d) {
    return json{{"worst_case", u.length(d.worst_case)},
                {"median", u.length(d.median)},
                {"quantile", u.length(d.quantile)},
                {"law", std::string(radial_law_name(d.law))}};
  };
  const auto tolerance = [&](const ToleranceForecast& t) {
    return json{{"tolerance", u.length(t.tolerance)},
                {"systematic", u.length(t.systematic)},
                {"systematic_exceeds", t.systematic_exceeds},
                {"share_outside", t.share_outside},
                {"verdict", std::string(capability_verdict_name(t.verdict))}};
  };
  json tilts = json::array();
  for (const TiltSource& t : o.tilts)
    tilts.push_back({{"name", t.name},
                     {"systematic_um_per_m", t.systematic * 1e6},
                     {"random_sigma_um_per_m", t.random * 1e6}});
  json j;
  j["schema"] = std::string(forecast_schema);
  j["tool"] = std::string("cylzone ") + version_string;
  j["caution"] = std::string(safety_caution);
  j["units"] = std::string(u.name());
  j["inputs"] = {
      {"depth", u.length(o.depth)},
      {"position_tolerance", u.length(o.position_tolerance)},
      {"perpendicularity_tolerance", o.perpendicularity_tolerance
                                         ? json(u.length(*o.perpendicularity_tolerance))
                                         : json(nullptr)},
      {"systematic_placement",
       o.systematic == SystematicPlacement::worst_corner ? "worst-corner" : "centred"},
      {"coverage", o.coverage},
      {"share_limit_capable", o.share_limit_capable},
      {"share_limit_marginal", o.share_limit_marginal},
      {"tilts", tilts}};
  j["model"] = {{"x", axis(o.x, f.sigma_x, f.bias_x)},
                {"y", axis(o.y, f.sigma_y, f.bias_y)},
                {"tilt_systematic_um_per_m", f.tilt_systematic * 1e6},
                {"tilt_sigma_um_per_m", f.tilt_sigma * 1e6}};
  j["position"] = {{"top", figures(f.top)},
                   {"bottom", figures(f.bottom)},
                   {"full_depth", figures(f.full_depth)},
                   {"decision", tolerance(f.position)}};
  j["perpendicularity"] = {
      {"figures", figures(f.perpendicularity)},
      {"decision", f.perpendicularity_forecast ? tolerance(*f.perpendicularity_forecast)
                                               : json(nullptr)}};
  const char* kind = f.deepest.kind == DeepestBore::Kind::at_depth    ? "at-depth"
                     : f.deepest.kind == DeepestBore::Kind::any_depth ? "any-depth"
                                                                      : "none";
  j["deepest_bore"] = {
      {"kind", kind},
      {"depth", f.deepest.kind == DeepestBore::Kind::at_depth ? json(u.length(f.deepest.depth))
                                                             : json(nullptr)}};
  j["verdict"] = std::string(capability_verdict_name(f.verdict));
  if (comparison) {
    const ForecastComparison& c = *comparison;
    const auto interval = [](const BinomialInterval& b) {
      return json{{"lower", b.lower}, {"upper", b.upper}};
    };
    const auto mouth = [&](const std::optional<MouthAxisComparison>& a) {
      if (!a) return json(nullptr);
      return json{{"observed_mean", u.length(a->observed_mean)},
                  {"observed_sd", u.length(a->observed_sd)},
                  {"forecast_systematic", u.length(a->forecast_systematic)},
                  {"forecast_sigma", u.length(a->forecast_sigma)}};
    };
    j["comparison"] = {
        {"bores", c.bores},
        {"confidence", c.confidence},
        {"tolerance", u.length(c.tolerance)},
        {"observed",
         {{"mean", u.length(c.observed_mean)},
          {"standard_deviation", u.length(c.observed_sd)},
          {"quantile95", u.length(c.observed_quantile95)}}},
        {"forecast",
         {{"mean", u.length(c.forecast.mean)},
          {"standard_deviation", u.length(c.forecast.standard_deviation)},
          {"quantile95", u.length(c.forecast.quantile95)}}},
        {"outside",
         {{"count", c.outside},
          {"share", static_cast<double>(c.outside) / static_cast<double>(c.bores)},
          {"interval", interval(c.outside_interval)},
          {"predicted_share", c.predicted_share}}},
        {"above_forecast_quantile95",
         {{"count", c.above_quantile},
          {"share", static_cast<double>(c.above_quantile) / static_cast<double>(c.bores)},
          {"interval", interval(c.above_interval)},
          {"expected_share", 0.05}}},
        {"mouth", {{"bores", c.with_mouth}, {"x", mouth(c.x)}, {"y", mouth(c.y)}}},
        {"depth_mismatches", c.depth_mismatches},
        {"performance", std::string(machine_performance_name(c.performance))},
        {"finding", c.finding}};
  }
  return j.dump(2) + "\n";
}

// -------------------------------------------------------------- `cylzone advise` JSON

std::string format_probing_json(const ProbingAdviceOptions& o, const ProbingAdvice& a,
                                LengthUnit unit) {
  const ReportUnits u(unit);
  json j;
  j["schema"] = std::string(probing_advice_schema);
  j["tool"] = std::string("cylzone ") + version_string;
  j["caution"] = std::string(safety_caution);
  j["units"] = std::string(u.name());
  j["inputs"] = {{"diameter", u.length(o.diameter)},
                 {"range_top", u.length(o.range_top)},
                 {"range_bottom", u.length(o.range_bottom)},
                 {"usable_top", u.length(o.usable_top.value_or(o.range_top))},
                 {"usable_bottom", u.length(o.usable_bottom.value_or(o.range_bottom))},
                 {"position_tolerance", u.length(o.position_tolerance)},
                 {"perpendicularity_tolerance", o.perpendicularity_tolerance
                                                    ? json(u.length(*o.perpendicularity_tolerance))
                                                    : json(nullptr)},
                 {"axis_method", std::string(axis_method_name(o.axis_method))},
                 {"probing_sigma", u.length(o.probing_sigma)},
                 {"trials", o.adaptive ? json("adaptive") : json(o.trials)},
                 {"seed", o.seed},
                 {"target_share", o.target_share}};
  j["candidate"] = probing_prediction_json(a.candidate, u);
  if (a.search) {
    const ProbingSearch& s = *a.search;
    j["search"] = {
        {"candidates_tried", s.candidates_tried},
        {"smallest", s.smallest ? probing_prediction_json(*s.smallest, u) : json(nullptr)},
        {"previous", s.previous ? probing_prediction_json(*s.previous, u) : json(nullptr)}};
  } else {
    j["search"] = nullptr;
  }
  j["meets_target"] = a.candidate.meets_target;
  return j.dump(2) + "\n";
}

// batch-summary.json (batch_report.hpp, docs/report-schema.md): lengths in the plan's unit.
std::string format_batch_summary_json(const BatchIdentity& identity,
                                      const std::vector<BatchPartRecord>& records,
                                      const BatchSummary& s) {
  const ReportUnits u(identity.unit);
  json j;
  j["schema"] = std::string(batch_schema);
  j["tool"] = {{"name", "cylzone"}, {"version", version_string}};
  j["caution"] = std::string(safety_caution);
  j["plan"] = {{"name", identity.plan_name}, {"file", identity.plan_file.string()},
               {"sha256", identity.plan_sha256}, {"units", std::string(u.name())}};
  j["part"] = part_json(identity.part);
  json parts = json::array();
  for (const BatchPartRecord& r : records) {
    json inputs = json::array();
    for (const InputRecord& in : r.inputs)
      inputs.push_back({{"role", in.role}, {"path", in.path.string()}, {"sha256", in.sha256}});
    parts.push_back({{"serial", r.part.serial},
                     {"folder", r.part.folder.string()},
                     {"status", r.evaluated() ? "evaluated" : "failed"},
                     {"verdict", r.evaluated() ? json(std::string(verdict_name(r.verdict)))
                                               : json(nullptr)},
                     {"reason", r.evaluated() ? json(nullptr) : json(r.error)},
                     {"inputs", inputs}});
  }
  j["parts"] = parts;
  j["counts"] = {{"parts", s.parts},
                 {"evaluated", s.evaluated},
                 {"failed", s.failed.size()},
                 {"conforming", s.conforming},
                 {"not_conforming", s.not_conforming},
                 {"not_proven", s.not_proven}};
  json characteristics = json::array();
  for (const CharacteristicTally& t : s.characteristics) {
    json worst = nullptr;
    if (t.worst_part)
      worst = {{"serial", records[*t.worst_part].part.serial},
               {"value", u.length(t.worst_value)},
               {"allowed", u.length(t.worst_allowed)},
               {"margin", u.length(t.worst_margin)}};
    characteristics.push_back({{"id", t.id},
                               {"feature", t.feature},
                               {"name", t.name},
                               {"conforming", t.conforming},
                               {"not_conforming", t.not_conforming},
                               {"not_proven", t.not_proven},
                               {"worst", worst}});
  }
  j["characteristics"] = characteristics;
  const auto spread = [&](const DeviationSpread& d, double height) {
    const auto optional = [](const std::optional<double>& v) { return v ? json(*v) : json(nullptr); };
    return json{{"z", u.length(height)},
                {"count", d.count},
                {"mean", {{"dx", u.length(d.mean.x())}, {"dy", u.length(d.mean.y())}}},
                {"standard_deviation",
                 {{"dx", u.length(d.standard_deviation.x())},
                  {"dy", u.length(d.standard_deviation.y())}}},
                {"mean_radial", u.length(d.mean_radial)},
                {"t_squared", optional(d.t_squared)},
                {"p_value", optional(d.p_value)},
                {"systematic", d.systematic},
                {"note", d.note}};
  };
  json positions = json::array();
  for (const PositionSpread& p : s.positions)
    positions.push_back({{"bore", p.bore},
                         {"top", spread(p.top, p.top_height)},
                         {"bottom", spread(p.bottom, p.bottom_height)}});
  j["positions"] = {{"significance", s.significance}, {"bores", positions}};
  return j.dump(2) + "\n";
}

}  // namespace cylzone
