#pragma once
/// \file tolerance_types.hpp
/// The vocabulary of geometric tolerancing shared by the plan, the datum frame and the
/// evaluation (ASME Y14.5-2018; ISO 1101:2017, ISO 2692:2021 for the ISO equivalents).

#include <optional>
#include <string>
#include <string_view>
#include <vector>

namespace cylzone {

/// Material condition applied to a tolerance of a feature of size.
enum class MaterialCondition {
  rfs,  ///< regardless of feature size (the default, ASME Y14.5-2018 Rule #2)
  mmc,  ///< maximum material condition: bonus as the feature departs from MMC
  lmc   ///< least material condition: bonus as the feature departs from LMC
};

/// Material boundary applied to a datum feature of size in a datum reference.
enum class MaterialBoundary {
  rmb,  ///< regardless of material boundary: the simulator expands/contracts to the feature
  mmb,  ///< maximum material boundary: a fixed-size simulator; the part may shift within it
  lmb   ///< least material boundary
};

/// The physical kind of a feature.
enum class FeatureKind {
  plane,
  bore,  ///< internal cylindrical feature of size (a hole)
  pin,   ///< external cylindrical feature of size (a shaft, boss)
  slot,  ///< internal width feature of size: two parallel opposed faces (a keyway, a slot)
  tab    ///< external width feature of size: two parallel faces facing away (a key, a tab)
};

/// An external feature of size (pin, tab): material lies inside it, so it is at MMC at its
/// largest size. Bores and slots are internal; a plane is no feature of size.
constexpr bool is_external(FeatureKind kind) noexcept {
  return kind == FeatureKind::pin || kind == FeatureKind::tab;
}

/// Limits of size, in millimetres. For an internal feature (bore, slot) MMC is `lower`, LMC is
/// `upper`; for an external one (pin, tab) the reverse.
struct SizeLimits {
  double lower = 0.0;
  double upper = 0.0;
  double mmc(FeatureKind kind) const noexcept { return is_external(kind) ? upper : lower; }
  double lmc(FeatureKind kind) const noexcept { return is_external(kind) ? lower : upper; }
};

/// One entry of a feature control frame's datum section, e.g. "B(M)".
struct DatumReference {
  char label = 'A';
  MaterialBoundary boundary = MaterialBoundary::rmb;
  /// Datum C only: its simulator translates along C's basic direction (the translation
  /// modifier of ASME Y14.5-2018, from memory for the clause), written "C(T)". Without it the
  /// simulators stay at their basic locations relative to one another.
  bool translating = false;
};

/// "RFS", "MMC", "LMC" / "RMB", "MMB", "LMB" / "plane", "bore", "pin", "slot", "tab".
std::string_view condition_name(MaterialCondition condition) noexcept;
std::string_view boundary_name(MaterialBoundary boundary) noexcept;
std::string_view feature_kind_name(FeatureKind kind) noexcept;

/// The datum section as written on a drawing: "A|B(M)|C", "A|B(M)|C(T)".
std::string datum_references_text(const std::vector<DatumReference>& datums);

}  // namespace cylzone
