// The decide stage: one decision function (decide/characteristic.hpp) and a bore's
// characteristics with their stable ids (decide/bore_characteristics.hpp).
#include <catch2/catch.hpp>
#include <cmath>

#include "cylzone/decide/bore_characteristics.hpp"
#include "cylzone/decide/characteristic.hpp"

using namespace cylzone;

namespace {

Characteristic zone(double value, double tolerance, double bonus = 0.0) {
  Characteristic c;
  c.id = "H1/position";
  c.feature = "H1";
  c.value = value;
  c.tolerance = tolerance;
  c.bonus = bonus;
  c.allowed = tolerance + bonus;
  c.comparison = Comparison::at_most;
  return c;
}

PositionResult position(double value, double tolerance, double bonus) {
  PositionResult p;
  p.spec.tolerance = tolerance;
  p.spec.condition = MaterialCondition::mmc;
  p.spec.datums = {{'A', MaterialBoundary::rmb}, {'B', MaterialBoundary::mmb}};
  p.value = value;
  p.bonus = bonus;
  p.allowed = tolerance + bonus;
  return p;
}

}  // namespace

TEST_CASE("decide: a positional deviation against its diameter zone", "[decide]") {
  // Positional deviation in a diameter zone is 2 sqrt(dx^2 + dy^2) (common practice):
  // dx 0.04, dy 0.03 gives 0.100, on the limit of a 0.100 zone: conforms.
  const double on_limit = 2 * std::hypot(0.04, 0.03);
  CHECK(decide(zone(on_limit, 0.100)) == Verdict::conforms);
  // dx = dy = 0.05 gives about 0.141: outside a 0.140 zone.
  CHECK(decide(zone(2 * std::hypot(0.05, 0.05), 0.140)) == Verdict::does_not_conform);
  // 0.05 in one axis alone gives 0.100: outside a 0.099 zone, inside 0.101.
  CHECK(decide(zone(2 * 0.05, 0.099)) == Verdict::does_not_conform);
  CHECK(decide(zone(2 * 0.05, 0.101)) == Verdict::conforms);
}

TEST_CASE("decide: bonus at MMC enlarges the allowed zone", "[decide]") {
  // Bonus at MMC for a hole = actual mating size - MMC size; allowed = stated tolerance + bonus
  // (common practice; ASME Y14.5-2018). MMC 10.000, mating 10.012, tolerance 0.030: 0.042.
  const double bonus = 10.012 - 10.000;
  CHECK(decide(zone(0.040, 0.030, bonus)) == Verdict::conforms);
  CHECK(decide(zone(0.040, 0.030)) == Verdict::does_not_conform);
}

TEST_CASE("decide: lower limits and the rounding slack", "[decide]") {
  Characteristic lower;
  lower.comparison = Comparison::at_least;
  lower.allowed = lower.tolerance = 12.000;
  lower.value = 11.9953;  // an undersize bore
  CHECK(decide(lower) == Verdict::does_not_conform);
  lower.value = 12.000;
  CHECK(decide(lower) == Verdict::conforms);
  // The slack absorbs rounding only: 1e-13 beyond the limit counts as on it, 1e-9 does not.
  lower.value = 12.000 - 1e-13;
  CHECK(decide(lower) == Verdict::conforms);
  lower.value = 12.000 - 1e-9;
  CHECK(decide(lower) == Verdict::does_not_conform);
  DecisionRule strict;
  strict.slack = 0.0;
  CHECK(decide(zone(0.1 + 1e-13, 0.1), strict) == Verdict::does_not_conform);
  CHECK(decide(zone(0.1 + 1e-13, 0.1)) == Verdict::conforms);
}

TEST_CASE("combine: does not conform beats not proven beats conforms; only decisive ones count", "[decide]") {
  std::vector<Characteristic> set = {zone(0.01, 0.02), zone(0.01, 0.02)};
  for (Characteristic& c : set) c.verdict = decide(c);
  CHECK(combine(set) == Verdict::conforms);
  CHECK(combine({}) == Verdict::conforms);
  set[1].verdict = Verdict::not_proven;
  CHECK(combine(set) == Verdict::not_proven);
  set[0].verdict = Verdict::does_not_conform;
  CHECK(combine(set) == Verdict::does_not_conform);
  set[0].decisive = false;  // shown for comparison only
  CHECK(combine(set) == Verdict::not_proven);
  CHECK(verdict_name(Verdict::not_proven) == "not proven");
  CHECK(comparison_symbol(Comparison::at_least) == ">=");
}

TEST_CASE("bore characteristics: stable ids, decisive flags, Rule #1 size limits", "[decide]") {
  BoreResult b;
  b.id = "P2";
  b.position = position(0.0514, 0.030, 0.0029);
  b.position_with_mobility = position(0.0300, 0.030, 0.0029);
  b.perpendicularity = PerpendicularityResult{};
  b.perpendicularity->spec.tolerance = 0.015;
  b.perpendicularity->value = 0.0151;
  b.perpendicularity->allowed = 0.015;
  b.size.limits = SizeLimits{10.000, 10.015};
  b.size.mating_envelope = 10.0029;
  b.size.two_point_min = 9.9990;  // one local size below the lower limit
  b.size.two_point_max = 10.0074;
  b.size.two_point_count = 12;
  b.form.cylindricity = 0.004;
  b.form.tolerance = 0.003;

  const std::vector<Characteristic> cs = bore_characteristics(b);
  std::vector<std::string> ids;
  for (const Characteristic& c : cs) ids.push_back(c.id);
  CHECK(ids == std::vector<std::string>{"P2/position", "P2/position/mobility", "P2/perpendicularity",
                                        "P2/size/lower", "P2/size/lower/two-point", "P2/size/upper",
                                        "P2/cylindricity"});
  // The fixed-frame position is shown, but the moved frame's decides.
  const Characteristic* fixed = find_characteristic(cs, "P2/position");
  const Characteristic* moved = find_characteristic(cs, "P2/position/mobility");
  REQUIRE(fixed);
  REQUIRE(moved);
  CHECK_FALSE(fixed->decisive);
  CHECK(fixed->verdict == Verdict::does_not_conform);
  CHECK(moved->decisive);
  CHECK(moved->verdict == Verdict::conforms);
  CHECK(moved->reference == "A|B(M) MMC");
  CHECK(find_characteristic(cs, "P2/perpendicularity")->verdict == Verdict::does_not_conform);
  CHECK(find_characteristic(cs, "P2/size/lower")->verdict == Verdict::conforms);
  CHECK(find_characteristic(cs, "P2/size/lower/two-point")->verdict == Verdict::does_not_conform);
  CHECK(find_characteristic(cs, "P2/size/upper")->verdict == Verdict::conforms);
  CHECK(size_reason(cs, "P2") == "smallest two-point size 9.9990 is below the lower limit 10.0000");
  CHECK(feature_verdict(cs, "P2") == Verdict::does_not_conform);
  CHECK(feature_verdict(cs, "P7") == Verdict::conforms);  // no characteristics

  // Without opposed point pairs the upper limit is checked with the minimum material envelope.
  b.size.two_point_count = 0;
  b.size.minimum_material_envelope = 10.0160;
  const std::vector<Characteristic> no_pairs = bore_characteristics(b);
  CHECK(find_characteristic(no_pairs, "P2/size/lower/two-point") == nullptr);
  const Characteristic* upper = find_characteristic(no_pairs, "P2/size/upper");
  REQUIRE(upper);
  CHECK(upper->name == "size, minimum material envelope");
  CHECK(upper->verdict == Verdict::does_not_conform);
  CHECK(size_reason(no_pairs, "P2") ==
        "minimum material envelope 10.0160 exceeds the upper limit 10.0150");
}
