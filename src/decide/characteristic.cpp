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

std::string_view decision_rule_name(DecisionRuleKind) noexcept { return "simple acceptance"; }

Verdict decide(const Characteristic& c, const DecisionRule& rule) {
  // A figure that could not be evaluated proves nothing either way.
  if (!c.not_evaluated.empty()) return Verdict::not_proven;
  // Simple acceptance: the value against the limit, rounding slack only.
  const bool inside = c.comparison == Comparison::at_most ? c.value <= c.allowed + rule.slack
                                                          : c.value >= c.allowed - rule.slack;
  return inside ? Verdict::conforms : Verdict::does_not_conform;
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
