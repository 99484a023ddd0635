// The decide stage: one decision function (decide/characteristic.hpp) and a bore's
// characteristics with their stable ids (decide/bore_characteristics.hpp).
#include <catch2/catch.hpp>
#include <cmath>
#include <cstring>
#include <string>
#include <vector>

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

// characteristic_figures is the rows of bore_characteristics without their texts (the Monte
// Carlo trials read only the values): the same kinds in the same order, the values bit for bit
// (memcmp, so a signed zero counts) and the same evaluated flags, on bores that take every
// branch of the list: with and without mobility, a pattern not evaluated, a held direction, no
// opposed pairs, a boundary moved, fixed and perpendicular, a bore not evaluated. The reference
// is the computation the trials used before (bore_characteristics and find_characteristic).
TEST_CASE("characteristic figures: the rows' kinds, values and flags without the texts",
          "[decide]") {
  const auto agree = [](const BoreResult& b, std::size_t expected_rows) {
    std::vector<CharacteristicFigure> figures{{"stale", 1.0, false}};  // cleared first
    characteristic_figures(b, figures);
    const std::vector<Characteristic> rows =
        b.evaluated() ? bore_characteristics(b) : std::vector<Characteristic>{};
    REQUIRE(figures.size() == rows.size());
    CHECK(rows.size() == expected_rows);
    for (std::size_t k = 0; k < rows.size(); ++k) {
      INFO(rows[k].id);
      CHECK(b.id + "/" + std::string(figures[k].kind) == rows[k].id);
      CHECK(std::memcmp(&figures[k].value, &rows[k].value, sizeof(double)) == 0);
      CHECK(figures[k].evaluated == rows[k].not_evaluated.empty());
      const Characteristic* found = find_characteristic(rows, rows[k].id);
      REQUIRE(found);
      CHECK(std::memcmp(&found->value, &figures[k].value, sizeof(double)) == 0);
    }
  };
  BoreResult b;
  b.id = "P2";
  b.position = position(0.0514, 0.030, 0.0029);
  b.position->projected = true;
  b.perpendicularity = PerpendicularityResult{};
  b.perpendicularity->spec.condition = MaterialCondition::mmc;
  b.perpendicularity->value = -0.0;  // a signed zero must come through as it is
  b.size.limits = SizeLimits{10.000, 10.015};
  b.size.mating_envelope = 10.0029;
  b.size.two_point_min = 9.9990;
  b.size.two_point_max = 10.0074;
  b.size.two_point_count = 12;
  b.size.minimum_material_envelope = 10.0160;
  b.form.cylindricity = 0.004;
  b.form.tolerance = 0.003;
  b.virtual_condition = VirtualConditionResult{};
  b.virtual_condition->clearance = 0.0021;
  b.virtual_condition->boundary = 9.97;
  agree(b, 7);

  b.position_with_mobility = position(0.0300, 0.030, 0.0029);
  b.virtual_condition_with_mobility = VirtualConditionResult{};
  b.virtual_condition_with_mobility->clearance = 0.0033;
  b.virtual_condition_with_mobility->condition = MaterialCondition::lmc;
  agree(b, 8);

  // A pattern member not evaluated: the mobility row and the boundary on true position are
  // not evaluated (value 0), the fixed frame's position shown.
  b.mobility_not_evaluated = "P5 was not evaluated";
  b.virtual_condition_with_mobility.reset();
  agree(b, 8);

  // A held direction: perpendicularity not evaluated; no opposed pairs; a boundary
  // perpendicular to A (free in location) keeps its clearance.
  b.direction_held = true;
  b.size.two_point_count = 0;
  b.virtual_condition->on_true_position = false;
  agree(b, 7);

  BoreResult bare;
  bare.id = "P9";
  agree(bare, 0);
  bare.not_evaluated = "no points";
  agree(bare, 0);
}

// ---- Decision rules (decide/characteristic.hpp; docs/evaluation.md, "Decision rules").
//
// ISO 14253-1:2017 (clause 5 and its default rule; from memory for the clause numbers): with an
// expanded uncertainty U, conformance is proven when the measured value lies in the
// specification zone reduced by U at the limit, non-conformance when it lies outside the zone
// enlarged by U; in between neither is proven. Simple acceptance compares with the limit alone;
// a guard band g agreed between customer and supplier moves both thresholds by g instead of U
// (ISO/IEC Guide 98-4, JCGM 106:2012, acceptance zones with guard bands; from memory).

namespace {

constexpr double eps = 1e-6;  // far beyond the rounding slack (1e-12), far below U

Characteristic with_u(Characteristic c, double expanded) {
  c.uncertainty = ExpandedUncertainty{expanded, 2.0, "test budget"};
  return c;
}

Characteristic lower_limit(double value, double limit) {
  Characteristic c;
  c.id = "H1/size/lower";
  c.feature = "H1";
  c.value = value;
  c.tolerance = c.allowed = limit;
  c.comparison = Comparison::at_least;
  return c;
}

DecisionRule rule_of(DecisionRuleKind kind) {
  DecisionRule r;
  r.kind = kind;
  return r;
}

}  // namespace

TEST_CASE("ISO 14253-1 default rule: an upper limit at T - U, T and T + U", "[decide][rules]") {
  // T = 0.030 (a position zone), U = 0.004 (k = 2). ISO 14253-1:2017 logic: accept at or below
  // T - U = 0.026, reject above T + U = 0.034, not proven between (both ends of the band included
  // in "not proven" beyond the acceptance limit, the rejection limit itself not proven).
  const DecisionRule iso = rule_of(DecisionRuleKind::iso_14253_1);
  const double T = 0.030, U = 0.004;
  CHECK(decide(with_u(zone(T - U - eps, T), U), iso) == Verdict::conforms);
  CHECK(decide(with_u(zone(T - U, T), U), iso) == Verdict::conforms);
  CHECK(decide(with_u(zone(T - U / 2, T), U), iso) == Verdict::not_proven);
  CHECK(decide(with_u(zone(T, T), U), iso) == Verdict::not_proven);
  CHECK(decide(with_u(zone(T + U / 2, T), U), iso) == Verdict::not_proven);
  CHECK(decide(with_u(zone(T + U, T), U), iso) == Verdict::not_proven);
  CHECK(decide(with_u(zone(T + U + eps, T), U), iso) == Verdict::does_not_conform);
  // The bonus enlarges the limit first (ASME Y14.5-2018; common practice): T + bonus is the
  // effective tolerance U is applied to. 0.030 + 0.005 - 0.004 = 0.031.
  CHECK(decide(with_u(zone(0.031 - eps, T, 0.005), U), iso) == Verdict::conforms);
  CHECK(decide(with_u(zone(0.031 + eps, T, 0.005), U), iso) == Verdict::not_proven);

  Characteristic c = with_u(zone(T, T), U);
  apply_decision(c, iso);
  CHECK(c.verdict == Verdict::not_proven);
  CHECK(c.rule == DecisionRuleKind::iso_14253_1);
  CHECK(c.acceptance_limit == Approx(T - U));
  CHECK(c.rejection_limit == Approx(T + U));
  CHECK(c.rule_note.empty());
}

TEST_CASE("ISO 14253-1 default rule: a lower limit at L + U, L and L - U", "[decide][rules]") {
  // A lower limit of size L = 12.000, U = 0.002: the zone lies above L, so it is reduced to
  // L + U for acceptance and enlarged to L - U for rejection (ISO 14253-1:2017 logic).
  const DecisionRule iso = rule_of(DecisionRuleKind::iso_14253_1);
  const double L = 12.000, U = 0.002;
  CHECK(decide(with_u(lower_limit(L + U + eps, L), U), iso) == Verdict::conforms);
  CHECK(decide(with_u(lower_limit(L + U, L), U), iso) == Verdict::conforms);
  CHECK(decide(with_u(lower_limit(L + U / 2, L), U), iso) == Verdict::not_proven);
  CHECK(decide(with_u(lower_limit(L, L), U), iso) == Verdict::not_proven);
  CHECK(decide(with_u(lower_limit(L - U, L), U), iso) == Verdict::not_proven);
  CHECK(decide(with_u(lower_limit(L - U - eps, L), U), iso) == Verdict::does_not_conform);
  Characteristic c = with_u(lower_limit(L, L), U);
  apply_decision(c, iso);
  CHECK(c.acceptance_limit == Approx(L + U));
  CHECK(c.rejection_limit == Approx(L - U));
}

TEST_CASE("simple acceptance ignores U: only the limit itself decides", "[decide][rules]") {
  // ISO 14253-1:2017 allows simple acceptance when agreed (from memory): conforms up to T,
  // does not conform beyond; never not proven, whatever U is known.
  const DecisionRule simple = rule_of(DecisionRuleKind::simple_acceptance);
  const double T = 0.030, U = 0.004;
  for (double v : {T - U - eps, T - U, T - U / 2, T})
    CHECK(decide(with_u(zone(v, T), U), simple) == Verdict::conforms);
  for (double v : {T + eps, T + U, T + U + eps})
    CHECK(decide(with_u(zone(v, T), U), simple) == Verdict::does_not_conform);
  const double L = 12.000;
  CHECK(decide(with_u(lower_limit(L, L), U), simple) == Verdict::conforms);
  CHECK(decide(with_u(lower_limit(L - eps, L), U), simple) == Verdict::does_not_conform);
  Characteristic c = with_u(zone(T, T), U);
  apply_decision(c, simple);
  CHECK(c.acceptance_limit == T);
  CHECK(c.rejection_limit == T);
  CHECK(c.uncertainty->expanded == U);  // shown, not counted
}

TEST_CASE("guard band: acceptance within T - g, rejection beyond T + g", "[decide][rules]") {
  // An agreed guard band g (JCGM 106:2012, guarded acceptance and rejection; from memory):
  // g replaces U in the thresholds, whatever U is known.
  DecisionRule banded = rule_of(DecisionRuleKind::guard_band);
  const double T = 0.030, g = 0.003;
  banded.guard_band[CharacteristicKind::position] = g;
  banded.guard_band[CharacteristicKind::size] = 0.001;
  CHECK(decide(with_u(zone(T - g - eps, T), 0.004), banded) == Verdict::conforms);
  CHECK(decide(zone(T - g, T), banded) == Verdict::conforms);
  CHECK(decide(zone(T - g + eps, T), banded) == Verdict::not_proven);
  CHECK(decide(zone(T, T), banded) == Verdict::not_proven);
  CHECK(decide(zone(T + g, T), banded) == Verdict::not_proven);
  CHECK(decide(zone(T + g + eps, T), banded) == Verdict::does_not_conform);
  // Lower limit with its kind's band (size: 0.001).
  CHECK(decide(lower_limit(12.001, 12.0), banded) == Verdict::conforms);
  CHECK(decide(lower_limit(12.0005, 12.0), banded) == Verdict::not_proven);
  CHECK(decide(lower_limit(11.999 - eps, 12.0), banded) == Verdict::does_not_conform);

  // A guard band of U is the ISO 14253-1 default rule (ISO 14253-1:2017; from memory): the
  // same verdict everywhere across the band.
  DecisionRule as_u = rule_of(DecisionRuleKind::guard_band);
  const double U = 0.004;
  as_u.guard_band[CharacteristicKind::position] = U;
  for (double v = T - 2 * U; v <= T + 2 * U; v += U / 8)
    CHECK(decide(with_u(zone(v, T), U), as_u) ==
          decide(with_u(zone(v, T), U), rule_of(DecisionRuleKind::iso_14253_1)));

  // A kind without a band falls back to simple acceptance, and says so.
  Characteristic form;
  form.id = "H1/cylindricity";
  form.feature = "H1";
  form.value = form.tolerance = form.allowed = 0.008;
  apply_decision(form, banded);
  CHECK(form.verdict == Verdict::conforms);
  CHECK(form.rule == DecisionRuleKind::simple_acceptance);
  CHECK_THAT(form.rule_note, Catch::Matchers::Contains("no guard band"));
}

TEST_CASE("the ISO rule without a known U falls back to simple acceptance, marked", "[decide][rules]") {
  // docs/evaluation.md: a row decided without U must never read as a guarded decision.
  const DecisionRule iso = rule_of(DecisionRuleKind::iso_14253_1);
  Characteristic on = zone(0.030, 0.030);
  apply_decision(on, iso);
  CHECK(on.verdict == Verdict::conforms);
  CHECK(on.rule == DecisionRuleKind::simple_acceptance);
  CHECK(on.rule_note == "U not evaluated: simple acceptance");
  Characteristic beyond = zone(0.030 + eps, 0.030);
  apply_decision(beyond, iso);
  CHECK(beyond.verdict == Verdict::does_not_conform);
  // A characteristic not evaluated proves nothing under any rule.
  for (DecisionRuleKind kind : {DecisionRuleKind::simple_acceptance, DecisionRuleKind::iso_14253_1,
                                DecisionRuleKind::guard_band}) {
    Characteristic missing = with_u(zone(0.0, 0.030), 0.001);
    missing.not_evaluated = "no points";
    CHECK(decide(missing, rule_of(kind)) == Verdict::not_proven);
  }
}

TEST_CASE("rule words and kinds: names round trip, ids map to kinds", "[decide][rules]") {
  for (DecisionRuleKind kind : {DecisionRuleKind::simple_acceptance, DecisionRuleKind::iso_14253_1,
                                DecisionRuleKind::guard_band}) {
    CHECK(parse_decision_rule_word(decision_rule_word(kind)) == kind);
    CHECK(parse_decision_rule_name(decision_rule_name(kind)) == kind);
  }
  CHECK_FALSE(parse_decision_rule_word("strict"));
  CHECK(decision_rule_word(DecisionRuleKind::iso_14253_1) == "iso-14253-1");
  const auto kind_of = [](const std::string& feature, const std::string& id) {
    Characteristic c;
    c.feature = feature;
    c.id = id;
    return characteristic_kind(c);
  };
  CHECK(kind_of("P2", "P2/position/mobility") == CharacteristicKind::position);
  CHECK(kind_of("P2", "P2/size/lower/two-point") == CharacteristicKind::size);
  CHECK(kind_of("P2", "P2/cylindricity") == CharacteristicKind::form);
  CHECK(kind_of("P2", "P2/virtual-condition") == CharacteristicKind::virtual_condition);
  CHECK(kind_of("A/1", "A/1/perpendicularity") == CharacteristicKind::perpendicularity);
  CHECK_FALSE(kind_of("P2", "P2/flatness"));
}

TEST_CASE("bore characteristics take the rule's stated U per kind", "[decide][rules]") {
  BoreResult b;
  b.id = "P3";
  b.position = position(0.0306, 0.025, 0.0098);  // allowed 0.0348
  b.size.limits = SizeLimits{12.000, 12.018};
  b.size.mating_envelope = 12.0098;
  b.size.minimum_material_envelope = 12.0152;
  b.form.cylindricity = 0.0062;
  b.form.tolerance = 0.008;
  DecisionRule rule = rule_of(DecisionRuleKind::iso_14253_1);
  rule.stated_uncertainty[CharacteristicKind::position] = 0.005;
  rule.stated_uncertainty[CharacteristicKind::size] = 0.0008;
  rule.coverage_factor = 2.5;
  const std::vector<Characteristic> cs = bore_characteristics(b, rule);
  const Characteristic* p = find_characteristic(cs, "P3/position");
  REQUIRE(p);
  REQUIRE(p->uncertainty);
  CHECK(p->uncertainty->expanded == 0.005);
  CHECK(p->uncertainty->coverage_factor == 2.5);
  CHECK_THAT(p->uncertainty->source, Catch::Matchers::Contains("stated budget"));
  // 0.0306 lies between 0.0348 - 0.005 and 0.0348 + 0.005: not proven (ISO 14253-1 logic).
  CHECK(p->verdict == Verdict::not_proven);
  CHECK(p->acceptance_limit == Approx(0.0348 - 0.005));
  const Characteristic* lower = find_characteristic(cs, "P3/size/lower");
  REQUIRE(lower);
  CHECK(lower->verdict == Verdict::conforms);  // 12.0098 >= 12.0008
  const Characteristic* form = find_characteristic(cs, "P3/cylindricity");
  REQUIRE(form);
  CHECK_FALSE(form->uncertainty);  // no U stated for form: simple acceptance, marked
  CHECK(form->rule == DecisionRuleKind::simple_acceptance);
  CHECK_FALSE(form->rule_note.empty());
  CHECK(combine(cs) == Verdict::not_proven);
}

TEST_CASE("a bore's own stated U replaces the budget's for that bore", "[decide][rules]") {
  BoreResult b;
  b.id = "P3";
  b.position = position(0.0306, 0.025, 0.0098);  // allowed 0.0348
  PlanBore plan;
  plan.id = "P3";
  plan.uncertainty[CharacteristicKind::position] = 0.003;
  DecisionRule rule = rule_of(DecisionRuleKind::iso_14253_1);
  rule.stated_uncertainty[CharacteristicKind::position] = 0.005;
  // Budget U 0.005: 0.0306 > 0.0348 - 0.005, not proven; the bore's U 0.003: 0.0306 <= 0.0318,
  // conforms (ISO 14253-1:2017 logic).
  CHECK(find_characteristic(bore_characteristics(b, rule), "P3/position")->verdict ==
        Verdict::not_proven);
  const std::vector<Characteristic> own = bore_characteristics(b, plan, rule);
  const Characteristic* p = find_characteristic(own, "P3/position");
  REQUIRE(p);
  REQUIRE(p->uncertainty);
  CHECK(p->uncertainty->expanded == 0.003);
  CHECK(p->uncertainty->source == "stated budget (bore P3)");
  CHECK(p->verdict == Verdict::conforms);
}
