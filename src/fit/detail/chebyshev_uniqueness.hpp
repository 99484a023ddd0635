#pragma once
// Private to the fit stage: whether a converged Chebyshev element is the unique optimum and,
// when that cannot be proven, how far it can move without a worse objective
// (docs/chebyshev.md, "Non-unique optima").

#include <Eigen/Core>

#include "fit/detail/chebyshev.hpp"
#include "fit/detail/chebyshev_programme.hpp"

namespace cylzone::detail {

/// The ambiguity of a converged element (docs/chebyshev.md, "Non-unique optima"): 0 when
/// first_order_unique proves the optimum unique; otherwise the largest displacement of a
/// reference point of the gauge at the ends of the walks that push each of its components
/// both ways, with the true objective within the tolerance of the current element's.
/// `last` is the programme solved at the element; `d` are the distances there.
void assess_uniqueness(const ZoneModel& model, ZoneObjective objective,
                       const ZoneOptions& options, const zone_lp::ZoneProgramme& last,
                       const Eigen::VectorXd& d, ZoneSummary& summary);

}  // namespace cylzone::detail
