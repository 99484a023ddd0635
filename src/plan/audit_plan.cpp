// The `[audit]` mapping's field keys (plan/audit_plan.hpp).
#include "cylzone/plan/audit_plan.hpp"

#include <array>

namespace cylzone {
namespace {

constexpr std::array<std::string_view, summary_field_count> kFieldKeys = {
    "id", "dx", "dy", "x", "y", "z", "position", "diameter", "verdict",
    "dx2", "dy2", "x2", "y2", "z2"};

}  // namespace

std::string_view summary_field_key(SummaryField field) noexcept {
  return kFieldKeys[static_cast<std::size_t>(field)];
}

std::optional<SummaryField> parse_summary_field(std::string_view key) noexcept {
  for (std::size_t f = 0; f < kFieldKeys.size(); ++f)
    if (kFieldKeys[f] == key) return static_cast<SummaryField>(f);
  return std::nullopt;
}

}  // namespace cylzone
