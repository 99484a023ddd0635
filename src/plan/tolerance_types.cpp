#include "cylzone/plan/tolerance_types.hpp"

namespace cylzone {

std::string_view condition_name(MaterialCondition condition) noexcept {
  switch (condition) {
    case MaterialCondition::rfs: return "RFS";
    case MaterialCondition::mmc: return "MMC";
    case MaterialCondition::lmc: return "LMC";
  }
  return "RFS";
}

std::string_view boundary_name(MaterialBoundary boundary) noexcept {
  switch (boundary) {
    case MaterialBoundary::rmb: return "RMB";
    case MaterialBoundary::mmb: return "MMB";
    case MaterialBoundary::lmb: return "LMB";
  }
  return "RMB";
}

std::string_view feature_kind_name(FeatureKind kind) noexcept {
  switch (kind) {
    case FeatureKind::plane: return "plane";
    case FeatureKind::bore: return "bore";
    case FeatureKind::pin: return "pin";
    case FeatureKind::slot: return "slot";
    case FeatureKind::tab: return "tab";
  }
  return "plane";
}

std::string datum_references_text(const std::vector<DatumReference>& datums) {
  // Written as in the datum section of a feature control frame, compartments separated by '|'
  // and the material boundary modifier in parentheses after the letter: (M) for MMB, (L) for
  // LMB, nothing for RMB, which is the default and has no symbol (ASME Y14.5-2018; common
  // practice); then (T), cylzone's own mark for a translating simulator.
  std::string text;
  for (const DatumReference& d : datums) {
    if (!text.empty()) text += '|';
    text += d.label;
    if (d.boundary == MaterialBoundary::mmb) text += "(M)";
    if (d.boundary == MaterialBoundary::lmb) text += "(L)";
    if (d.translating) text += "(T)";
  }
  return text;
}

}  // namespace cylzone
