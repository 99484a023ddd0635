// Plausibility checks between the plan and the data (check/plausibility.hpp; docs/evaluation.md,
// "Plausibility checks"). Every figure compared here was computed by the evaluation; this file
// only judges whether the plan and the points can describe the same part.
#include "cylzone/check/plausibility.hpp"

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <stdexcept>
#include <string>

#include "cylzone/core/errors.hpp"
#include "cylzone/plan/validate_plan.hpp"
#include "detail/fit_support.hpp"

namespace cylzone {
namespace {

constexpr double inch_in_mm = 25.4;  // exact by definition of the inch

/// Counts of a feature's surface vectors against the side its kind puts them on.
struct SideCount {
  std::size_t counted = 0;  ///< vectors that tell a side (not near the tangent plane)
  std::size_t against = 0;  ///< of those, pointing the way of the other kind
};

/// `away(j)` is the unit direction from the feature's centre (axis, centre plane) toward point
/// j, or a plane's outward normal; `sense` is +1 where the outward surface normal points along
/// it (pin, tab, plane), -1 where against it (bore, slot). A zero `away` is not counted.
template <class Away>
SideCount count_sides(const Eigen::Matrix3Xd& vectors, Away away, double sense,
                      double side_cosine) {
  SideCount count;
  for (Eigen::Index j = 0; j < vectors.cols(); ++j) {
    const Eigen::Vector3d a = away(j);
    if (a.isZero()) continue;
    const double cosine = vectors.col(j).dot(a);
    if (!(std::abs(cosine) >= side_cosine)) continue;
    ++count.counted;
    if (cosine * sense < 0.0) ++count.against;
  }
  return count;
}

/// Radial unit directions from a cylinder's axis.
SideCount count_radial(const PointCloud& cloud, const Axis& axis, double sense,
                       double side_cosine) {
  return count_sides(
      cloud.vectors,
      [&](Eigen::Index j) -> Eigen::Vector3d {
        const Eigen::Vector3d d = cloud.points.col(j) - axis.point;
        const Eigen::Vector3d radial = d - d.dot(axis.direction) * axis.direction;
        const double length = radial.norm();
        return length > 1e-12 ? Eigen::Vector3d(radial / length) : Eigen::Vector3d::Zero();
      },
      sense, side_cosine);
}

class Assessor {
 public:
  Assessor(const PartPlan& plan, const PlausibilityOptions& options)
      : plan_(plan),
        options_(options),
        per_unit_(millimetres_per(plan.unit)),
        unit_(unit_name(plan.unit)) {}

  PlausibilitySummary run(const PartInputs& inputs, const PartEvaluation& evaluation) {
    const DatumFrameResult& frame = evaluation.datums;
    // Ball-centre files whose vectors all point into the material (the approach sense) were
    // accepted by the probe-tip compensation and used reversed (probe_compensation.hpp): judge
    // them in the sense the compensation used, so the two steps read a file the same way.
    const auto as_compensated = [&](const std::string& role, const PointCloud& cloud) {
      PointCloud judged = cloud;
      for (const FeaturePreparation& p : evaluation.preparation)
        if (p.role == role && p.record.probe_tip.vectors_reversed) judged.vectors *= -1.0;
      return judged;
    };
    for (std::size_t k = 0; k < plan_.datums.size(); ++k)
      check_datum(plan_.datums[k],
                  as_compensated(std::string("datum ") + plan_.datums[k].label, inputs.datums[k]),
                  frame);
    for (std::size_t i = 0; i < plan_.bores.size(); ++i) {
      // A bore not evaluated has no fits to compare; its reason is already reported.
      if (!evaluation.bores[i].evaluated()) continue;
      PointCloud in_frame;
      in_frame.points = frame.frame.points_to_frame(inputs.bores[i].points);
      if (inputs.bores[i].has_vectors())
        in_frame.vectors = frame.frame.rotation *
                           as_compensated("bore " + plan_.bores[i].id, inputs.bores[i]).vectors;
      in_frame.source = inputs.bores[i].source;
      check_bore(plan_.bores[i], in_frame, evaluation.bores[i]);
    }
    return std::move(summary_);
  }

 private:
  /// A length in the plan's unit: 4 decimals in mm, 5 in inch (as the reports print them).
  std::string length(double mm) const {
    return detail::format_number(mm / per_unit_, plan_.unit == LengthUnit::inch ? 5 : 4) + " " +
           unit_;
  }
  static std::string percent(double share) { return detail::format_number(100.0 * share, 1); }

  /// An error's key and line go into its InputError; a warning names them in its text.
  void add(FindingSeverity severity, const std::string& feature, const PlanLocation& where,
           const std::string& message) {
    std::string text = feature + ": " + message;
    if (severity == FindingSeverity::warning && !where.key.empty())
      text += " (plan key " + where.key +
              (where.line > 0 ? ", line " + std::to_string(where.line) : std::string()) + ")";
    summary_.findings.push_back({severity, feature, where, std::move(text)});
  }

  static std::string file_of(const PointCloud& cloud, const std::filesystem::path& planned) {
    const std::filesystem::path file =
        cloud.source.empty() ? planned : std::filesystem::path(cloud.source);
    const std::string name = file.filename().string();
    return quoted_for_message(name);
  }

  // ---------------------------------------------------------------- surface vectors

  /// Judges `count`: `expected` says where the declared kind's vectors point, `reversed` where
  /// the counted ones point instead, `error_text` why most of them so is an error.
  void judge_vectors(const SideCount& count, const std::string& feature, const std::string& file,
                     const PlanLocation& where, const std::string& expected,
                     const std::string& reversed, const std::string& error_text) {
    if (count.against == 0) return;
    const double share = static_cast<double>(count.against) / static_cast<double>(count.counted);
    const std::string counted = std::to_string(count.against) + " of " +
                                std::to_string(count.counted) + " surface vectors (i,j,k) in " +
                                file;
    if (share > options_.vector_error_share) {
      add(FindingSeverity::error, feature, where,
          counted + " point " + reversed + ": " + error_text +
              " (i,j,k read as the surface normal out of the material: docs/evaluation.md)");
      return;
    }
    add(FindingSeverity::warning, feature, where,
        counted + " (" + percent(share) + " %) point " + reversed + ", where " + expected +
            ": check those points (another feature, an edge, a reversed vector)");
  }

  void check_cylinder_vectors(FeatureKind kind, const PointCloud& cloud, const Axis& axis,
                              const std::string& feature, const std::string& file,
                              const PlanLocation& where) {
    const bool pin = kind == FeatureKind::pin;
    const SideCount count =
        count_radial(cloud, axis, pin ? 1.0 : -1.0, options_.vector_side_cosine);
    const std::string declared = pin ? "a pin" : "a bore";
    judge_vectors(count, feature, file, where,
                  pin ? "a pin's point away from its axis" : "a bore's point toward its axis",
                  pin ? "toward the axis, as a bore's do" : "away from the axis, as a pin's do",
                  "declared " + declared + ", the results would be meaningless");
  }

  // ---------------------------------------------------------------- sizes

  /// A fitted size against the plan's limits (docs/evaluation.md, "Plausibility checks").
  void check_size(const SizeLimits& limits, double fitted, const std::string& what,
                  const std::string& feature, const PlanLocation& where) {
    const double tolerance = limits.upper - limits.lower;
    const double outside = std::max({limits.lower - fitted, fitted - limits.upper, 0.0});
    if (!(outside > options_.size_warning_factor * tolerance)) return;
    const double nominal = 0.5 * (limits.lower + limits.upper);
    const double ratio = fitted / nominal;
    const double slack = options_.unit_ratio_tolerance;
    std::string mixup;
    if (plan_.unit == LengthUnit::inch && std::abs(ratio / inch_in_mm - 1.0) < slack)
      mixup = "a unit mix-up? plan units are inch, the data look like mm";
    if (plan_.unit == LengthUnit::millimetre && std::abs(ratio * inch_in_mm - 1.0) < slack)
      mixup = "a unit mix-up? plan units are mm, the data look like inch";
    const std::string text =
        what + " " + length(fitted) + " lies " + length(outside) +
        (fitted > limits.upper ? " above the upper limit " + length(limits.upper)
                               : " below the lower limit " + length(limits.lower)) +
        " (" + detail::format_number(outside / tolerance, 1) + " size tolerances, ratio " +
        detail::format_number(ratio, 2) + " to the limits' mean)";
    const bool meaningless = !mixup.empty() ||
                             (outside > options_.size_error_factor * tolerance &&
                              outside > options_.size_error_share * nominal);
    if (meaningless)
      add(FindingSeverity::error, feature, where,
          text + ": " + (mixup.empty() ? "the wrong point file, limits or unit?" : mixup) +
              "; the results would be meaningless");
    else
      add(FindingSeverity::warning, feature, where,
          text + ": a gross machining error, or the wrong point file or limits?");
  }

  // ---------------------------------------------------------------- datums

  void check_datum(const PlanDatum& d, const PointCloud& cloud, const DatumFrameResult& frame) {
    const std::string feature = std::string("datum ") + d.label;
    PlanLocation at = d.where;
    if (at.key.empty()) at.key = std::string("datum.") + d.label;
    const std::string file = file_of(cloud, d.points);
    const bool vectors = cloud.has_vectors();

    if (d.kind == FeatureKind::plane) {
      const PlaneFit* plane = d.label == 'A' ? &frame.a.plane
                              : frame.c_plane ? &frame.c_plane->plane
                                              : nullptr;
      if (!plane || !vectors) return;
      const Eigen::Vector3d outward = plane->normal;
      const SideCount count = count_sides(
          cloud.vectors, [&](Eigen::Index) { return outward; }, 1.0, options_.vector_side_cosine);
      const PlanLocation where = d.material_side ? at.at("material_side") : at.at("points");
      judge_vectors(count, feature, file, where, "a plane's point out of the material",
                    "into the material side",
                    "against the " + std::string(d.material_side ? "given" : "inferred") +
                        " material side, the datum would be associated on the wrong side");
      return;
    }

    const SizeDatumResult* of_size = d.label == 'B' ? (frame.b ? &*frame.b : nullptr)
                                                    : (frame.c_feature ? &*frame.c_feature : nullptr);
    if (of_size) {
      if (vectors)
        check_cylinder_vectors(d.kind, cloud, of_size->related_envelope.axis, feature, file,
                               at.at("feature"));
      if (d.size)
        check_size(*d.size, of_size->mating_size, "related mating size", feature, at.at("size"));
      return;
    }
    if (frame.c_width && d.label == 'C') {
      const ClockingWidthResult& w = *frame.c_width;
      const bool tab = d.kind == FeatureKind::tab;
      if (vectors) {
        const SideCount count = count_sides(
            cloud.vectors,
            [&](Eigen::Index j) -> Eigen::Vector3d {
              const double side = (cloud.points.col(j) - w.centre_on_a).dot(w.centre_plane_normal);
              return side > 0.0 ? w.centre_plane_normal : -w.centre_plane_normal;
            },
            tab ? 1.0 : -1.0, options_.vector_side_cosine);
        judge_vectors(count, feature, file, at.at("feature"),
                      tab ? "a tab's point away from its centre plane"
                          : "a slot's point toward its centre plane",
                      tab ? "toward the centre plane, as a slot's do"
                          : "away from the centre plane, as a tab's do",
                      std::string("declared a ") + (tab ? "tab" : "slot") +
                          ", the results would be meaningless");
      }
      if (d.size) check_size(*d.size, w.mating_width, "related mating width", feature, at.at("size"));
    }
  }

  // ---------------------------------------------------------------- bores

  void check_bore(const PlanBore& bore, const PointCloud& in_frame, const BoreResult& result) {
    const std::string feature = "bore " + bore.id;
    PlanLocation at = bore.where;
    if (at.key.empty()) at.key = "bore[" + bore.id + "]";
    if (in_frame.has_vectors())
      check_cylinder_vectors(FeatureKind::bore, in_frame, result.least_squares.axis, feature,
                             file_of(in_frame, bore.points), at.at("points"));
    if (bore.size)
      check_size(*bore.size, result.size.least_squares, "least-squares diameter", feature,
                 at.at("size"));
    else
      check_zone_share(bore, result.size.least_squares, feature, at);
    check_depth(result, feature, at);
  }

  /// validate_plan's rule on a zone wider than the bore's size (zone_share_finding), for a
  /// bore without limits of size: against its fitted diameter.
  void check_zone_share(const PlanBore& bore, double diameter, const std::string& feature,
                        const PlanLocation& at) {
    for (const auto& [tolerance, name] :
         {std::make_pair(&bore.position, "position"),
          std::make_pair(&bore.perpendicularity, "perpendicularity")}) {
      if (!*tolerance || (*tolerance)->wide_zone_intended) continue;
      const std::optional<ZoneShareFinding> finding = zone_share_finding(
          name, (*tolerance)->tolerance, diameter, "the fitted diameter", plan_.unit);
      if (!finding) continue;
      PlanLocation where = (*tolerance)->where;
      if (where.key.empty()) where = at.at(name);
      add(finding->error ? FindingSeverity::error : FindingSeverity::warning, feature,
          where.at("tolerance"), finding->message);
    }
  }

  /// The plan's depth range and a projected zone against the probed band, in heights along the
  /// nominal axis from A.
  void check_depth(const BoreResult& result, const std::string& feature,
                   const PlanLocation& at) {
    const double probed = result.probed_top - result.probed_bottom;
    const auto beyond = [&](double top, double bottom) {
      return std::max(0.0, top - result.probed_top) + std::max(0.0, result.probed_bottom - bottom);
    };
    const auto band = [&](double top, double bottom) {
      return length(top) + " to " + length(bottom);
    };
    // The bore's own range: the ends the plan's depth gives (a probed end cannot lie beyond).
    double top = 0.0, bottom = 0.0;
    bool own = false;
    if (result.position && !result.position->projected) {
      top = result.position->range_top, bottom = result.position->range_bottom, own = true;
    } else if (result.perpendicularity) {
      top = result.perpendicularity->range_top;
      bottom = result.perpendicularity->range_bottom;
      own = true;
    }
    if (own && result.depth_source != RangeSource::probed_extent) {
      const double extra = beyond(top, bottom);
      const double overlap =
          std::min(top, result.probed_top) - std::max(bottom, result.probed_bottom);
      // With the direction held at nominal (axis_direction = "nominal") no tilt is
      // extrapolated: the plan states the axis is parallel to its nominal direction, so the
      // range beyond the band is a warning that the verdict rests on that statement.
      if (!(overlap > 0.0) || extra > options_.depth_error_factor * probed)
        add(result.direction_held ? FindingSeverity::warning : FindingSeverity::error, feature,
            at.at("depth"),
            "the depth range " + band(top, bottom) + " (heights from A) " +
                (overlap > 0.0 ? "extends " + length(extra) + " beyond the probed band " +
                                     band(result.probed_top, result.probed_bottom) +
                                     ", more than " +
                                     detail::format_number(options_.depth_error_factor, 0) +
                                     " times its length " + length(probed)
                               : "does not meet the probed band " +
                                     band(result.probed_top, result.probed_bottom)) +
                (result.direction_held
                     ? std::string(": the axis is taken parallel to its nominal direction there, "
                                   "as the plan's axis_direction says")
                     : std::string(": the axis would be judged where it was not measured; probe "
                                   "the bore over its depth or correct it")));
    }
    if (result.position && result.position->projected) {
      const PositionResult& p = *result.position;
      const double extra = beyond(p.range_top, p.range_bottom);
      if (extra > options_.projected_warning_factor * probed)
        add(FindingSeverity::warning, feature, at.at("position.projected"),
            "the projected zone " + band(p.range_top, p.range_bottom) + " lies up to " +
                length(extra) + " beyond the probed band " +
                band(result.probed_top, result.probed_bottom) + ", more than its length " +
                length(probed) + ": the verdict rests on extrapolating the axis");
    }
  }

  const PartPlan& plan_;
  const PlausibilityOptions& options_;
  double per_unit_;
  std::string unit_;
  PlausibilitySummary summary_;
};

}  // namespace

bool PlausibilitySummary::has_error() const noexcept {
  return std::any_of(findings.begin(), findings.end(), [](const PlausibilityFinding& f) {
    return f.severity == FindingSeverity::error;
  });
}

PlausibilitySummary assess_plausibility(const PartPlan& plan, const PartInputs& inputs,
                                        const PartEvaluation& evaluation,
                                        const PlausibilityOptions& options) {
  if (inputs.datums.size() != plan.datums.size() || inputs.bores.size() != plan.bores.size() ||
      evaluation.bores.size() != plan.bores.size())
    throw std::invalid_argument("assess_plausibility: the inputs or the evaluation do not match "
                                "the plan");
  return Assessor(plan, options).run(inputs, evaluation);
}

void require_plausible(const PartPlan& plan, const PlausibilitySummary& summary) {
  for (const PlausibilityFinding& f : summary.findings)
    if (f.severity == FindingSeverity::error)
      throw InputError(plan.file.string(), f.where.line, f.message, f.where.key);
}

void check_plausibility(const PartPlan& plan, const PartInputs& inputs,
                        PartEvaluation& evaluation, const PlausibilityOptions& options) {
  const PlausibilitySummary summary = assess_plausibility(plan, inputs, evaluation, options);
  require_plausible(plan, summary);
  evaluation.warnings.insert(evaluation.warnings.begin(), plan.warnings.begin(),
                             plan.warnings.end());
  for (const PlausibilityFinding& f : summary.findings) {
    auto bore = std::find_if(evaluation.bores.begin(), evaluation.bores.end(),
                             [&](const BoreResult& b) { return f.feature == "bore " + b.id; });
    // A bore's own warnings are listed under the bore: without the "bore P1: " prefix.
    if (bore != evaluation.bores.end())
      bore->warnings.push_back(f.message.substr(f.feature.size() + 2));
    else
      evaluation.warnings.push_back(f.message);
  }
}

}  // namespace cylzone
