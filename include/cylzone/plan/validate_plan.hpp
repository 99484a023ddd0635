#pragma once
/// \file validate_plan.hpp
/// The rules that give a part plan its meaning, apart from how it was written: parse_plan
/// applies them to every plan it reads, and a plan built in code (tests, bindings, Monte Carlo
/// studies) is held to the same rules by calling validate_plan itself. docs/plan.md states each
/// rule with its source and the bounds below.

#include "cylzone/plan/plan.hpp"

namespace cylzone {

/// Largest magnitude of a plan length, in mm: coordinates, depths, heights, sizes and the
/// section gap lie within 10 m. A bore evaluated by cylzone fits on a machine table; beyond
/// that a value is a typing error (e.g. 1e308), not a part.
inline constexpr double plan_length_limit = 10000.0;
/// Largest tolerance (a zone diameter, or cylindricity), in mm. A 100 mm zone is far beyond any
/// bore tolerance that needs a measurement; larger values are typing errors.
inline constexpr double plan_tolerance_limit = 100.0;

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
///  * every length is within plan_length_limit; every bore has a tolerance.
void validate_plan(PartPlan& plan);

/// The boundary datum `label` is referenced at in `plan` (the rule above); RMB when no
/// tolerance references it with a modifier.
MaterialBoundary referenced_boundary(const PartPlan& plan, char label) noexcept;

}  // namespace cylzone
