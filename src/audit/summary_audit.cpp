// The audit of another system's summary (audit/summary_audit.hpp). Values and findings only:
// no IO, no printing. docs/evaluation.md ("Auditing another system's summary") gives the rules.
#include "cylzone/audit/summary_audit.hpp"

#include <algorithm>
#include <cmath>
#include <sstream>
#include <stdexcept>

#include "cylzone/core/errors.hpp"
#include "cylzone/decide/bore_characteristics.hpp"
#include "cylzone/evaluate/axis_zone.hpp"

namespace cylzone {
namespace {

/// Lengths (mm) as text in a report's unit: 4 decimals for mm, 5 for inch, as the reports print
/// them, so a reason line reads in the plan's unit.
struct LengthText {
  LengthUnit unit = LengthUnit::millimetre;
  std::string operator()(double mm) const {
    std::ostringstream out;
    out.setf(std::ios::fixed);
    out.precision(unit == LengthUnit::inch ? 5 : 4);
    out << mm / millimetres_per(unit);
    return out.str();
  }
};

/// Heights of the bore's own depth: the plan's ends, else the probed extent.
std::pair<double, double> depth_range(const BoreResult& bore, const PlanBore& plan) {
  return {plan.depth_top.value_or(bore.probed_top), plan.depth_bottom.value_or(bore.probed_bottom)};
}

PlaneFigures figures_at(const BoreResult& bore, PlaneLabel label, double height) {
  const AxisDeviation d = bore.axis_in_zone.at(height);
  return {label, height, d.offset, d.diameter()};
}

/// A reported centre in zone coordinates: deviations are taken as they are; coordinates (x, y)
/// at the stated z (else on A) are moved into the bore's zone frame.
Eigen::Vector2d reported_offset(const SummaryCentre& c, bool deviations, const BoreResult& bore) {
  if (deviations) return {c.u.value, c.v.value};
  const Eigen::Vector3d p(c.u.value, c.v.value, c.z ? c.z->value : 0.0);
  return (bore.zone.basis.transpose() * (p - bore.zone.origin)).head<2>();
}

ReportedCentre compare_centre(const SummaryCentre& c, std::size_t line, bool deviations,
                              const BoreResult& bore, const PlanBore& plan, double tolerance) {
  ReportedCentre r;
  r.line = line;
  r.offset = reported_offset(c, deviations, bore);
  r.rounding = {c.u.rounding, c.v.rounding};
  r.position = single_plane_position(r.offset.x(), r.offset.y());
  if (c.z) {
    r.height = c.z->value;
    r.cylzone.push_back(figures_at(bore, PlaneLabel::stated, c.z->value));
  } else {
    const auto [top, bottom] = depth_range(bore, plan);
    const double centroid =
        bore.zone.basis.col(2).dot(bore.least_squares.axis.point - bore.zone.origin);
    r.cylzone.push_back(figures_at(bore, PlaneLabel::mouth, top));
    r.cylzone.push_back(figures_at(bore, PlaneLabel::centroid, centroid));
    r.cylzone.push_back(figures_at(bore, PlaneLabel::mid_depth, 0.5 * (top + bottom)));
  }
  // The plane compared: the stated one, else the one the summary agrees with best (its plane
  // is unknown; the closest is the fairest reading of it). A straight bore gives all three
  // alike: a later plane is taken only when closer by more than worst_tie_margin, so rounding
  // (and with it the part's placement on the machine) never picks the label.
  r.compared = 0;
  r.discrepancy = 2.0 * (r.offset - r.cylzone[0].offset).norm();
  for (std::size_t i = 1; i < r.cylzone.size(); ++i) {
    const double d = 2.0 * (r.offset - r.cylzone[i].offset).norm();
    if (d < r.discrepancy - worst_tie_margin) {
      r.discrepancy = d;
      r.compared = i;
    }
  }
  r.discrepancy_allowed = tolerance + 2.0 * r.rounding.norm();
  return r;
}

/// The characteristic that decides the bore's position: after the datum mobility when the
/// reference lets the frame move, else in the frame as built.
const Characteristic* deciding_position(const std::vector<Characteristic>& cs,
                                        const std::string& id) {
  if (const Characteristic* m = find_characteristic(cs, id + "/position/mobility"))
    if (m->decisive) return m;
  return find_characteristic(cs, id + "/position");
}

void audit_bore(BoreAudit& a, const std::vector<const SummaryRow*>& rows,
                const SummaryTable& summary, const BoreResult& bore, const PlanBore& plan,
                const AuditOptions& options, const LengthText& mm) {
  // ---- the summary's own figures
  for (const SummaryRow* row : rows) {
    if (row->position) {
      const bool larger = !a.reported_position || row->position->value > *a.reported_position;
      if (larger) {
        a.reported_position = row->position->value;
        a.position_rounding = row->position->rounding;
      }
    }
    if (row->diameter && !a.reported_diameter) a.reported_diameter = row->diameter->value;
    if (row->conforms) a.reported_conforms = a.reported_conforms.value_or(true) && *row->conforms;
    if (!row->verdict_text.empty())
      a.verdict_text += (a.verdict_text.empty() ? "" : " / ") + row->verdict_text;
  }
  if (!bore.evaluated()) {
    a.not_evaluated = bore.not_evaluated;
    a.finding = SummaryFinding::not_decided;
    a.reason = "cylzone could not evaluate the bore: " + bore.not_evaluated;
    return;
  }
  for (const SummaryRow* row : rows)
    for (const SummaryCentre& c : row->centres)
      a.centres.push_back(compare_centre(c, row->line, summary.deviations, bore, plan,
                                         options.same_plane_tolerance));
  if (a.centres.size() > 2)
    throw InputError(summary.file.string(), rows.back()->line,
                     "bore " + quoted_for_message(a.id) + " has " +
                         std::to_string(a.centres.size()) +
                         " reported planes: a summary gives one plane per bore, or two depths");
  if (a.centres.size() == 2) {
    const ReportedCentre &p = a.centres[0], &q = a.centres[1];
    if (!p.height || !q.height)
      throw InputError(
          summary.file.string(), q.line,
          "bore " + quoted_for_message(a.id) + " is given at two planes: each needs its height z");
    if (std::fabs(*p.height - *q.height) < 1e-9)
      throw InputError(summary.file.string(), q.line,
                       "bore " + quoted_for_message(a.id) + " is given twice at z = " +
                           LengthText{summary.unit}(*p.height) + " (lines " +
                           std::to_string(p.line) + " and " + std::to_string(q.line) + ")");
  }
  // The summary's arithmetic, within its printed rounding (summary.hpp).
  for (const ReportedCentre& c : a.centres) {
    if (c.position >= a.recomputed_position) {
      a.recomputed_position = c.position;
      a.consistency_allowance =
          consistency_allowance(a.position_rounding, c.rounding.x(), c.rounding.y());
    }
  }
  if (a.reported_position)
    a.internally_consistent = std::fabs(*a.reported_position - a.recomputed_position) <=
                              a.consistency_allowance + zone_rounding_slack;

  // ---- cylzone over the full depth
  const std::vector<Characteristic> cs = bore_characteristics(bore, plan, options.rule);
  const Characteristic* pos = deciding_position(cs, bore.id);
  a.least_squares_diameter = bore.least_squares.diameter();
  a.mating_envelope = bore.mating_envelope.diameter();
  if (const Characteristic* perp = find_characteristic(cs, bore.id + "/perpendicularity");
      perp && perp->not_evaluated.empty()) {
    a.perpendicularity = perp->value;
    a.perpendicularity_allowed = perp->allowed;
    a.perpendicularity_verdict = perp->verdict;
  }
  if (!pos || !bore.position) {
    a.finding = SummaryFinding::not_decided;
    a.reason = "the plan gives bore " + a.id + " no position tolerance: nothing to compare";
    return;
  }
  const PositionResult& p = (bore.position_with_mobility && pos->id != bore.id + "/position")
                                ? *bore.position_with_mobility
                                : *bore.position;
  a.position_id = pos->id;
  a.position = pos->value;
  a.allowed = pos->allowed;
  a.position_verdict = pos->verdict;
  a.range_top = p.range_top;
  a.range_bottom = p.range_bottom;
  a.leaves_zone_at = p.leaves_zone_at;
  if (a.centres.size() == 2) {
    // The line through the two reported centres, over cylzone's evaluated range.
    const ReportedCentre &c1 = a.centres[0], &c2 = a.centres[1];
    StraightAxis line;
    line.slope = (c2.offset - c1.offset) / (*c2.height - *c1.height);
    line.at_zero = c1.offset - *c1.height * line.slope;
    a.two_depth_position = position_over_range(line, p.range_top, p.range_bottom);
  }
  if (!a.reported_conforms) {
    // No verdict printed: the summary's own position (else its 2D position) against the zone
    // cylzone allows, bonus included.
    a.verdict_implied = true;
    a.reported_conforms =
        a.reported_position.value_or(a.recomputed_position) <= a.allowed + zone_rounding_slack;
  }

  // ---- the finding
  bool same_plane = true;
  const ReportedCentre* worst = &a.centres.front();
  for (const ReportedCentre& c : a.centres) {
    if (c.discrepancy - c.discrepancy_allowed > worst->discrepancy - worst->discrepancy_allowed)
      worst = &c;
    same_plane &= c.discrepancy <= c.discrepancy_allowed;
  }
  const PlaneFigures& at = worst->cylzone[worst->compared];
  const std::string plane = std::string(plane_label_name(at.label)) + " z = " + mm(at.height);
  const bool summary_ok = *a.reported_conforms;
  const bool cylzone_decided = a.position_verdict != Verdict::not_proven;
  const bool cylzone_ok = a.position_verdict == Verdict::conforms;
  const bool own_tilt = a.two_depth_position && *a.two_depth_position > a.allowed;
  if (!a.internally_consistent) {
    a.finding = SummaryFinding::internally_inconsistent;
    a.reason = "its position " + mm(*a.reported_position) +
               " is not 2 sqrt(dx^2 + dy^2) = " + mm(a.recomputed_position) +
               " of its own deviations (rounding allows " + mm(a.consistency_allowance) + ")";
  } else if (!same_plane) {
    a.finding = SummaryFinding::disagrees_at_same_plane;
    a.reason = "its centre is " + mm(worst->discrepancy) +
               " (as a diameter) from cylzone's at the " + plane + ", beyond the " +
               mm(worst->discrepancy_allowed) + " allowed";
  } else if (!cylzone_decided) {
    a.finding = SummaryFinding::not_decided;
    a.reason = "cylzone's full-depth position is not proven either way";
  } else if (summary_ok && (!cylzone_ok || own_tilt)) {
    a.finding = SummaryFinding::blind_to_tilt;
    a.reason = "agrees at the " + plane + " (" + mm(worst->discrepancy) +
               " apart), but over the full depth the position is " +
               mm(own_tilt && cylzone_ok ? *a.two_depth_position : a.position) + " against " +
               mm(a.allowed) + " allowed" +
               (a.leaves_zone_at && !cylzone_ok
                    ? "; the axis leaves its zone at z = " + mm(*a.leaves_zone_at)
                    : std::string()) +
               (own_tilt ? "; the summary's own two depths give " + mm(*a.two_depth_position)
                         : std::string());
  } else if (summary_ok != cylzone_ok) {
    a.finding = SummaryFinding::verdict_differs;
    a.reason = "agrees at the " + plane + ", but its verdict (" +
               (summary_ok ? "conforms" : "does not conform") + ") is not the full-depth one (" +
               std::string(verdict_name(a.position_verdict)) + ", " + mm(a.position) + " against " +
               mm(a.allowed) + "): a different tolerance, bonus or reference";
  } else {
    a.finding = SummaryFinding::consistent;
    a.reason = "agrees at the " + plane + " (" + mm(worst->discrepancy) +
               " apart) and with the full-depth verdict";
  }
  a.overturned =
      a.finding != SummaryFinding::consistent && a.finding != SummaryFinding::not_decided;
}

/// The likeliest common cause of the same-plane differences (docs/evaluation.md): an origin
/// shift when one vector explains every bore's difference within its allowance, else a rotation
/// about A's normal through B's axis (differences theta x (-y, x) of the true positions, theta
/// by least squares) when that does, else a different association of A or fit. Each model needs
/// two compared bores at least.
void explain(AuditResult& result, const PartPlan& plan, const LengthText& mm) {
  struct Sample {
    Eigen::Vector2d difference, location;
    double allowed;
  };
  std::vector<Sample> samples;
  bool any_disagrees = false;
  for (const BoreAudit& a : result.bores) {
    if (a.centres.empty()) continue;
    any_disagrees |= a.finding == SummaryFinding::disagrees_at_same_plane;
    const auto it = std::find_if(plan.bores.begin(), plan.bores.end(),
                                 [&](const PlanBore& b) { return b.id == a.id; });
    for (const ReportedCentre& c : a.centres)
      samples.push_back(
          {c.offset - c.cylzone[c.compared].offset, it->basic_location, c.discrepancy_allowed});
  }
  if (!any_disagrees) {
    result.explanation = FrameExplanation::none;
    result.explanation_text = "no bore disagrees at the same plane";
    return;
  }
  const auto explains = [&](auto model) {
    for (const Sample& s : samples)
      if (2.0 * (s.difference - model(s)).norm() > s.allowed) return false;
    return true;
  };
  if (samples.size() >= 2) {
    Eigen::Vector2d mean = Eigen::Vector2d::Zero();
    for (const Sample& s : samples) mean += s.difference;
    mean /= static_cast<double>(samples.size());
    if (explains([&](const Sample&) -> Eigen::Vector2d { return mean; })) {
      result.explanation = FrameExplanation::origin_shift;
      result.shift = mean;
      result.explanation_text = "every bore is off by one common vector (" + mm(mean.x()) + ", " +
                                mm(mean.y()) + "): a shift of the origin (datum B's axis)";
      return;
    }
    double num = 0.0, den = 0.0;
    for (const Sample& s : samples) {
      const Eigen::Vector2d j(-s.location.y(), s.location.x());
      num += s.difference.dot(j);
      den += j.squaredNorm();
    }
    if (den > 0.0) {
      const double theta = num / den;
      // The model returns a plain vector: an Eigen expression would outlive its operands.
      if (explains([&](const Sample& s) -> Eigen::Vector2d {
            return Eigen::Vector2d(-s.location.y(), s.location.x()) * theta;
          })) {
        result.explanation = FrameExplanation::rotation_about_a;
        result.rotation_rad = theta;
        std::ostringstream t;
        t.setf(std::ios::fixed);
        t.precision(1);
        t << theta * 1e6;
        result.explanation_text =
            "the differences grow with the distance from B at right angles "
            "to it: a rotation about A of " +
            t.str() + " urad (clocking by C)";
        return;
      }
    }
  }
  result.explanation = FrameExplanation::association_or_fit;
  result.explanation_text = samples.size() < 2
                                ? "one bore compared: a shift, a rotation and a different "
                                  "association of A or fit cannot be told apart"
                                : "neither a common shift nor a rotation about A explains the "
                                  "differences: a different association of A or fit of the bores";
}

}  // namespace

std::string_view summary_finding_name(SummaryFinding f) noexcept {
  switch (f) {
    case SummaryFinding::consistent:
      return "consistent";
    case SummaryFinding::internally_inconsistent:
      return "internally inconsistent";
    case SummaryFinding::disagrees_at_same_plane:
      return "disagrees at the same plane";
    case SummaryFinding::blind_to_tilt:
      return "blind to tilt";
    case SummaryFinding::verdict_differs:
      return "verdict differs";
    case SummaryFinding::not_decided:
      return "not decided";
  }
  return "not decided";
}

std::string_view plane_label_name(PlaneLabel label) noexcept {
  switch (label) {
    case PlaneLabel::stated:
      return "stated plane";
    case PlaneLabel::mouth:
      return "mouth";
    case PlaneLabel::centroid:
      return "probed centroid";
    case PlaneLabel::mid_depth:
      return "mid-depth";
  }
  return "stated plane";
}

std::string_view frame_explanation_name(FrameExplanation e) noexcept {
  switch (e) {
    case FrameExplanation::none:
      return "none";
    case FrameExplanation::origin_shift:
      return "origin shift";
    case FrameExplanation::rotation_about_a:
      return "rotation about A";
    case FrameExplanation::association_or_fit:
      return "different association or fit";
  }
  return "none";
}

bool AuditResult::any_overturned() const noexcept {
  return std::any_of(bores.begin(), bores.end(), [](const BoreAudit& a) { return a.overturned; });
}

bool AuditResult::any_not_decided() const noexcept {
  return std::any_of(bores.begin(), bores.end(),
                     [](const BoreAudit& a) { return a.finding == SummaryFinding::not_decided; });
}

AuditResult audit_summary(const PartPlan& plan, const PartEvaluation& evaluation,
                          const SummaryTable& summary, const AuditOptions& options) {
  if (evaluation.bores.size() != plan.bores.size())
    throw std::invalid_argument("audit_summary: the evaluation does not match the plan's bores");
  if (!(options.same_plane_tolerance > 0.0) || !std::isfinite(options.same_plane_tolerance))
    throw std::invalid_argument("audit_summary: same_plane_tolerance must be above 0");
  const LengthText mm{plan.unit};
  AuditResult result;
  result.same_plane_tolerance = options.same_plane_tolerance;
  std::vector<std::vector<const SummaryRow*>> rows_of(plan.bores.size());
  for (const SummaryRow& row : summary.rows) {
    const auto it = std::find_if(plan.bores.begin(), plan.bores.end(),
                                 [&](const PlanBore& b) { return b.id == row.id; });
    if (it == plan.bores.end())
      result.unmatched_rows.push_back({row.line, row.id});
    else
      rows_of[static_cast<std::size_t>(it - plan.bores.begin())].push_back(&row);
  }
  for (std::size_t i = 0; i < plan.bores.size(); ++i) {
    if (rows_of[i].empty()) {
      result.unmatched_bores.push_back(plan.bores[i].id);
      continue;
    }
    BoreAudit a;
    a.id = plan.bores[i].id;
    audit_bore(a, rows_of[i], summary, evaluation.bores[i], plan.bores[i], options, mm);
    result.bores.push_back(std::move(a));
  }
  explain(result, plan, mm);
  return result;
}

}  // namespace cylzone
