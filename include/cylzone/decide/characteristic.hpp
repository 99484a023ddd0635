#pragma once
/// \file characteristic.hpp
/// The decide stage. Every evaluated characteristic of a part (a bore's position, its size
/// limits, a cylindricity, a virtual condition boundary, ...) is one `Characteristic`: a value,
/// the limit it is compared with, and how. One function, `decide`, turns it into a verdict, so
/// the comparison (and, next, the measurement uncertainty it must allow for) lives in one place.
///
/// Identity. `id` is stable from run to run and from version to version, so later steps (an
/// audit of another system's summary, a batch of parts, a Monte Carlo study) can match a
/// characteristic by it: "<feature>/<kind>[/<qualifier>]", e.g. "P2/position",
/// "P2/position/mobility", "P2/perpendicularity", "P5/size/lower", "P5/size/upper",
/// "P6/cylindricity", "P1/virtual-condition". docs/report-schema.md lists every kind.
///
/// Outcomes. A decision has three outcomes, because a decision rule that allows for the
/// measurement uncertainty (ISO 14253-1:2017, section 5; from memory for the clause) proves
/// conformance only when the value lies inside the tolerance by at least the uncertainty, and
/// non-conformance only when it lies outside by at least as much: in between it is not proven.

#include <string>
#include <string_view>
#include <vector>

#include "cylzone/evaluate/axis_zone.hpp"

namespace cylzone {

enum class Verdict { conforms, does_not_conform, not_proven };
/// "conforms", "does not conform", "not proven".
std::string_view verdict_name(Verdict verdict) noexcept;

/// How a characteristic's value is compared with its allowed limit.
enum class Comparison {
  at_most,  ///< value <= allowed (a zone, a form, an upper size limit)
  at_least  ///< value >= allowed (a lower size limit, a clearance that must not be violated)
};
/// "<=", ">=".
std::string_view comparison_symbol(Comparison comparison) noexcept;

/// The rule that turns a value and its limit into a verdict.
enum class DecisionRuleKind {
  /// The value against the limit alone, uncertainty not counted (ISO 14253-1:2017 calls this
  /// simple acceptance when agreed; from memory). The only rule until uncertainties are evaluated.
  simple_acceptance
};
/// "simple acceptance".
std::string_view decision_rule_name(DecisionRuleKind kind) noexcept;

struct DecisionRule {
  DecisionRuleKind kind = DecisionRuleKind::simple_acceptance;
  /// Rounding allowance, mm: a value within this of the limit counts as on the limit. It absorbs
  /// floating-point rounding of the fits only (1e-12 mm, far below any probing resolution).
  double slack = zone_rounding_slack;
};

struct Characteristic {
  std::string id;         ///< stable identity, see the file comment
  std::string feature;    ///< the bore's or datum's id, e.g. "P2"
  std::string name;       ///< for people, e.g. "position, datum mobility", "size, mating envelope"
  std::string reference;  ///< datum reference or limit, e.g. "A|B(M)|C MMC", "lower limit"
  double value = 0.0;     ///< mm
  double tolerance = 0.0; ///< the stated tolerance or limit, mm
  double bonus = 0.0;     ///< material-condition bonus, mm
  double allowed = 0.0;   ///< the limit the value is compared with: tolerance + bonus, mm
  Comparison comparison = Comparison::at_most;
  /// True when the verdict counts toward the feature's and the part's decision. False for a
  /// figure shown for comparison only (position in the fixed frame when the datum reference
  /// lets the frame move: the moved frame's position decides).
  bool decisive = true;
  /// Empty when the value was evaluated. Otherwise why it could not be (one printable line,
  /// e.g. "bore P3: the points lie in one cross-section ..." or "direction held at nominal"):
  /// `value` is then meaningless and decide() gives not_proven.
  std::string not_evaluated;
  Verdict verdict = Verdict::conforms;  ///< set by decide()
  DecisionRuleKind rule = DecisionRuleKind::simple_acceptance;  ///< the rule that set it
};

/// The verdict of one characteristic under `rule`; not_proven when it was not evaluated.
Verdict decide(const Characteristic& characteristic, const DecisionRule& rule = {});

/// The decision of a feature or a part from its characteristics' verdicts (already decided):
/// does_not_conform when any decisive one does not conform, else not_proven when any decisive
/// one is not proven, else conforms (also for an empty set).
Verdict combine(const std::vector<Characteristic>& characteristics) noexcept;

}  // namespace cylzone
