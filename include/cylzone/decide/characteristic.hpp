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

#include <array>
#include <cstddef>
#include <optional>
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

/// The rule that turns a value and its limit into a verdict (docs/evaluation.md, "Decision
/// rules"). With U the expanded uncertainty of the value and g a stated guard band, for an upper
/// limit L (a lower one mirrors it):
///
///  rule                 conformance proven      non-conformance proven    else
///  simple acceptance    value <= L              value > L                 (never)
///  ISO 14253-1          value <= L - U          value > L + U             not proven
///  guard band           value <= L - g          value > L + g             not proven
///
/// ISO 14253-1:2017 (clause 5 and its default rule, from memory for the clause numbers): the
/// uncertainty counts against whoever proves, the supplier proving conformance, the customer
/// non-conformance; a guard band of g = U is that default rule. ASME B89.7.3.1-2001 (guard bands
/// agreed between the parties) and ISO/IEC Guide 98-4 (JCGM 106:2012, acceptance zones) describe
/// guard bands the same way (from memory).
enum class DecisionRuleKind {
  /// The value against the limit alone, uncertainty not counted (ISO 14253-1:2017 calls this
  /// simple acceptance when agreed; from memory).
  simple_acceptance,
  /// The ISO 14253-1:2017 default: the zone reduced (acceptance) and enlarged (rejection) by U.
  iso_14253_1,
  /// A guard band g agreed between customer and supplier, per characteristic kind.
  guard_band
};
/// "simple acceptance", "ISO 14253-1", "guard band".
std::string_view decision_rule_name(DecisionRuleKind kind) noexcept;
/// The plan's and the command line's words: "simple", "iso-14253-1", "guard-band".
std::string_view decision_rule_word(DecisionRuleKind kind) noexcept;
std::optional<DecisionRuleKind> parse_decision_rule_word(std::string_view word) noexcept;
/// The reverse of decision_rule_name (for reading reports back).
std::optional<DecisionRuleKind> parse_decision_rule_name(std::string_view name) noexcept;

/// The expanded uncertainty U of a characteristic's value (JCGM 100:2008, GUM, section 6):
/// U = k u for a stated budget, or the half-width of a coverage interval (a Monte Carlo study,
/// JCGM 101:2008), with k the coverage factor that goes with it.
struct ExpandedUncertainty {
  double expanded = 0.0;         ///< U, mm, >= 0
  double coverage_factor = 2.0;  ///< k (about 95 % coverage for a normal distribution)
  /// Where U came from, one printable line, e.g. "stated budget ([decision].uncertainty)",
  /// "stated budget (bore P3)" or, from a Monte Carlo study, its trial count and coverage.
  std::string source;
};

/// Which entry of a per-kind table (a stated budget, guard bands) a characteristic takes.
enum class CharacteristicKind { position, perpendicularity, size, form, virtual_condition };
inline constexpr std::size_t characteristic_kind_count = 5;
inline constexpr std::array<CharacteristicKind, characteristic_kind_count> characteristic_kinds = {
    CharacteristicKind::position, CharacteristicKind::perpendicularity, CharacteristicKind::size,
    CharacteristicKind::form, CharacteristicKind::virtual_condition};
/// The plan's words: "position", "perpendicularity", "size", "form", "virtual_condition".
std::string_view characteristic_kind_word(CharacteristicKind kind) noexcept;
std::optional<CharacteristicKind> parse_characteristic_kind_word(std::string_view word) noexcept;

/// A length per characteristic kind, each optional (mm).
struct PerKindLength {
  std::array<std::optional<double>, characteristic_kind_count> values{};
  std::optional<double>& operator[](CharacteristicKind kind) {
    return values[static_cast<std::size_t>(kind)];
  }
  const std::optional<double>& operator[](CharacteristicKind kind) const {
    return values[static_cast<std::size_t>(kind)];
  }
  bool any() const noexcept {
    for (const auto& v : values)
      if (v) return true;
    return false;
  }
};

struct DecisionRule {
  DecisionRuleKind kind = DecisionRuleKind::simple_acceptance;
  /// Rounding allowance, mm: a value within this of the limit counts as on the limit. It absorbs
  /// floating-point rounding of the fits only (1e-12 mm, far below any probing resolution).
  double slack = zone_rounding_slack;
  /// The agreed guard band g per kind, mm (rule guard_band). A kind without one is decided by
  /// simple acceptance, and the row says so (Characteristic::rule_note).
  PerKindLength guard_band;
  /// A laboratory's stated expanded uncertainty U per kind, mm (its uncertainty budget; common
  /// practice), with `coverage_factor`: bore_characteristics attaches it to every characteristic
  /// of the kind that has no uncertainty of its own.
  PerKindLength stated_uncertainty;
  double coverage_factor = 2.0;
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
  /// The expanded uncertainty of `value`; empty when not evaluated ("U not evaluated").
  std::optional<ExpandedUncertainty> uncertainty;
  Verdict verdict = Verdict::conforms;  ///< set by apply_decision()
  /// The rule that set the verdict (after any fallback, see rule_note).
  DecisionRuleKind rule = DecisionRuleKind::simple_acceptance;
  /// The limits the value was compared with, mm (decision_limits): conformance proven at or
  /// inside `acceptance_limit`, non-conformance proven beyond `rejection_limit`. Both equal
  /// `allowed` (the effective tolerance, after bonus) under simple acceptance.
  double acceptance_limit = 0.0;
  double rejection_limit = 0.0;
  /// Why the rule applied differs from the rule asked for, e.g. "U not evaluated: simple
  /// acceptance"; empty otherwise.
  std::string rule_note;
};

/// The kind of a characteristic, from its id "<feature>/<kind>[/...]" (cylindricity: form).
std::optional<CharacteristicKind> characteristic_kind(const Characteristic& characteristic);

/// How `rule` applies to one characteristic: the rule in force (the ISO 14253-1 rule without a
/// known U, or a guard band rule without a band for the kind, falls back to simple acceptance,
/// with the note saying so), its acceptance and rejection limits, mm.
struct DecisionLimits {
  DecisionRuleKind rule = DecisionRuleKind::simple_acceptance;
  double acceptance = 0.0;  ///< conformance proven when the value is at or inside this
  double rejection = 0.0;   ///< non-conformance proven when the value is beyond this
  std::string note;         ///< why `rule` differs from the rule asked for; empty otherwise
};
DecisionLimits decision_limits(const Characteristic& characteristic, const DecisionRule& rule);

/// The verdict of one characteristic under `rule` (the one comparison of a value with its
/// limits, table above); not_proven when it was not evaluated.
Verdict decide(const Characteristic& characteristic, const DecisionRule& rule = {});

/// Decides `characteristic` in place: its verdict, the rule in force, the limits and the note.
void apply_decision(Characteristic& characteristic, const DecisionRule& rule);

/// Whether a report must show the decision rule's details for these characteristics: any has a
/// rule other than simple acceptance, a known U, or a note that simple acceptance stood in.
/// Without them the reports read as they did before decision rules existed.
bool decision_details_shown(const std::vector<Characteristic>& characteristics) noexcept;

/// The decision of a feature or a part from its characteristics' verdicts (already decided):
/// does_not_conform when any decisive one does not conform, else not_proven when any decisive
/// one is not proven, else conforms (also for an empty set).
Verdict combine(const std::vector<Characteristic>& characteristics) noexcept;

}  // namespace cylzone
