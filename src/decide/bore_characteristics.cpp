// A bore's characteristics, built from its evaluated values and decided by the one decision
// function (decide/characteristic.hpp). The table, CSV and JSON reports print these.
#include "cylzone/decide/bore_characteristics.hpp"

#include <stdexcept>

#include "cylzone/evaluate/material_condition.hpp"
#include "detail/fit_support.hpp"

namespace cylzone {
namespace {

std::string mm(double value) { return detail::format_number(value, 4); }

Characteristic make(const BoreResult& bore, std::string kind, std::string name,
                    std::string reference, double value, double tolerance, double bonus,
                    double allowed, Comparison comparison, bool decisive = true) {
  Characteristic c;
  c.id = bore.id + "/" + kind;
  c.feature = bore.id;
  c.name = std::move(name);
  c.reference = std::move(reference);
  c.value = value;
  c.tolerance = tolerance;
  c.bonus = bonus;
  c.allowed = allowed;
  c.comparison = comparison;
  c.decisive = decisive;
  return c;
}

Characteristic position_characteristic(const BoreResult& bore, const PositionResult& p,
                                       std::string kind, std::string name, bool decisive) {
  return make(bore, std::move(kind), std::move(name), tolerance_reference(p.spec), p.value,
              p.spec.tolerance, p.bonus, p.allowed, Comparison::at_most, decisive);
}

/// The stated uncertainty attached to every characteristic of its kind that has none (the
/// bore's own, else the rule's budget), then each decided by the one decision function.
void decide_all(std::vector<Characteristic>& out, const DecisionRule& rule,
                const PlanBore* plan = nullptr) {
  for (Characteristic& c : out) {
    const std::optional<CharacteristicKind> kind = characteristic_kind(c);
    if (!c.uncertainty && kind) {
      if (plan && plan->uncertainty[*kind])
        c.uncertainty = ExpandedUncertainty{*plan->uncertainty[*kind], rule.coverage_factor,
                                            "stated budget (bore " + plan->id + ")"};
      else if (rule.stated_uncertainty[*kind])
        c.uncertainty = ExpandedUncertainty{*rule.stated_uncertainty[*kind], rule.coverage_factor,
                                            "stated budget ([decision].uncertainty)"};
    }
    apply_decision(c, rule);
  }
}

/// The rows of an evaluated bore, not yet decided.
std::vector<Characteristic> evaluated_rows(const BoreResult& b);

}  // namespace

std::string tolerance_reference(const PlanTolerance& spec) {
  std::string text = datum_references_text(spec.datums);
  if (spec.condition != MaterialCondition::rfs)
    text += " " + std::string(condition_name(spec.condition));
  if (spec.projected_height) text += " projected";
  return text;
}

std::vector<Characteristic> bore_characteristics(const BoreResult& b, const DecisionRule& rule) {
  if (!b.evaluated())
    throw std::invalid_argument("bore_characteristics: bore " + b.id +
                                " was not evaluated; pass its plan to list its characteristics");
  std::vector<Characteristic> out = evaluated_rows(b);
  decide_all(out, rule);
  return out;
}

namespace {

/// Every row of an evaluated bore, in the order of the header's table, given to `emit` as
/// (kind, value, not_evaluated, build): the kind (the id after "<bore>/", a literal), the value
/// the row reports, why it is not evaluated (empty when it is) and a callable building the
/// row's Characteristic with its texts. The one list behind evaluated_rows (the reports) and
/// characteristic_figures (the Monte Carlo trials, which read the values only and so never
/// call `build`: no strings per trial).
template <class Emit>
void each_evaluated_row(const BoreResult& b, Emit&& emit) {
  if (b.position) {
    const auto name = [&b](const char* suffix) {
      return std::string(b.position->projected ? "position (projected zone)" : "position") +
             suffix;
    };
    if (!b.mobility_not_evaluated.empty()) {
      // The pattern's simultaneous requirement cannot be evaluated without every member: the
      // fixed frame's figure is shown, the mobility row is not proven.
      emit("position", b.position->value, std::string_view(), [&] {
        return position_characteristic(b, *b.position, "position", name(", frame fixed"),
                                       false);
      });
      emit("position/mobility", 0.0, std::string_view(b.mobility_not_evaluated), [&] {
        return position_characteristic(b, *b.position, "position/mobility",
                                       name(", datum mobility"), true);
      });
    } else if (b.position_with_mobility) {
      emit("position", b.position->value, std::string_view(), [&] {
        return position_characteristic(b, *b.position, "position", name(", frame fixed"),
                                       false);
      });
      emit("position/mobility", b.position_with_mobility->value, std::string_view(), [&] {
        return position_characteristic(b, *b.position_with_mobility, "position/mobility",
                                       name(", datum mobility"), true);
      });
    } else {
      emit("position", b.position->value, std::string_view(), [&] {
        return position_characteristic(b, *b.position, "position", name(""), true);
      });
    }
  }
  if (b.perpendicularity) {
    const PerpendicularityResult& p = *b.perpendicularity;
    // An axis held at the nominal direction is perpendicular to A by construction: its
    // perpendicularity would restate the plan, not measure the part.
    emit("perpendicularity", b.direction_held ? 0.0 : p.value,
         b.direction_held ? direction_held_reason : std::string_view(), [&] {
           std::string reference = "A";
           if (p.spec.condition != MaterialCondition::rfs)
             reference += " " + std::string(condition_name(p.spec.condition));
           return make(b, "perpendicularity", "perpendicularity", reference, p.value,
                       p.spec.tolerance, p.bonus, p.allowed, Comparison::at_most);
         });
  }
  if (b.size.limits) {
    const SizeLimits& l = *b.size.limits;
    // Rule #1 (ASME Y14.5-2018): the envelope of perfect form at MMC must fit, and every actual
    // local size must lie within the limits.
    emit("size/lower", b.size.mating_envelope, std::string_view(), [&] {
      return make(b, "size/lower", "size, mating envelope", "lower limit",
                  b.size.mating_envelope, l.lower, 0.0, l.lower, Comparison::at_least);
    });
    if (b.size.two_point_count > 0) {
      emit("size/lower/two-point", b.size.two_point_min, std::string_view(), [&] {
        return make(b, "size/lower/two-point", "size, smallest two-point", "lower limit",
                    b.size.two_point_min, l.lower, 0.0, l.lower, Comparison::at_least);
      });
      emit("size/upper", b.size.two_point_max, std::string_view(), [&] {
        return make(b, "size/upper", "size, largest two-point", "upper limit",
                    b.size.two_point_max, l.upper, 0.0, l.upper, Comparison::at_most);
      });
    } else {
      emit("size/upper", b.size.minimum_material_envelope, std::string_view(), [&] {
        return make(b, "size/upper", "size, minimum material envelope", "upper limit",
                    b.size.minimum_material_envelope, l.upper, 0.0, l.upper,
                    Comparison::at_most);
      });
    }
  }
  if (b.form.tolerance)
    emit("cylindricity", b.form.cylindricity, std::string_view(), [&] {
      return make(b, "cylindricity", "cylindricity", "", b.form.cylindricity, *b.form.tolerance,
                  0.0, *b.form.tolerance, Comparison::at_most);
    });
  if (b.virtual_condition) {
    // With datum mobility the boundary decides after its own best frame motion (one row, the
    // same id: the fixed frame's figure would depend on how the part sat on the machine when
    // the reference leaves a degree of freedom free); boundary_reason() says which motion.
    const bool moved = b.virtual_condition_with_mobility.has_value();
    const VirtualConditionResult& v = moved ? *b.virtual_condition_with_mobility
                                            : *b.virtual_condition;
    // A pattern with a member not evaluated has no shared motion for its boundaries either:
    // the fixed frame's clearance would depend on how the part sat on the machine.
    const bool unshared = v.on_true_position && !b.mobility_not_evaluated.empty();
    emit("virtual-condition", unshared ? 0.0 : v.clearance,
         unshared ? std::string_view(b.mobility_not_evaluated) : std::string_view(), [&] {
           return make(b, "virtual-condition", "virtual condition",
                       moved ? "true position, moved"
                             : v.on_true_position ? "on true position" : "perpendicular to A",
                       v.clearance, v.boundary, 0.0, v.boundary,
                       v.condition == MaterialCondition::lmc ? Comparison::at_most
                                                             : Comparison::at_least);
         });
  }
}

std::vector<Characteristic> evaluated_rows(const BoreResult& b) {
  std::vector<Characteristic> out;
  each_evaluated_row(b, [&out](std::string_view, double value, std::string_view not_evaluated,
                               const auto& build) {
    out.push_back(build());
    if (!not_evaluated.empty()) {
      out.back().value = value;
      out.back().not_evaluated = std::string(not_evaluated);
    }
  });
  return out;
}

}  // namespace

std::vector<Characteristic> bore_characteristics(const BoreResult& b, const PlanBore& plan,
                                                 const DecisionRule& rule) {
  if (b.evaluated()) {
    std::vector<Characteristic> out = evaluated_rows(b);
    decide_all(out, rule, &plan);
    return out;
  }
  // Not evaluated: one row per characteristic the plan asks for, with the ids an evaluated
  // bore would have (the two-point lower-limit row depends on the points and is left out),
  // each not proven with the reason. Tolerances and limits come from the plan; no bonus is
  // claimed.
  std::vector<Characteristic> out;
  const auto add = [&](std::string kind, std::string name, std::string reference,
                       double tolerance, Comparison comparison, bool decisive = true) {
    Characteristic c = make(b, std::move(kind), std::move(name), std::move(reference), 0.0,
                            tolerance, 0.0, tolerance, comparison, decisive);
    c.not_evaluated = b.not_evaluated;
    out.push_back(std::move(c));
  };
  if (plan.position) {
    const std::string name = plan.position->projected_height ? "position (projected zone)"
                                                             : "position";
    const std::string reference = tolerance_reference(*plan.position);
    if (!b.mobility_reason.empty()) {
      add("position", name + ", frame fixed", reference, plan.position->tolerance,
          Comparison::at_most, false);
      add("position/mobility", name + ", datum mobility", reference, plan.position->tolerance,
          Comparison::at_most);
    } else {
      add("position", name, reference, plan.position->tolerance, Comparison::at_most);
    }
  }
  if (plan.perpendicularity) {
    std::string reference = "A";
    if (plan.perpendicularity->condition != MaterialCondition::rfs)
      reference += " " + std::string(condition_name(plan.perpendicularity->condition));
    add("perpendicularity", "perpendicularity", reference, plan.perpendicularity->tolerance,
        Comparison::at_most);
  }
  if (plan.size) {
    add("size/lower", "size, mating envelope", "lower limit", plan.size->lower,
        Comparison::at_least);
    add("size/upper", "size, largest two-point", "upper limit", plan.size->upper,
        Comparison::at_most);
  }
  if (plan.cylindricity)
    add("cylindricity", "cylindricity", "", *plan.cylindricity, Comparison::at_most);
  const auto modified = [](const std::optional<PlanTolerance>& t) {
    return t && t->condition != MaterialCondition::rfs;
  };
  if (plan.size && (modified(plan.position) || modified(plan.perpendicularity))) {
    const PlanTolerance& spec = modified(plan.position) ? *plan.position : *plan.perpendicularity;
    add("virtual-condition", "virtual condition",
        modified(plan.position) ? "on true position" : "perpendicular to A",
        virtual_condition(spec.condition, FeatureKind::bore, *plan.size, spec.tolerance),
        spec.condition == MaterialCondition::lmc ? Comparison::at_most : Comparison::at_least);
  }
  decide_all(out, rule, &plan);
  return out;
}

void characteristic_figures(const BoreResult& bore, std::vector<CharacteristicFigure>& out) {
  out.clear();
  if (!bore.evaluated()) return;
  each_evaluated_row(bore, [&out](std::string_view kind, double value,
                                  std::string_view not_evaluated, const auto&) {
    out.push_back(CharacteristicFigure{kind, value, not_evaluated.empty()});
  });
}

std::string boundary_reason(const BoreResult& bore) {
  const bool moved = bore.virtual_condition_with_mobility.has_value();
  if (!bore.virtual_condition) return "";
  const VirtualConditionResult& v =
      moved ? *bore.virtual_condition_with_mobility : *bore.virtual_condition;
  std::string text = "clearance from " + v.basis;
  if (v.motion)
    text += "; after the frame motion that best clears the pattern's boundaries: shift (" +
            mm(v.motion->shift.x()) + ", " + mm(v.motion->shift.y()) + ") mm, rotation " +
            detail::format_number(v.motion->rotation_rad, 8) + " rad (" + v.motion_reason + ")";
  return text;
}

const Characteristic* find_characteristic(const std::vector<Characteristic>& characteristics,
                                          std::string_view id) noexcept {
  for (const Characteristic& c : characteristics)
    if (c.id == id) return &c;
  return nullptr;
}

Verdict feature_verdict(const std::vector<Characteristic>& characteristics,
                        std::string_view feature) {
  std::vector<Characteristic> own;
  for (const Characteristic& c : characteristics)
    if (c.feature == feature) own.push_back(c);
  return combine(own);
}

std::string size_reason(const std::vector<Characteristic>& characteristics,
                        std::string_view feature) {
  std::string reason;
  for (const Characteristic& c : characteristics) {
    if (c.feature != feature || c.verdict != Verdict::does_not_conform) continue;
    const std::string_view kind = std::string_view(c.id).substr(feature.size() + 1);
    std::string what;
    if (kind == "size/lower")
      what = "actual mating envelope " + mm(c.value) + " is below the lower limit ";
    else if (kind == "size/lower/two-point")
      what = "smallest two-point size " + mm(c.value) + " is below the lower limit ";
    else if (kind == "size/upper")
      what = (c.name == "size, largest two-point" ? "largest two-point size "
                                                  : "minimum material envelope ") +
             mm(c.value) + " exceeds the upper limit ";
    else
      continue;
    reason += (reason.empty() ? "" : "; ") + what + mm(c.tolerance);
  }
  return reason;
}

}  // namespace cylzone
