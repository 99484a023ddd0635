#pragma once
/// \file summary_audit.hpp
/// The audit of another system's summary (summary.hpp) against the raw points: per bore, the
/// summary's figures beside cylzone's single-plane figures at the same plane, cylzone's
/// full-depth position and perpendicularity, and a finding on the summary. docs/evaluation.md
/// ("Auditing another system's summary") states every rule.
///
/// The audit is a pure function on top of evaluate_part's result: no IO, no printing, no
/// state. The single-plane figures are those of the toleranced axis in the datum frame as built
/// (the frame another system would build; no datum mobility), the full-depth position is the
/// one that decides the bore's position characteristic (decide stage).
///
/// Findings, in this order of precedence:
///  1. internally inconsistent: the summary's own position differs from 2 sqrt(dx^2 + dy^2) of
///     its own deviations by more than their printed rounding allows (common practice: the
///     single-plane position is twice the radial deviation);
///  2. disagrees at the same plane: its centre and cylzone's at the same plane are further
///     apart than `same_plane_tolerance` (as a diameter) plus its printed rounding: datum
///     handling or fitting differ, and the part-level explanation names the likeliest cause;
///  3. blind to tilt: it agrees at its plane and passes the bore, but the axis leaves its zone
///     over the full depth (or the summary's own two depths show it);
///  4. verdict differs: it agrees at its plane but its verdict is not cylzone's full-depth
///     verdict for another reason (a different tolerance, bonus or reference);
///  5. consistent. A bore that cylzone could not evaluate or decide is not decided.
/// Findings 1 to 4 overturn the summary's verdict on that bore.

#include <Eigen/Core>
#include <cstddef>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "cylzone/audit/summary.hpp"
#include "cylzone/check/evaluate_part.hpp"
#include "cylzone/decide/characteristic.hpp"
#include "cylzone/plan/plan.hpp"

namespace cylzone {

struct AuditOptions {
  /// mm, as a diameter: 2 x the distance between the summary's centre and cylzone's at the same
  /// plane above which they disagree (plus the summary's printed rounding).
  double same_plane_tolerance = default_same_plane_tolerance;
  DecisionRule rule;  ///< how cylzone's own characteristics are decided
};

enum class SummaryFinding {
  consistent,
  internally_inconsistent,
  disagrees_at_same_plane,
  blind_to_tilt,
  verdict_differs,
  not_decided
};
/// "consistent", "internally inconsistent", "disagrees at the same plane", "blind to tilt",
/// "verdict differs", "not decided".
std::string_view summary_finding_name(SummaryFinding finding) noexcept;

/// Where cylzone's single-plane figure is taken.
enum class PlaneLabel {
  stated,     ///< the summary's own z
  mouth,      ///< the top of the bore's depth (plan `depth.top`, else its probed top)
  centroid,   ///< the height of the centroid of the bore's points
  mid_depth   ///< half-way between the top and the bottom of the bore's depth
};
/// "stated plane", "mouth", "probed centroid", "mid-depth".
std::string_view plane_label_name(PlaneLabel label) noexcept;

/// cylzone's single-plane figures at one plane.
struct PlaneFigures {
  PlaneLabel label = PlaneLabel::mouth;
  double height = 0.0;                               ///< mm from A along the nominal direction
  Eigen::Vector2d offset = Eigen::Vector2d::Zero();  ///< (dx, dy) from the true position, mm
  double position = 0.0;                             ///< 2 |offset|
};

/// One centre the summary reports, against cylzone at the same plane.
struct ReportedCentre {
  std::size_t line = 0;                 ///< the summary row's line
  std::optional<double> height;         ///< the summary's z, mm; empty: not stated
  Eigen::Vector2d offset = Eigen::Vector2d::Zero();    ///< (dx, dy) from true position, mm
  Eigen::Vector2d rounding = Eigen::Vector2d::Zero();  ///< half units of dx, dy as printed, mm
  double position = 0.0;                ///< 2 |offset|, recomputed
  /// cylzone at this plane: at the stated z, or (no z) at the mouth, the probed centroid and
  /// mid-depth, each labelled.
  std::vector<PlaneFigures> cylzone;
  /// The plane compared (index into `cylzone`): the stated one, else the closest of the three.
  std::size_t compared = 0;
  /// 2 |offset - cylzone[compared].offset|, mm, and the largest it may be to agree
  /// (same_plane_tolerance + 2 |rounding|).
  double discrepancy = 0.0;
  double discrepancy_allowed = 0.0;
};

struct BoreAudit {
  std::string id;
  // ---- the summary's figures
  std::vector<ReportedCentre> centres;   ///< one, or two (two depths)
  std::optional<double> reported_position;  ///< mm
  double position_rounding = 0.0;
  std::optional<double> reported_diameter;  ///< mm
  /// The summary's verdict on the bore; `verdict_implied` when it prints none and its position
  /// (else its 2D position) was compared with cylzone's allowed zone instead.
  std::optional<bool> reported_conforms;
  bool verdict_implied = false;
  std::string verdict_text;
  /// The summary's arithmetic: max over its centres of 2 sqrt(dx^2 + dy^2), the allowance of
  /// its rounding, and whether the printed position is within it of the recomputed one.
  double recomputed_position = 0.0;
  double consistency_allowance = 0.0;
  bool internally_consistent = true;
  /// Two depths: the line through the two reported centres over cylzone's evaluated range.
  std::optional<double> two_depth_position;
  // ---- cylzone over the full depth
  std::string not_evaluated;             ///< why cylzone has no figures for the bore
  std::string position_id;               ///< the deciding characteristic, e.g. "P2/position"
  double range_top = 0.0, range_bottom = 0.0;
  double position = 0.0, allowed = 0.0;
  Verdict position_verdict = Verdict::not_proven;
  std::optional<double> perpendicularity, perpendicularity_allowed;
  std::optional<Verdict> perpendicularity_verdict;
  std::optional<double> leaves_zone_at;
  double least_squares_diameter = 0.0, mating_envelope = 0.0;
  // ---- the finding
  SummaryFinding finding = SummaryFinding::not_decided;
  bool overturned = false;  ///< findings 1 to 4
  std::string reason;       ///< one line in words, lengths in the plan's unit
};

/// The likeliest common cause of same-plane differences (docs/evaluation.md says how it is
/// chosen): every compared bore's difference (summary - cylzone) fitted by one model.
enum class FrameExplanation {
  none,              ///< no bore disagrees at the same plane
  origin_shift,      ///< all bores off by one common vector
  rotation_about_a,  ///< offsets grow linearly with the distance from B's axis, at right angles
  association_or_fit ///< neither: a different association of A or a different fit of the bore
};
/// "none", "origin shift", "rotation about A", "different association or fit".
std::string_view frame_explanation_name(FrameExplanation e) noexcept;

struct UnmatchedRow {
  std::size_t line = 0;
  std::string id;
};

struct AuditResult {
  std::vector<BoreAudit> bores;          ///< matched bores, plan order
  std::vector<UnmatchedRow> unmatched_rows;   ///< summary rows naming no plan bore, file order
  std::vector<std::string> unmatched_bores;   ///< plan bores no row names, plan order
  double same_plane_tolerance = 0.0;     ///< mm
  FrameExplanation explanation = FrameExplanation::none;
  Eigen::Vector2d shift = Eigen::Vector2d::Zero();  ///< origin_shift: summary - cylzone, mm
  double rotation_rad = 0.0;             ///< rotation_about_a: counter-clockwise seen from +z
  std::string explanation_text;          ///< one line in words, lengths in the plan's unit

  bool any_overturned() const noexcept;
  bool any_not_decided() const noexcept;
};

/// Audits `summary` against an evaluation of `plan` (evaluate_part, or check_part's result
/// turned into one). Rows are matched to bores by id, exactly; a bore named by two rows has two
/// depths (both rows need a z, and different ones). Throws InputError (the summary file, the
/// row's line) for more than two depths of one bore, two rows at the same plane, or two depths
/// without a stated z; std::invalid_argument when `evaluation` does not match `plan`.
AuditResult audit_summary(const PartPlan& plan, const PartEvaluation& evaluation,
                          const SummaryTable& summary, const AuditOptions& options = {});

}  // namespace cylzone
