// The plan's vocabulary and file access; the TOML reading is plan_toml.cpp, the rules
// validate_plan.cpp.
#include "cylzone/plan/plan.hpp"

#include <stdexcept>

#include <fstream>
#include <iterator>
#include <system_error>

#include "cylzone/core/errors.hpp"
#include "plan/detail/plan_text.hpp"

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

// ---- The direction of a bore's toleranced axis (plan key `axis_direction`).
std::string_view axis_direction_name(AxisDirection direction) noexcept {
  return direction == AxisDirection::nominal ? "nominal" : "fitted";
}

std::optional<AxisDirection> parse_axis_direction(std::string_view text) noexcept {
  for (AxisDirection d : {AxisDirection::fitted, AxisDirection::nominal})
    if (text == axis_direction_name(d)) return d;
  return std::nullopt;
}

const PlanDatum* PartPlan::datum(char label) const noexcept {
  for (const PlanDatum& d : datums)
    if (d.label == label) return &d;
  return nullptr;
}

// ---- Raw probe points (plan.hpp, "Raw probe points").

ProbeSettings resolved_probe(const ProbeSettings& plan_wide, const ProbeOverrides& own) noexcept {
  ProbeSettings s = plan_wide;
  if (own.ball_centres) s.ball_centres = *own.ball_centres;
  if (own.tip_diameter) s.tip_diameter = *own.tip_diameter;
  if (own.neighbour_filter) s.neighbour_filter = *own.neighbour_filter;
  if (own.residual_rejection) s.residual_rejection = *own.residual_rejection;
  return s;
}

void override_decision_rule(PartPlan& plan, DecisionRuleKind rule) {
  // The same requirement validate_plan holds the plan's own rule to (docs/plan.md, rule 35).
  if (rule == DecisionRuleKind::guard_band && !plan.decision.rule.guard_band.any())
    throw std::invalid_argument(
        "--decision-rule guard-band: the plan states no guard band ([decision].guard_band)");
  plan.decision.rule.kind = rule;
}

void override_outlier_stages(PartPlan& plan, std::optional<bool> neighbour_filter,
                             std::optional<bool> residual_rejection) {
  // A feature's own setting of the stage no longer applies.
  const auto clear_overrides = [&](std::optional<bool> ProbeOverrides::*member) {
    for (PlanDatum& d : plan.datums) (d.probe.*member).reset();
    for (PlanBore& b : plan.bores) (b.probe.*member).reset();
  };
  if (neighbour_filter) {
    plan.probe.neighbour_filter = *neighbour_filter;
    clear_overrides(&ProbeOverrides::neighbour_filter);
  }
  if (residual_rejection) {
    plan.probe.residual_rejection = *residual_rejection;
    clear_overrides(&ProbeOverrides::residual_rejection);
  }
}

PlanLocation PlanLocation::at(std::string_view name) const {
  PlanLocation location;
  const auto found = lines.find(name);
  location.line = found != lines.end() ? found->second : line;
  location.key = detail::join_key(key, std::string(name));
  return location;
}

PartPlan read_plan(const std::filesystem::path& file, bool check_files) {
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
  return parse_plan(text, file, check_files);
}

}  // namespace cylzone
