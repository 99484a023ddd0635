// The main job, end to end: load (part_inputs.cpp) -> evaluate_part (prepare, datum frame,
// every bore, datum mobility) -> sensitivity to datum A's association -> decide. Only
// orchestration lives here; every figure is computed by the module that owns it, and nothing
// below load_part_inputs reads a file.
#include "cylzone/check/part_check.hpp"

#include <algorithm>
#include <map>
#include <memory>
#include <stdexcept>
#include <string>
#include <utility>

#include "cylzone/check/plausibility.hpp"
#include "cylzone/decide/bore_characteristics.hpp"
#include "cylzone/evaluate/datum_mobility.hpp"
#include "cylzone/core/errors.hpp"
#include "cylzone/fit/fit_plane.hpp"
#include "cylzone/prepare/prepare.hpp"
#include "detail/fit_support.hpp"
#include "detail/parallel.hpp"
#include "check/detail/frame_points.hpp"

namespace cylzone {
namespace {

/// Runs `step`, prefixing any FitError with the feature it concerns.
template <typename Step>
auto for_feature(const std::string& feature, Step&& step) -> decltype(step()) {
  try {
    return step();
  } catch (const FitError& e) {
    const std::string what = e.what();
    if (what.rfind(feature + ":", 0) == 0) throw;  // already named
    throw FitError(feature + ": " + what);
  }
}

/// The reason a bore is not evaluated, from the FitError of its fits or its evaluation: one
/// line naming the bore. When the points cannot fix the axis direction (one probing level) and
/// the plan lets it be fitted, the reason names the plan key that holds it at the nominal one.
std::string not_evaluated_reason(const PlanBore& bore, const std::string& what) {
  const std::string named = "bore " + bore.id + ":";
  std::string reason = what.rfind(named, 0) == 0 ? what : named + " " + what;
  for (char& c : reason)
    if (c == '\n' || c == '\r') c = ' ';
  if (bore.axis_direction != AxisDirection::fitted ||
      reason.find("axis direction cannot be determined") == std::string::npos)
    return reason;
  // A derived median line has no single direction to hold (validate_plan refuses the key
  // with it): the advice names the axis methods that take it.
  if (bore.axis == BoreAxisMethod::median_line)
    return reason + "; a derived median line needs sections at two levels or more: to evaluate "
                    "its position on an axis held at the nominal direction, set axis = "
                    "\"least-squares\" (or \"mating-envelope\") and axis_direction = "
                    "\"nominal\" for bore " + bore.id +
           " in the plan (perpendicularity is then not evaluated)";
  return reason + "; to evaluate its position on an axis held at the nominal direction, set "
                  "axis_direction = \"nominal\" for bore " + bore.id +
         " in the plan (perpendicularity is then not evaluated)";
}

/// Bores sharing one datum reference (same datums, same boundaries) form one pattern that moves
/// together when the reference leaves the frame mobile (simultaneous requirement).
std::map<std::string, std::vector<std::size_t>> patterns_by_reference(const PartPlan& plan) {
  std::map<std::string, std::vector<std::size_t>> groups;
  for (std::size_t i = 0; i < plan.bores.size(); ++i)
    if (plan.bores[i].position)
      groups[datum_references_text(plan.bores[i].position->datums)].push_back(i);
  return groups;
}

/// Applies the best allowed frame motion to every pattern of `bores` whose reference leaves the
/// frame mobile. Returns nothing; fills position_with_mobility, mobility_motion, reason, and
/// with `boundaries` the virtual condition boundaries' own best motion
/// (virtual_condition_with_mobility).
void apply_mobility(const PartPlan& plan, const DatumFrameResult& frame,
                    std::vector<BoreResult>& bores, const MobilityOptions& options,
                    bool boundaries) {
  for (const auto& [reference, members] : patterns_by_reference(plan)) {
    const PlanDatum* c = plan.datum('C');
    const FrameMobility mobility = mobility_of(plan.bores[members.front()].position->datums,
                                               frame, c ? c->basic_location : std::nullopt);
    if (!mobility.any()) continue;
    // A simultaneous requirement needs every member: with one not evaluated, the shared motion
    // cannot be found, and each evaluated member keeps its fixed-frame figures only.
    std::string missing;
    for (std::size_t i : members)
      if (!bores[i].evaluated()) missing += (missing.empty() ? "" : ", ") + bores[i].id;
    if (!missing.empty()) {
      for (std::size_t i : members) {
        BoreResult& bore = bores[i];
        bore.mobility_reason = mobility.description();
        bore.mobility_c_simulator = std::string(tertiary_simulator_name(mobility.c_simulator));
        if (bore.evaluated())
          bore.mobility_not_evaluated =
              "the bores with reference " + reference +
              " are one pattern (simultaneous requirement) and bore(s) " + missing +
              " could not be evaluated: the pattern's datum mobility is not evaluated";
      }
      continue;
    }
    std::vector<const BoreResult*> results;
    std::vector<const PlanBore*> plans;
    for (std::size_t i : members) {
      results.push_back(&bores[i]);
      plans.push_back(&plan.bores[i]);
    }
    const MobilityResult best = best_frame_motion(results, plans, mobility, options);
    for (std::size_t k = 0; k < members.size(); ++k) {
      BoreResult& bore = bores[members[k]];
      bore.position_with_mobility = best.positions[k];
      bore.mobility_motion = best.motion;
      bore.mobility_reason = mobility.description();
      bore.mobility_c_simulator = std::string(tertiary_simulator_name(mobility.c_simulator));
    }
    // The surface interpretation is a simultaneous requirement of its own: the boundaries on
    // the true position get the motion that best clears them all.
    std::vector<std::size_t> bounded;
    for (std::size_t i : members)
      if (bores[i].virtual_condition && bores[i].virtual_condition->on_true_position)
        bounded.push_back(i);
    if (!boundaries || bounded.empty()) continue;
    std::vector<const BoreResult*> bounded_results;
    for (std::size_t i : bounded) bounded_results.push_back(&bores[i]);
    const BoundaryMobilityResult clear = best_boundary_motion(bounded_results, mobility, options);
    for (std::size_t k = 0; k < bounded.size(); ++k) {
      VirtualConditionResult v = clear.boundaries[k];
      v.motion_reason = mobility.description();
      bores[bounded[k]].virtual_condition_with_mobility = std::move(v);
    }
  }
}

/// The decisive position characteristic of a bore (after mobility when the frame may move).
const Characteristic* deciding_position(const std::vector<Characteristic>& characteristics,
                                        const std::string& bore_id) {
  if (const Characteristic* m = find_characteristic(characteristics, bore_id + "/position/mobility"))
    return m;
  return find_characteristic(characteristics, bore_id + "/position");
}

/// A copy of a bore's result without its boundary points: the association study reports
/// position and perpendicularity only (no boundary search), and every alternative frame's
/// copies are alive at once, so a dense scan's points are not held once per association.
BoreResult without_boundary_points(const BoreResult& bore) {
  BoreResult copy = bore;
  copy.boundary_points = Eigen::Matrix3Xd();
  return copy;
}

/// Frees the per-point residual values of the datum features' associated elements once the
/// frame is built, for a feature of more than `kept_up_to` points (as a bore's are:
/// BoreEvaluationOptions::residuals_kept_up_to): they are read inside the frame only (its
/// stray-point notes) and by no report, and a dense scan's face A would otherwise hold 8 bytes
/// a point through every bore's evaluation. rms and form stay.
void release_datum_residuals(DatumFrameResult& frame, std::size_t kept_up_to,
                             bool a_too = true) {
  const auto release = [&](Residuals& residuals) {
    if (static_cast<std::size_t>(residuals.values.size()) > kept_up_to)
      residuals.values = Eigen::VectorXd();
  };
  if (a_too) release(frame.a.plane.residuals);
  if (frame.b) release(frame.b->related_envelope.residuals);
  if (frame.c_feature) release(frame.c_feature->related_envelope.residuals);
  if (frame.c_plane) release(frame.c_plane->plane.residuals);
}

/// Every evaluation starts from datum A, a plane; check_part asks before loading anything.
void require_datum_a(const PartPlan& plan) {
  if (plan.datums.empty() || plan.datums.front().kind != FeatureKind::plane)
    throw InputError(plan.file.string(), 0, "the plan needs datum A, a plane");
}

/// The options every stage below evaluate_part receives: the one thread option and the
/// evaluation profile written into them.
BoreEvaluationOptions stage_options(const EvaluationOptions& options, std::size_t threads) {
  BoreEvaluationOptions bore = options.bore;
  bore.fit.threads = threads;
  bore.fit.assess_ambiguity = options.profile.ambiguity;
  bore.fit.result_coverage = options.profile.unread_results;
  bore.fit.result_messages = options.profile.unread_results;
  bore.two_point_sizes = options.profile.two_point_sizes;
  bore.stray_screen = options.profile.stray_screen;
  bore.unread_results = options.profile.unread_results;
  bore.stray_points.threads = threads;
  return bore;
}

DatumFrameOptions frame_options(const BoreEvaluationOptions& stage) {
  DatumFrameOptions frame;
  frame.fit = stage.fit;
  frame.stray_screen = stage.stray_screen;
  frame.stray_points = stage.stray_points;
  frame.flatness = stage.unread_results;  // A's flatness: no bore characteristic reads it
  return frame;
}

/// The bores with a position tolerance, as anchors for what the datum reference leaves free
/// (DatumFrameOptions::anchors): the centroid of each one's points, in plan order. Read from
/// the part, so the frame's free freedoms move with it and not with the machine.
std::vector<FrameAnchor> frame_anchors(const PartPlan& plan, const PartInputs& inputs) {
  std::vector<FrameAnchor> anchors;
  for (std::size_t i = 0; i < plan.bores.size(); ++i)
    if (plan.bores[i].position && inputs.bores[i].points.cols() > 0)
      anchors.push_back({"bore " + plan.bores[i].id, detail::centroid(inputs.bores[i].points),
                         plan.bores[i].basic_location});
  return anchors;
}

std::vector<DatumInput> datum_inputs(const PartPlan& plan, const PartEvaluation& evaluation,
                                     const PartInputs& inputs) {
  std::vector<DatumInput> datums;
  for (std::size_t k = 0; k < plan.datums.size(); ++k)
    datums.push_back({plan.datums[k], datum_cloud_used(evaluation, inputs, k)});
  return datums;
}

/// Raw datum points: compensated and cleared of outliers as the plan asks, before the frame
/// is built (prepare.hpp). A datum of surface points with no outlier stage is passed unchanged:
/// its slot stays empty (PartEvaluation::datum_clouds, datum_cloud_used) rather than a copy.
/// `into_material` is A's material side, which orients A (and C when the plan gives its side)
/// and starts B's and C's axes (held perpendicular to A in the frame).
std::vector<PointCloud> prepared_datums(const PartPlan& plan, const PartInputs& inputs,
                                        const Eigen::Vector3d& into_material,
                                        const BoreEvaluationOptions& stage,
                                        std::vector<FeaturePreparation>& records,
                                        std::vector<std::string>& warnings) {
  std::vector<PointCloud> clouds(plan.datums.size());
  for (std::size_t k = 0; k < plan.datums.size(); ++k) {
    const PlanDatum& d = plan.datums[k];
    const std::string role = std::string("datum ") + d.label;
    FeaturePreparation& record = records.emplace_back(FeaturePreparation{role, {}});
    const ProbeSettings settings = resolved_probe(plan.probe, d.probe);
    if (!changes_points(settings)) continue;
    PrepareOptions options;
    options.stray_screen = false;  // the frame screens the points it is built from
    options.fit = stage.fit;
    options.fit.axis_hint = into_material;
    options.stray_points = stage.stray_points;  // the threads bound, the filter's criterion
    if (d.label == 'A')
      options.outward = -into_material;
    else if (d.material_side)
      options.outward = -*d.material_side;
    apply_probe_settings(settings, options);
    PreparedFeature prepared =
        for_feature(role, [&] { return prepare_feature(d.kind, inputs.datums[k], options); });
    // An empty slot means "unchanged" (datum_cloud_used): preparation that leaves no points
    // must not read as the raw points.
    if (prepared.cloud.points.cols() == 0)
      throw FitError(role + ": no points are left after compensation and outlier rejection");
    clouds[k] = std::move(prepared.cloud);
    record.record = std::move(prepared.record);
    for (const std::string& w : preparation_warnings(record.record))
      warnings.push_back(role + ": " + w);
  }
  return clouds;
}

}  // namespace

PartEvaluation evaluate_part(const PartPlan& plan, const PartInputs& inputs,
                             const EvaluationOptions& options) {
  require_datum_a(plan);
  if (inputs.datums.size() != plan.datums.size() || inputs.bores.size() != plan.bores.size())
    throw std::invalid_argument(
        "evaluate_part: " + std::to_string(inputs.datums.size()) + " datum and " +
        std::to_string(inputs.bores.size()) + " bore clouds for a plan with " +
        std::to_string(plan.datums.size()) + " datums and " + std::to_string(plan.bores.size()) +
        " bores");
  const std::size_t threads = std::max<std::size_t>(1, options.threads);
  const BoreEvaluationOptions stage = stage_options(options, threads);
  PartEvaluation result;

  // A's least-squares plane, with the options the frame fits A's planes with (no direction
  // held, no hint; fit_plane_least_squares reads nothing else of them): fitted once here and
  // shared with the frame (DatumFrameOptions::a_least_squares) as the tangent plane's start,
  // the least-squares association and A's screen, which each fitted it again on a dense face.
  // Its residual values are released before the frame (one value a point of A, held through
  // the frame's busiest stage they would raise the run's peak): the frame then takes it as
  // the tangent plane's start only, and A's screen fits its own beside the bores.
  FitOptions plane_fit = stage.fit;
  plane_fit.fixed_direction.reset();
  plane_fit.axis_hint.reset();
  std::shared_ptr<PlaneFit> a_least_squares;

  // Which side of A is material: from the plan, or the side the bores' points lie on.
  const PlanDatum& a = plan.datums.front();
  bool inferred = false;
  if (a.material_side) {
    result.material_side = *a.material_side;
  } else {
    std::vector<const Eigen::Matrix3Xd*> bore_points;
    for (const PointCloud& cloud : inputs.bores) bore_points.push_back(&cloud.points);
    result.material_side = for_feature("datum A", [&] {
      if (stage.fit.axis_hint)
        return infer_material_side(
            fit_plane_least_squares(inputs.datums.front().points, stage.fit), bore_points);
      a_least_squares = std::make_shared<PlaneFit>(
          fit_plane_least_squares(inputs.datums.front().points, plane_fit));
      return infer_material_side(*a_least_squares, bore_points);
    });
    inferred = true;
  }

  result.datum_clouds =
      prepared_datums(plan, inputs, result.material_side, stage, result.preparation,
                      result.warnings);
  DatumFrameOptions frame = frame_options(stage);
  frame.anchors = frame_anchors(plan, inputs);
  // A's stray-point screen is the frame's longest step on a dense face and nothing in the
  // frame the bores use depends on it: it runs below, beside the bores (screen_datum_a).
  frame.defer_a_screen = frame.stray_screen;
  const std::vector<DatumInput> datums = datum_inputs(plan, result, inputs);
  // The plane above is of A's raw points: not the frame's when A was prepared. A tangent or
  // least-squares association fits it first thing in the frame, so fitting it here instead
  // fails (if at all) with the same message at the same point.
  if (&datums.front().points != &inputs.datums.front()) a_least_squares.reset();
  if (!a_least_squares && (a.association == PlaneAssociation::tangent_least_squares ||
                           a.association == PlaneAssociation::least_squares))
    a_least_squares = for_feature("datum A", [&] {
      return std::make_shared<PlaneFit>(
          fit_plane_least_squares(datums.front().points.points, plane_fit));
    });
  if (a_least_squares) a_least_squares->residuals.values = Eigen::VectorXd();
  frame.a_least_squares = std::move(a_least_squares);
  result.datums = establish_datum_frame(datums, result.material_side, frame);
  frame.a_least_squares.reset();
  result.datums.a.material_side_inferred = inferred;
  // A's residual values are read by its screen's note, and released after it.
  release_datum_residuals(result.datums, stage.residuals_kept_up_to, !frame.defer_a_screen);
  if (inferred)
    result.warnings.push_back("material side of datum A inferred from the bores' points");

  // Bores in parallel, one chunk each (A's screen, when deferred, the chunk before them), each
  // result in its own slot: the same bits for any thread count. The chunks are taken in order
  // as workers come free (parallel_for_taken_in_order): they differ in cost. The threads left
  // over go to each bore's own fits (and A's screen).
  const std::size_t a_screen = frame.defer_a_screen ? 1 : 0;
  const std::size_t workers = detail::worker_count(a_screen + plan.bores.size(), threads);
  BoreEvaluationOptions per_bore = stage;
  per_bore.fit.threads = per_bore.stray_points.threads = std::max<std::size_t>(1, threads / workers);
  result.bores.resize(plan.bores.size());
  // A bore's boundary points (BoreResult::boundary_points) are measured again only by the
  // boundary search of a datum reference that leaves the frame mobile (apply_mobility); with
  // the frame fixed they are released once the bore is evaluated, so that a dense scan's bores
  // do not stay in memory as copies.
  std::vector<char> keeps_boundary_points(plan.bores.size(), 0);
  {
    const PlanDatum* c = plan.datum('C');
    for (std::size_t i = 0; i < plan.bores.size(); ++i)
      keeps_boundary_points[i] =
          plan.bores[i].position &&
          mobility_of(plan.bores[i].position->datums, result.datums,
                      c ? c->basic_location : std::nullopt)
              .any();
  }
  const std::size_t first_bore = result.preparation.size();
  for (const PlanBore& bore : plan.bores) result.preparation.push_back({"bore " + bore.id, {}});
  DatumFrameOptions a_screen_options = frame;
  a_screen_options.fit.threads = a_screen_options.stray_points.threads = per_bore.fit.threads;
  detail::parallel_for_taken_in_order(a_screen + plan.bores.size(), workers, [&](std::size_t task,
                                                                                 std::size_t) {
    if (task < a_screen) {
      // Writes only A's record, residuals and the frame's notes, which no bore reads.
      screen_datum_a(datums.front().points, result.datums, a_screen_options);
      if (static_cast<std::size_t>(result.datums.a.plane.residuals.values.size()) >
          stage.residuals_kept_up_to)
        result.datums.a.plane.residuals.values = Eigen::VectorXd();
      return;
    }
    const std::size_t i = task - a_screen;
    const PlanBore& bore = plan.bores[i];
    // A bore whose geometry cannot be evaluated (FitError) does not stop the others: it is
    // reported as not evaluated. InputError (the plan is wrong) still stops the check.
    try {
      result.bores[i] = for_feature("bore " + bore.id, [&] {
        PointCloud in_frame;
        // DatumFrame::points_to_frame's bits, written in place (detail/frame_points.hpp).
        detail::points_to_frame_into(inputs.bores[i].points, result.datums.frame.rotation,
                                     result.datums.frame.origin, in_frame.points);
        if (inputs.bores[i].has_vectors())
          in_frame.vectors = result.datums.frame.rotation * inputs.bores[i].vectors;
        in_frame.source = inputs.bores[i].source;
        in_frame.file_unit = inputs.bores[i].file_unit;
        in_frame.lines = inputs.bores[i].lines;
        PrepareOptions prepare = bore_prepare_options(bore, per_bore);
        apply_probe_settings(resolved_probe(plan.probe, bore.probe), prepare);
        // The frame's copy is taken over and the record moved out (also when the bore cannot
        // be evaluated) rather than copied: a bore's points are held once while it is prepared
        // and evaluated, not twice, and its kept-column map not twice either.
        PreparedFeature prepared =
            prepare_feature(FeatureKind::bore, std::move(in_frame), prepare);
        PrepareRecord& record = result.preparation[first_bore + i].record;
        BoreResult evaluated;
        try {
          const BoreResult* start =
              options.start && i < options.start->bores.size() &&
                      options.start->bores[i].evaluated() && options.start->bores[i].id == bore.id
                  ? &options.start->bores[i]
                  : nullptr;
          evaluated = evaluate_bore(BoreInput{bore, prepared, start}, per_bore);
        } catch (...) {
          record = std::move(prepared.record);
          throw;
        }
        for (std::string& w : preparation_warnings(prepared.record))
          evaluated.warnings.push_back(std::move(w));
        if (!keeps_boundary_points[i]) evaluated.boundary_points = Eigen::Matrix3Xd();
        record = std::move(prepared.record);
        return evaluated;
      });
    } catch (const FitError& e) {
      BoreResult skipped;
      skipped.id = bore.id;
      skipped.axis_method = bore.axis;
      skipped.direction_held = bore.axis_direction == AxisDirection::nominal;
      skipped.not_evaluated = not_evaluated_reason(bore, e.what());
      result.bores[i] = std::move(skipped);
    }
  });
  apply_mobility(plan, result.datums, result.bores, options.mobility, true);
  return result;
}

std::vector<BoreSensitivity> association_sensitivity(const PartPlan& plan,
                                                     const PartInputs& inputs,
                                                     const PartEvaluation& nominal,
                                                     const EvaluationOptions& options,
                                                     const DecisionRule& rule) {
  if (nominal.bores.size() != plan.bores.size())
    throw std::invalid_argument("association_sensitivity: the evaluation does not match the plan");
  const PlanDatum& a = plan.datums.front();
  // Every association of A, the plan's own first. The bores are not refitted: their fits are
  // invariant under rigid motions, so each is moved into the alternative frame. The frame's
  // stray-point notes are not used here, so its screen is skipped.
  std::vector<PlaneAssociation> methods = {a.association};
  for (PlaneAssociation m :
       {PlaneAssociation::tangent_least_squares, PlaneAssociation::tangent_minimax,
        PlaneAssociation::least_squares, PlaneAssociation::minimum_zone})
    if (m != a.association) methods.push_back(m);

  std::vector<BoreSensitivity> sensitivity(plan.bores.size());
  for (std::size_t i = 0; i < plan.bores.size(); ++i) sensitivity[i].bore_id = plan.bores[i].id;

  // The alternative frames are independent: one chunk each, each result in its own slot.
  const std::size_t threads = std::max<std::size_t>(1, options.threads);
  const std::size_t workers = detail::worker_count(methods.size(), threads);
  DatumFrameOptions alternative =
      frame_options(stage_options(options, std::max<std::size_t>(1, threads / workers)));
  alternative.stray_screen = false;
  alternative.anchors = frame_anchors(plan, inputs);
  // Every association rests on, or measures flatness by, A's minimum-zone plane over the same
  // points: the evaluation's is taken rather than fitted once per frame again.
  alternative.a_minimum_zone = nominal.datums.a.minimum_zone;
  std::vector<std::vector<BoreResult>> moved_by_method(methods.size());
  detail::parallel_for(methods.size(), workers, [&](std::size_t m, std::size_t) {
    std::vector<BoreResult>& moved = moved_by_method[m];
    if (methods[m] == a.association) {
      for (const BoreResult& bore : nominal.bores) moved.push_back(without_boundary_points(bore));
    } else {
      DatumFrameOptions frame = alternative;
      frame.a_association = methods[m];
      const DatumFrameResult other = establish_datum_frame(
          datum_inputs(plan, nominal, inputs),
          nominal.material_side, frame);
      // q_other = R_o (R^T q + o - o_o): the rigid motion from this frame to the other.
      const DatumFrame& f = nominal.datums.frame;
      const DatumFrame& g = other.frame;
      const Eigen::Matrix3d rotation = g.rotation * f.rotation.transpose();
      const Eigen::Vector3d translation = g.rotation * (f.origin - g.origin);
      for (std::size_t i = 0; i < plan.bores.size(); ++i)
        moved.push_back(nominal.bores[i].evaluated()
                            ? moved_to_frame(without_boundary_points(nominal.bores[i]),
                                             plan.bores[i], rotation, translation)
                            : nominal.bores[i]);
      // The study reports position and perpendicularity only: no boundary search.
      apply_mobility(plan, other, moved, options.mobility, false);
    }
  });
  for (std::size_t m = 0; m < methods.size(); ++m) {
    const PlaneAssociation method = methods[m];
    const std::vector<BoreResult>& moved = moved_by_method[m];
    for (std::size_t i = 0; i < plan.bores.size(); ++i) {
      if (!moved[i].evaluated()) continue;  // skipped: see below
      AssociationSensitivity row;
      row.association = method;
      const std::vector<Characteristic> decided =
          bore_characteristics(moved[i], plan.bores[i], rule);
      if (const Characteristic* p = deciding_position(decided, moved[i].id)) {
        row.position = p->value;
        row.position_verdict = p->verdict;
      }
      if (const Characteristic* p = find_characteristic(decided, moved[i].id + "/perpendicularity")) {
        row.perpendicularity = p->value;
        row.perpendicularity_verdict = p->verdict;
      }
      sensitivity[i].rows.push_back(row);
    }
  }
  for (std::size_t i = 0; i < plan.bores.size(); ++i)
    if (!nominal.bores[i].evaluated())
      sensitivity[i].skipped = "not evaluated: no figures to compare";
  for (BoreSensitivity& s : sensitivity) {
    if (s.rows.empty()) continue;
    auto spread = [&](double AssociationSensitivity::*field) {
      const auto [lo, hi] = std::minmax_element(
          s.rows.begin(), s.rows.end(),
          [&](const auto& l, const auto& r) { return l.*field < r.*field; });
      return (*hi).*field - (*lo).*field;
    };
    s.position_spread = spread(&AssociationSensitivity::position);
    s.perpendicularity_spread = spread(&AssociationSensitivity::perpendicularity);
  }
  return sensitivity;
}

PartCheckResult check_part(const PartPlan& plan, const CheckOptions& options) {
  require_datum_a(plan);
  return check_part(plan, load_part_inputs(plan, LoadOptions{options.evaluation.threads}),
                    options);
}

PartCheckResult check_part(const PartPlan& plan, const PartInputs& inputs,
                           const CheckOptions& options) {
  return check_part(plan, inputs, evaluate_part(plan, inputs, options.evaluation), options);
}

PartCheckResult check_part(const PartPlan& plan, const PartInputs& inputs,
                           PartEvaluation evaluation, const CheckOptions& options) {
  PartCheckResult result;
  result.plan = plan;
  result.inputs = inputs.records;
  result.scan = inputs.scan;
  const DecisionRule& rule = options.decision ? *options.decision : plan.decision.rule;
  // Plan and data must describe the same part: refuse what would be meaningless, warn the rest.
  check_plausibility(plan, inputs, evaluation);
  if (options.sensitivity)
    result.sensitivity =
        association_sensitivity(plan, inputs, evaluation, options.evaluation, rule);
  result.datums = std::move(evaluation.datums);
  result.bores = std::move(evaluation.bores);
  result.warnings = std::move(evaluation.warnings);
  result.preparation = std::move(evaluation.preparation);

  // Decide: every characteristic of every bore, by the one decision function.
  // A bore not evaluated gives its characteristics as not proven (bore_characteristics).
  for (std::size_t i = 0; i < result.bores.size(); ++i)
    for (Characteristic& c : bore_characteristics(result.bores[i], plan.bores[i], rule))
      result.characteristics.push_back(std::move(c));
  result.verdict = combine(result.characteristics);
  return result;
}

}  // namespace cylzone
