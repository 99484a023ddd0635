#pragma once
/// \file bore_characteristics.hpp
/// The characteristics of an evaluated bore, each decided: the decide stage between evaluation
/// (values, evaluate/bore_evaluation.hpp) and the reports. Ids and names are listed in
/// docs/report-schema.md; the rules follow ASME Y14.5-2018 and ISO 1101/2692 as described in
/// docs/evaluation.md.
///
///  id                          value                         compared with
///  <bore>/position             position in the fixed frame   <= tolerance + bonus
///  <bore>/position/mobility    position after datum mobility <= tolerance + bonus
///  <bore>/perpendicularity     perpendicularity to A         <= tolerance + bonus
///  <bore>/size/lower           actual mating envelope        >= lower limit
///  <bore>/size/lower/two-point smallest two-point size       >= lower limit
///  <bore>/size/upper           largest two-point size        <= upper limit
///                              (minimum material envelope without opposed point pairs)
///  <bore>/cylindricity         minimum-zone cylindricity     <= tolerance
///  <bore>/virtual-condition    clearance on the boundary     >= (MMC) / <= (LMC) boundary
///
/// The size limits follow Rule #1 of ASME Y14.5-2018 (the envelope requirement for the lower
/// limit of a hole, actual local sizes within both limits). When the datum reference lets the
/// frame move, the fixed-frame position is shown for comparison only (not decisive): the
/// moved frame's position decides.

#include <string>
#include <string_view>
#include <vector>

#include "cylzone/decide/characteristic.hpp"
#include "cylzone/evaluate/bore_evaluation.hpp"

namespace cylzone {

/// Every characteristic of an evaluated `bore` in the order above (those its plan does not
/// tolerance are left out), each decided under `rule` (apply_decision), after the rule's stated
/// uncertainty for its kind (DecisionRule::stated_uncertainty, with its coverage factor) is
/// attached to it. A bore whose direction was held at the
/// nominal one (BoreResult::direction_held) has its perpendicularity not evaluated
/// (direction_held_reason); a bore whose pattern could not be evaluated as a whole
/// (BoreResult::mobility_not_evaluated) has its "position/mobility" row not evaluated and its
/// fixed-frame position shown for comparison. Throws std::invalid_argument for a bore that was
/// not evaluated: use the overload with its plan.
std::vector<Characteristic> bore_characteristics(const BoreResult& bore,
                                                 const DecisionRule& rule = {});

/// The same for any bore, evaluated or not. A bore that was not evaluated
/// (BoreResult::not_evaluated) gets one row per characteristic its plan asks for, with the ids
/// an evaluated bore has ("<bore>/position", "<bore>/position/mobility" when its reference lets
/// the frame move, "<bore>/perpendicularity", "<bore>/size/lower", "<bore>/size/upper",
/// "<bore>/cylindricity", "<bore>/virtual-condition"), each not proven with the bore's reason
/// in Characteristic::not_evaluated; tolerances and limits from the plan, no bonus.
/// The bore's own stated uncertainty (PlanBore::uncertainty) replaces the rule's, kind by kind.
std::vector<Characteristic> bore_characteristics(const BoreResult& bore, const PlanBore& plan,
                                                 const DecisionRule& rule = {});

/// A characteristic's figure without its texts: its kind (the id after "<bore>/", e.g.
/// "size/upper"; static storage), its value, and whether it was evaluated
/// (Characteristic::not_evaluated empty).
struct CharacteristicFigure {
  std::string_view kind;
  double value = 0.0;
  bool evaluated = true;
};

/// The figures of `bore`'s characteristics into `out` (cleared first, its capacity reused): for
/// an evaluated bore the kinds, values and evaluated flags of the rows bore_characteristics
/// lists, in its order, from the same list of rows, but without building any id, name or
/// reference; nothing for a bore not evaluated (all of whose rows are not evaluated). For
/// readers of values only, thousands of times (the Monte Carlo trials).
void characteristic_figures(const BoreResult& bore, std::vector<CharacteristicFigure>& out);

/// The reason a perpendicularity is not evaluated when the axis direction is held.
inline constexpr std::string_view direction_held_reason =
    "direction held at nominal (axis_direction = \"nominal\"): the axis is perpendicular by "
    "construction, so perpendicularity is not measured";

/// The characteristic with this id, or nullptr.
const Characteristic* find_characteristic(const std::vector<Characteristic>& characteristics,
                                          std::string_view id) noexcept;

/// The decision of one feature: combine() over the characteristics whose `feature` it is.
Verdict feature_verdict(const std::vector<Characteristic>& characteristics,
                        std::string_view feature);

/// Why a bore's size does not conform, in words, e.g. "largest two-point size 12.0213 exceeds
/// the upper limit 12.0180" (several joined by "; "); empty when every size limit conforms.
std::string size_reason(const std::vector<Characteristic>& characteristics,
                        std::string_view feature);

/// How the deciding virtual condition figure of `bore` was found, in words: the clearance's
/// basis ("nearest point", or why the conservative envelope figure was taken) and, when the
/// datum reference let the frame move, the motion used ("shift (dx, dy) mm, rotation r rad")
/// and what the reference left free. Empty without a virtual condition.
std::string boundary_reason(const BoreResult& bore);

/// The datum reference and modifier of a tolerance, as reports print it: "A|B(M)|C MMC",
/// "A projected".
std::string tolerance_reference(const PlanTolerance& spec);

}  // namespace cylzone
