#include "cylzone/evaluate/material_condition.hpp"

#include <algorithm>
#include <cmath>

namespace cylzone {

double bonus_tolerance(MaterialCondition condition, FeatureKind kind, const SizeLimits& limits,
                       double mating_envelope, double minimum_material_envelope) {
  double departure = 0.0;
  switch (condition) {
    case MaterialCondition::rfs:
      return 0.0;
    case MaterialCondition::mmc:
      // A bore grows away from MMC (its smallest size), a pin shrinks away from it.
      departure = is_external(kind) ? limits.mmc(kind) - mating_envelope
                                           : mating_envelope - limits.mmc(kind);
      break;
    case MaterialCondition::lmc:
      // At LMC the bore's bonus grows as its minimum material envelope shrinks from LMC.
      departure = is_external(kind) ? minimum_material_envelope - limits.lmc(kind)
                                           : limits.lmc(kind) - minimum_material_envelope;
      break;
  }
  return std::max(0.0, departure);
}

double virtual_condition(MaterialCondition condition, FeatureKind kind, const SizeLimits& limits,
                         double tolerance) {
  const bool external = is_external(kind);
  switch (condition) {
    case MaterialCondition::mmc:
      return external ? limits.mmc(kind) + tolerance : limits.mmc(kind) - tolerance;
    case MaterialCondition::lmc:
      return external ? limits.lmc(kind) - tolerance : limits.lmc(kind) + tolerance;
    case MaterialCondition::rfs:
      break;
  }
  // RFS has no virtual condition of its own; the MMC boundary is the conservative stand-in
  // used for the worst-case (outer/inner) boundary of ASME Y14.5-2018.
  return external ? limits.mmc(kind) + tolerance : limits.mmc(kind) - tolerance;
}

double datum_shift_allowance(MaterialBoundary boundary, FeatureKind kind, double mating_size,
                             double boundary_size) {
  if (kind == FeatureKind::plane) return 0.0;
  const bool external = is_external(kind);
  double room = 0.0;
  switch (boundary) {
    case MaterialBoundary::rmb:
      return 0.0;
    case MaterialBoundary::mmb:
      // A bore (slot) larger than its MMB pin (block), or a pin (tab) smaller than its MMB
      // hole (gap), may shift.
      room = external ? boundary_size - mating_size : mating_size - boundary_size;
      break;
    case MaterialBoundary::lmb:
      // The LMB simulator lies in the material: a bore's envelope inside it, a pin's around it.
      room = external ? mating_size - boundary_size : boundary_size - mating_size;
      break;
  }
  // A negative room means the feature violates its boundary: no shift (reported separately).
  return room > 0.0 ? 0.5 * room : 0.0;
}

std::optional<double> mmb_size_of(FeatureKind kind, const std::optional<SizeLimits>& limits,
                                  const std::optional<double>& given_mmb) {
  if (given_mmb) return given_mmb;
  if (limits) return limits->mmc(kind);
  return std::nullopt;
}

DatumShiftAtMmb datum_shift_at_mmb(FeatureKind kind, const std::optional<SizeLimits>& limits,
                                   const std::optional<double>& given_mmb, double mating_size) {
  DatumShiftAtMmb result;
  result.boundary_size = mmb_size_of(kind, limits, given_mmb);
  if (!result.boundary_size) return result;
  const double boundary = *result.boundary_size;
  result.allowance = datum_shift_allowance(MaterialBoundary::mmb, kind, mating_size, boundary);
  result.violates = is_external(kind) ? mating_size > boundary : mating_size < boundary;
  return result;
}

}  // namespace cylzone
