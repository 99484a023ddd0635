#pragma once
/// \file material_condition.hpp
/// Bonus tolerance, virtual condition and datum feature shift (ASME Y14.5-2018 sections 2.11,
/// 2.12, 7.3; ISO 2692:2021 for the ISO maximum/least material requirements). Sizes are
/// diameters (widths for a slot or tab) in millimetres. A slot follows the rules of a bore
/// (internal), a tab those of a pin (external): is_external() in tolerance_types.hpp.

#include <optional>

#include "cylzone/plan/tolerance_types.hpp"

namespace cylzone {

/// Bonus tolerance for a tolerance at `condition`:
///  * MMC: departure of the actual mating envelope from MMC (bore: mating - MMC; pin: MMC - mating);
///  * LMC: departure of the actual minimum material envelope from LMC (bore: LMC - envelope;
///    pin: envelope - LMC);
///  * RFS: 0.
/// Negative departures (a feature outside its size limits) give 0: the size verdict reports them.
double bonus_tolerance(MaterialCondition condition, FeatureKind kind, const SizeLimits& limits,
                       double mating_envelope, double minimum_material_envelope);

/// Virtual condition boundary of a feature with a geometric tolerance at MMC or LMC:
/// bore at MMC: MMC - t; bore at LMC: LMC + t; pin at MMC: MMC + t; pin at LMC: LMC - t.
/// (Common practice; ASME Y14.5-2018 definition of virtual condition.) At RFS there is no
/// virtual condition; the worst-case boundary at MMC (bore: MMC - t, pin: MMC + t) is returned.
double virtual_condition(MaterialCondition condition, FeatureKind kind, const SizeLimits& limits,
                         double tolerance);

/// Radius by which a datum feature of size's axis may move relative to a fixed-size MMB/LMB
/// simulator: |related envelope size - boundary size| / 2; 0 for RMB, for a plane, or for a
/// feature that violates its boundary (reported separately). At MMB `mating_size` is the
/// related actual mating envelope; at LMB the related actual minimum material envelope.
double datum_shift_allowance(MaterialBoundary boundary, FeatureKind kind, double mating_size,
                             double boundary_size);

/// The size of a datum feature's maximum material boundary: `given_mmb` (the plan's MMB, e.g.
/// a virtual condition) when present, else the MMC size of `limits`; empty when neither is
/// known (ASME Y14.5-2018 datum feature simulators, from memory for the clause; common practice).
std::optional<double> mmb_size_of(FeatureKind kind, const std::optional<SizeLimits>& limits,
                                  const std::optional<double>& given_mmb);

/// A datum feature of size against its maximum material boundary (MMB).
struct DatumShiftAtMmb {
  std::optional<double> boundary_size;  ///< mmb_size_of()
  /// datum_shift_allowance at MMB: bore or slot (mating - MMB) / 2, pin or tab
  /// (MMB - mating) / 2; 0 without a boundary size or when the feature violates it.
  double allowance = 0.0;
  /// The related mating envelope does not fit the MMB simulator: a bore (slot) smaller, a pin
  /// (tab) larger than the MMB.
  bool violates = false;
};

/// The one MMB-size and datum-shift rule of the datum frame and the datum mobility (ASME
/// Y14.5-2018 datum feature shift and datum feature simulators, from memory for the clauses;
/// common practice). `mating_size` is the related actual mating envelope's size (or width).
DatumShiftAtMmb datum_shift_at_mmb(FeatureKind kind, const std::optional<SizeLimits>& limits,
                                   const std::optional<double>& given_mmb, double mating_size);

}  // namespace cylzone
