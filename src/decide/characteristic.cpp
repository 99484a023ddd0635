// The one place where a value is compared with its limit (decide/characteristic.hpp).
#include "cylzone/decide/characteristic.hpp"

namespace cylzone {

std::string_view verdict_name(Verdict verdict) noexcept {
  switch (verdict) {
    case Verdict::conforms: return "conforms";
    case Verdict::does_not_conform: return "does not conform";
    case Verdict::not_proven: return "not proven";
  }
  return "not proven";
}

std::string_view comparison_symbol(Comparison comparison) noexcept {
  return comparison == Comparison::at_most ? "<=" : ">=";
}

std::string_view decision_rule_name(DecisionRuleKind kind) noexcept {
  switch (kind) {
    case DecisionRuleKind::simple_acceptance: return "simple acceptance";
    case DecisionRuleKind::iso_14253_1: return "ISO 14253-1";
    case DecisionRuleKind::guard_band: return "guard band";
  }
  return "simple acceptance";
}

std::string_view decision_rule_word(DecisionRuleKind kind) noexcept {
  switch (kind) {
    case DecisionRuleKind::simple_acceptance: return "simple";
    case DecisionRuleKind::iso_14253_1: return "iso-14253-1";
    case DecisionRuleKind::guard_band: return "guard-band";
  }
  return "simple";
}

namespace {
constexpr DecisionRuleKind kRules[] = {DecisionRuleKind::simple_acceptance,
                                       DecisionRuleKind::iso_14253_1, DecisionRuleKind::guard_band};
}  // namespace

std::optional<DecisionRuleKind> parse_decision_rule_word(std::string_view word) noexcept {
  for (DecisionRuleKind kind : kRules)
    if (decision_rule_word(kind) == word) return kind;
  return std::nullopt;
}

std::optional<DecisionRuleKind> parse_decision_rule_name(std::string_view name) noexcept {
  for (DecisionRuleKind kind : kRules)
    if (decision_rule_name(kind) == name) return kind;
  return std::nullopt;
}

std::string_view characteristic_kind_word(CharacteristicKind kind) noexcept {
  switch (kind) {
    case CharacteristicKind::position: return "position";
    case CharacteristicKind::perpendicularity: return "perpendicularity";
    case CharacteristicKind::size: return "size";
    case CharacteristicKind::form: return "form";
    case CharacteristicKind::virtual_condition: return "virtual_condition";
  }
  return "position";
}

std::optional<CharacteristicKind> parse_characteristic_kind_word(std::string_view word) noexcept {
  for (CharacteristicKind kind : characteristic_kinds)
    if (characteristic_kind_word(kind) == word) return kind;
  return std::nullopt;
}

std::optional<CharacteristicKind> characteristic_kind(const Characteristic& c) {
  // The id is "<feature>/<kind>[/<qualifier>]" (the file comment of characteristic.hpp).
  std::string_view id = c.id;
  const std::size_t f = c.feature.size();
  if (f > 0 && id.size() > f && id.substr(0, f) == c.feature && id[f] == '/')
    id.remove_prefix(f + 1);
  else if (const std::size_t slash = id.find('/'); slash != std::string_view::npos)
    id.remove_prefix(slash + 1);
  const std::string_view kind = id.substr(0, id.find('/'));
  if (kind == "position") return CharacteristicKind::position;
  if (kind == "perpendicularity") return CharacteristicKind::perpendicularity;
  if (kind == "size") return CharacteristicKind::size;
  if (kind == "cylindricity") return CharacteristicKind::form;
  if (kind == "virtual-condition") return CharacteristicKind::virtual_condition;
  return std::nullopt;
}

DecisionLimits decision_limits(const Characteristic& c, const DecisionRule& rule) {
  DecisionLimits limits;
  limits.acceptance = limits.rejection = c.allowed;
  // The margin m narrows the acceptance zone and widens the rejection threshold by the same
  // amount, on the side of the limit the comparison names (table in characteristic.hpp).
  std::optional<double> margin;
  if (rule.kind == DecisionRuleKind::iso_14253_1) {
    if (c.uncertainty)
      margin = c.uncertainty->expanded;
    else
      limits.note = "U not evaluated: simple acceptance";
  } else if (rule.kind == DecisionRuleKind::guard_band) {
    const std::optional<CharacteristicKind> kind = characteristic_kind(c);
    if (kind && rule.guard_band[*kind])
      margin = *rule.guard_band[*kind];
    else
      limits.note = "no guard band stated for this kind: simple acceptance";
  }
  if (!margin) return limits;
  limits.rule = rule.kind;
  const double inward = c.comparison == Comparison::at_most ? -*margin : *margin;
  limits.acceptance = c.allowed + inward;
  limits.rejection = c.allowed - inward;
  return limits;
}

Verdict decide(const Characteristic& c, const DecisionRule& rule) {
  // A figure that could not be evaluated proves nothing either way.
  if (!c.not_evaluated.empty()) return Verdict::not_proven;
  const DecisionLimits limits = decision_limits(c, rule);
  // Rounding slack only, on both limits; under simple acceptance the two coincide, so the
  // verdict is never not proven.
  const bool upper = c.comparison == Comparison::at_most;
  const bool accepted = upper ? c.value <= limits.acceptance + rule.slack
                              : c.value >= limits.acceptance - rule.slack;
  if (accepted) return Verdict::conforms;
  const bool rejected = upper ? c.value > limits.rejection + rule.slack
                              : c.value < limits.rejection - rule.slack;
  if (rejected || limits.rule == DecisionRuleKind::simple_acceptance)
    return Verdict::does_not_conform;
  return Verdict::not_proven;
}

void apply_decision(Characteristic& c, const DecisionRule& rule) {
  const DecisionLimits limits = decision_limits(c, rule);
  c.verdict = decide(c, rule);
  c.rule = limits.rule;
  c.acceptance_limit = limits.acceptance;
  c.rejection_limit = limits.rejection;
  c.rule_note = limits.note;
}

bool decision_details_shown(const std::vector<Characteristic>& characteristics) noexcept {
  for (const Characteristic& c : characteristics)
    if (c.rule != DecisionRuleKind::simple_acceptance || c.uncertainty || !c.rule_note.empty())
      return true;
  return false;
}

Verdict combine(const std::vector<Characteristic>& characteristics) noexcept {
  Verdict result = Verdict::conforms;
  for (const Characteristic& c : characteristics) {
    if (!c.decisive) continue;
    if (c.verdict == Verdict::does_not_conform) return Verdict::does_not_conform;
    if (c.verdict == Verdict::not_proven) result = Verdict::not_proven;
  }
  return result;
}

}  // namespace cylzone
