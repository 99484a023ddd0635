#pragma once
// Pairs each datum's specification with its cloud for establish_datum_frame. The vectors are
// referenced: pass them in the same full expression as the call, or keep them alive.

#include <stdexcept>
#include <vector>

#include "cylzone/datum/datum_frame.hpp"

namespace cylzone::test {

inline std::vector<DatumInput> paired(const std::vector<PlanDatum>& datums,
                                      const std::vector<PointCloud>& clouds) {
  if (datums.size() != clouds.size())
    throw std::invalid_argument("paired: as many clouds as datums are needed");
  std::vector<DatumInput> inputs;
  for (std::size_t k = 0; k < datums.size(); ++k) inputs.push_back({datums[k], clouds[k]});
  return inputs;
}

}  // namespace cylzone::test
