// The main job, end to end: read -> datum frame -> evaluate every bore -> datum mobility ->
// sensitivity to datum A's association -> decide. Only orchestration lives here; every figure
// is computed by the module that owns it.
#include "cylzone/check/part_check.hpp"

#include <algorithm>
#include <map>
#include <utility>

#include "cylzone/decide/bore_characteristics.hpp"
#include "cylzone/evaluate/datum_mobility.hpp"
#include "cylzone/core/errors.hpp"
#include "cylzone/fit/fit_plane.hpp"
#include "cylzone/io/read_points.hpp"
#include "io/detail/file_digest.hpp"

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

/// The boundary a plan uses for a datum feature of size, as reported: MMB when any position or
/// perpendicularity references it at MMB (its shift must be computed), else LMB when any does,
/// else RMB.
MaterialBoundary boundary_used(const PartPlan& plan, char label) {
  MaterialBoundary used = MaterialBoundary::rmb;
  for (const PlanBore& bore : plan.bores)
    for (const auto* tol : {&bore.position, &bore.perpendicularity})
      if (*tol)
        for (const DatumReference& ref : (*tol)->datums)
          if (ref.label == label && ref.boundary != MaterialBoundary::rmb &&
              used != MaterialBoundary::mmb)
            used = ref.boundary;
  return used;
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
/// frame mobile. Returns nothing; fills position_with_mobility, mobility_motion, reason.
void apply_mobility(const PartPlan& plan, const DatumFrameResult& frame,
                    std::vector<BoreResult>& bores, const MobilityOptions& options) {
  for (const auto& [reference, members] : patterns_by_reference(plan)) {
    const PlanDatum* c = plan.datum('C');
    const FrameMobility mobility = mobility_of(plan.bores[members.front()].position->datums,
                                               frame, c ? c->basic_location : std::nullopt);
    if (!mobility.any()) continue;
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
  }
}

/// The decisive position characteristic of a bore (after mobility when the frame may move).
const Characteristic* deciding_position(const std::vector<Characteristic>& characteristics,
                                        const std::string& bore_id) {
  if (const Characteristic* m = find_characteristic(characteristics, bore_id + "/position/mobility"))
    return m;
  return find_characteristic(characteristics, bore_id + "/position");
}

std::string datum_role(char label) { return std::string("datum ") + label; }

}  // namespace

PartCheckResult check_part(const PartPlan& plan, const CheckOptions& options) {
  if (plan.datums.empty() || plan.datums.front().kind != FeatureKind::plane)
    throw InputError(plan.file.string(), 0, "the plan needs datum A, a plane");

  PartCheckResult result;
  result.plan = plan;
  result.inputs.push_back({"plan", plan.file, plan.sha256, 0});

  ReadOptions read;
  read.unit = plan.unit;
  std::vector<PointCloud> datum_clouds;
  for (const PlanDatum& datum : plan.datums) {
    datum_clouds.push_back(read_points(datum.points, read));
    result.inputs.push_back({datum_role(datum.label), datum.points,
                             detail::sha256_of_file(datum.points), datum_clouds.back().size()});
  }
  std::vector<PointCloud> bore_clouds;
  for (const PlanBore& bore : plan.bores) {
    bore_clouds.push_back(read_points(bore.points, read));
    result.inputs.push_back({"bore " + bore.id, bore.points, detail::sha256_of_file(bore.points),
                             bore_clouds.back().size()});
  }

  // Which side of A is material: from the plan, or the side the bores' points lie on.
  const PlanDatum& a = plan.datums.front();
  Eigen::Vector3d material_side;
  bool inferred = false;
  if (a.material_side) {
    material_side = *a.material_side;
  } else {
    std::vector<const Eigen::Matrix3Xd*> bore_points;
    for (const PointCloud& cloud : bore_clouds) bore_points.push_back(&cloud.points);
    material_side = for_feature("datum A", [&] {
      return infer_material_side(fit_plane_least_squares(datum_clouds.front().points,
                                                         options.evaluation.fit),
                                 bore_points);
    });
    inferred = true;
  }

  DatumFrameOptions frame_options;
  frame_options.fit = options.evaluation.fit;
  result.datums = establish_datum_frame(plan.datums, datum_clouds, material_side, frame_options);
  result.datums.a.material_side_inferred = inferred;
  if (inferred)
    result.warnings.push_back("material side of datum A inferred from the bores' points");
  for (auto* feature : {&result.datums.b, &result.datums.c_feature})
    if (*feature) (*feature)->boundary = boundary_used(plan, (*feature)->label);
  if (result.datums.c_width)
    result.datums.c_width->boundary = boundary_used(plan, result.datums.c_width->label);

  for (std::size_t i = 0; i < plan.bores.size(); ++i) {
    const PlanBore& bore = plan.bores[i];
    const Eigen::Matrix3Xd in_frame = result.datums.frame.points_to_frame(bore_clouds[i].points);
    result.bores.push_back(for_feature("bore " + bore.id, [&] {
      return evaluate_bore(bore, in_frame, options.evaluation);
    }));
  }
  apply_mobility(plan, result.datums, result.bores, options.mobility);

  if (options.sensitivity) {
    // Every association of A, the plan's own first. The bores are not refitted: their fits are
    // invariant under rigid motions, so each is moved into the alternative frame.
    std::vector<PlaneAssociation> methods = {a.association};
    for (PlaneAssociation m :
         {PlaneAssociation::tangent_least_squares, PlaneAssociation::tangent_minimax,
          PlaneAssociation::least_squares, PlaneAssociation::minimum_zone})
      if (m != a.association) methods.push_back(m);

    result.sensitivity.resize(plan.bores.size());
    for (std::size_t i = 0; i < plan.bores.size(); ++i)
      result.sensitivity[i].bore_id = plan.bores[i].id;

    for (PlaneAssociation method : methods) {
      std::vector<BoreResult> moved;
      if (method == a.association) {
        moved = result.bores;
      } else {
        DatumFrameOptions alternative = frame_options;
        alternative.a_association = method;
        const DatumFrameResult other =
            establish_datum_frame(plan.datums, datum_clouds, material_side, alternative);
        // q_other = R_o (R^T q + o - o_o): the rigid motion from this frame to the other.
        const DatumFrame& f = result.datums.frame;
        const DatumFrame& g = other.frame;
        const Eigen::Matrix3d rotation = g.rotation * f.rotation.transpose();
        const Eigen::Vector3d translation = g.rotation * (f.origin - g.origin);
        for (std::size_t i = 0; i < plan.bores.size(); ++i)
          moved.push_back(moved_to_frame(result.bores[i], plan.bores[i], rotation, translation));
        apply_mobility(plan, other, moved, options.mobility);
      }
      for (std::size_t i = 0; i < plan.bores.size(); ++i) {
        AssociationSensitivity row;
        row.association = method;
        const std::vector<Characteristic> decided = bore_characteristics(moved[i], options.decision);
        if (const Characteristic* p = deciding_position(decided, moved[i].id)) {
          row.position = p->value;
          row.position_verdict = p->verdict;
        }
        if (const Characteristic* p =
                find_characteristic(decided, moved[i].id + "/perpendicularity")) {
          row.perpendicularity = p->value;
          row.perpendicularity_verdict = p->verdict;
        }
        result.sensitivity[i].rows.push_back(row);
      }
    }
    for (BoreSensitivity& s : result.sensitivity) {
      auto spread = [&](double AssociationSensitivity::*field) {
        const auto [lo, hi] = std::minmax_element(
            s.rows.begin(), s.rows.end(),
            [&](const auto& l, const auto& r) { return l.*field < r.*field; });
        return (*hi).*field - (*lo).*field;
      };
      s.position_spread = spread(&AssociationSensitivity::position);
      s.perpendicularity_spread = spread(&AssociationSensitivity::perpendicularity);
    }
  }

  // Decide: every characteristic of every bore, by the one decision function.
  for (const BoreResult& bore : result.bores)
    for (Characteristic& c : bore_characteristics(bore, options.decision))
      result.characteristics.push_back(std::move(c));
  result.verdict = combine(result.characteristics);
  return result;
}

}  // namespace cylzone
