// libFuzzer target: the part-plan parser on arbitrary text, point files not required to exist.
// A plan it accepts must hold what plan.hpp promises; a breach aborts.
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <set>
#include <string>
#include <string_view>

#include "cylzone/plan/plan.hpp"
#include "fuzz_contract.hpp"

namespace {

using cylzone::fuzz::breach;

bool positive_finite(double value) { return std::isfinite(value) && value > 0.0; }

void check_size(const std::optional<cylzone::SizeLimits>& size, const std::string& where) {
  if (size && !(std::isfinite(size->lower) && std::isfinite(size->upper) && size->lower > 0.0 &&
                size->lower <= size->upper))
    breach(where + ": accepted size limits " + std::to_string(size->lower) + " .. " +
           std::to_string(size->upper));
}

void check_tolerance(const std::optional<cylzone::PlanTolerance>& t, const std::string& where) {
  if (!t) return;
  if (!positive_finite(t->tolerance)) breach(where + ": accepted tolerance " + std::to_string(t->tolerance));
  if (t->projected_height && !positive_finite(*t->projected_height))
    breach(where + ": accepted projected height " + std::to_string(*t->projected_height));
}

/// The promises of plan.hpp for a plan that was read.
void check_plan(const cylzone::PartPlan& plan) {
  if (plan.datums.empty() || plan.datums.front().label != 'A') breach("a plan without datum A first");
  for (std::size_t i = 1; i < plan.datums.size(); ++i)
    if (plan.datums[i].label != static_cast<char>('A' + i)) breach("datums out of order A, B, C");
  if (plan.bores.empty()) breach("a plan without bores");
  for (const cylzone::PlanDatum& d : plan.datums)
    if (const auto s = cylzone::resolved_probe(plan.probe, d.probe);
        s.ball_centres && !positive_finite(s.tip_diameter))
      breach("ball centres accepted without a tip diameter");
  for (const cylzone::PlanBore& b : plan.bores)
    if (const auto s = cylzone::resolved_probe(plan.probe, b.probe);
        s.ball_centres && !positive_finite(s.tip_diameter))
      breach("ball centres accepted without a tip diameter");
  for (const cylzone::PlanDatum& d : plan.datums) {
    const std::string where = std::string("datum ") + d.label;
    check_size(d.size, where);
    if (d.mmb_size && !positive_finite(*d.mmb_size)) breach(where + ": accepted MMB size");
    if (d.material_side && !(d.material_side->allFinite() && d.material_side->norm() > 0.0))
      breach(where + ": accepted material side that is no direction");
    if (d.basic_location && !d.basic_location->allFinite()) breach(where + ": non-finite location");
    if (d.outward_normal && !(d.outward_normal->allFinite() &&
                              std::abs(d.outward_normal->norm() - 1.0) <= 1e-9))
      breach(where + ": outward normal not a unit vector");
  }
  std::set<std::string> ids;
  for (const cylzone::PlanBore& b : plan.bores) {
    const std::string where = "bore " + b.id;
    if (b.id.empty() || !ids.insert(b.id).second) breach(where + ": empty or repeated bore id");
    if (!b.basic_location.allFinite()) breach(where + ": non-finite basic location");
    if (!(b.nominal_direction.allFinite() && std::abs(b.nominal_direction.norm() - 1.0) <= 1e-9 &&
          b.nominal_direction.z() > 0.0))
      breach(where + ": nominal direction not a unit vector out of the material");
    if (b.depth_top && !std::isfinite(*b.depth_top)) breach(where + ": non-finite depth top");
    if (b.depth_bottom && !std::isfinite(*b.depth_bottom)) breach(where + ": non-finite depth bottom");
    if (b.depth_top && b.depth_bottom && !(*b.depth_top > *b.depth_bottom))
      breach(where + ": depth top not above depth bottom");
    check_size(b.size, where);
    check_tolerance(b.position, where + " position");
    check_tolerance(b.perpendicularity, where + " perpendicularity");
    if (b.cylindricity && !positive_finite(*b.cylindricity)) breach(where + ": accepted cylindricity");
    if (!b.position && !b.perpendicularity && !b.cylindricity && !b.size)
      breach(where + ": a bore with nothing to check");
  }
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string_view text(reinterpret_cast<const char*>(data), size);
  cylzone::fuzz::expect_contract([&] {
    check_plan(cylzone::parse_plan(text, "fuzz.toml", /*check_files=*/false));
  });
  return 0;
}
