#pragma once
/// \file validate_plan.hpp
/// The rules that give a part plan its meaning, apart from how it was written: parse_plan
/// applies them to every plan it reads, and a plan built in code (tests, bindings, Monte Carlo
/// studies) is held to the same rules by calling validate_plan itself. docs/plan.md states each
/// rule with its source and the bounds below.

#include <optional>
#include <string>

#include "cylzone/plan/plan.hpp"

namespace cylzone {

/// Largest magnitude of a plan length, in mm: coordinates, depths, heights, sizes and the
/// section gap lie within 10 m. A bore evaluated by cylzone fits on a machine table; beyond
/// that a value is a typing error (e.g. 1e308), not a part.
inline constexpr double plan_length_limit = 10000.0;
/// Largest tolerance (a zone diameter, or cylindricity), in mm. A 100 mm zone is far beyond any
/// bore tolerance that needs a measurement; larger values are typing errors.
inline constexpr double plan_tolerance_limit = 100.0;

/// Plausibility: a position or perpendicularity zone wider than this share of the bore's size
/// (its lower limit) gets a warning, one wider than the size itself is refused, unless the
/// tolerance says `wide_zone_intended = true` (docs/evaluation.md, "Plausibility checks").
inline constexpr double plan_tolerance_share_warning = 0.10;
/// Longest part id, serial number or note text, in bytes (one line of a report header).
inline constexpr std::size_t plan_identity_text_limit = 200;

/// A zone that is implausibly wide for its feature (see plan_tolerance_share_warning).
struct ZoneShareFinding {
  bool error = false;   ///< wider than the size itself
  std::string message;  ///< one line, lengths in `unit`, naming the value probably meant
};

/// The rule on a zone's width against a size (mm both): empty when `tolerance` is at most
/// plan_tolerance_share_warning of `size`, else a finding ("the position tolerance 20 mm is 167
/// % of the bore's size 12 mm, wider than the bore itself: was 0.02 meant? ..."), an error above
/// the size. `name` is "position" or "perpendicularity"; `size_what` names the size. A deep-bore
/// position or perpendicularity zone is microns on millimetres of diameter (ISO 286-1 grades
/// and the tolerances drawn with them; common practice): one of the size's order is almost
/// always a value typed in the wrong unit. validate_plan applies it with the limits of size,
/// the plausibility checks (check/plausibility.hpp) with the fitted diameter.
std::optional<ZoneShareFinding> zone_share_finding(const std::string& name, double tolerance,
                                                  double size, const std::string& size_what,
                                                  LengthUnit unit);

/// Checks every rule of a plan and settles what follows from them: each datum's `boundary`
/// (MMB when any position or perpendicularity references it at MMB, else LMB when any does,
/// else RMB). Throws InputError naming `plan.file`, the line recorded in the `where` of the
/// offending datum, bore or tolerance (0 for a plan built in code) and the key path, e.g.
/// "bore[P1].position.datums". Rules, in the order they are checked:
///  * the part has a name; ball-centre points are refused (no probe compensation yet);
///    the tip diameter and the plan-wide section gap are positive and bounded;
///  * datums are A (a plane), then optionally B (a bore or pin), then optionally C (any
///    kind, and only with B); directions are finite unit vectors; limits of size are positive
///    and in order; an MMB needs limits of size and lies on the material side of MMC; C as a
///    bore, pin, slot or tab has a basic location off B's axis, C as a plane an outward normal;
///  * there is at least one bore; ids are usable and unique; the nominal direction is a unit
///    vector crossing A, out of the material (z > 0); depth ranges are in order;
///  * tolerances are not negative, zero only at MMC or LMC, below plan_tolerance_limit, and
///    at MMC or LMC only with the bore's limits of size; position references defined datums
///    in the order A, B, C, modifiers only on datum features of size with limits of size;
///    perpendicularity references just A; a projected zone needs a straight axis;
///  * every length is within plan_length_limit; every bore has a tolerance;
///  * plausibility: a position or perpendicularity zone wider than the bore's size is refused
///    unless `wide_zone_intended`, one wider than plan_tolerance_share_warning of it warned;
///  * the [part] identity: printable one-line texts within plan_identity_text_limit, note keys
///    of letters, digits, '_', '-', '.', each once.
///  * the [decision] table: stated U and guard bands not negative and below
///    plan_tolerance_limit, a coverage factor from 1 to 10, a guard band rule with a guard band,
///    no guard band wider than half a bore's tolerance of its kind; a U above such a tolerance
///    is a warning (docs/plan.md, rules 34 to 37).
/// Sets `plan.warnings` to the plausibility warnings (replacing any earlier ones).
void validate_plan(PartPlan& plan);

/// The boundary datum `label` is referenced at in `plan` (the rule above); RMB when no
/// tolerance references it with a modifier.
MaterialBoundary referenced_boundary(const PartPlan& plan, char label) noexcept;

}  // namespace cylzone
