#pragma once
/// \file datum_frame.hpp
/// The datum reference frame built from probed datum features (ASME Y14.5-2018 section 4 /
/// ISO 5459:2011). Convention, used everywhere in cylzone (docs/datum-frame.md):
///  * z is the normal of the associated datum plane A, pointing OUT of the material;
///  * the origin is where the axis of datum B (its related actual mating envelope, constrained
///    perpendicular to A) meets plane A; without B, the projection of the measurement origin;
///  * x is clocked by datum C so that C lies at its basic location (bore/pin), its outward
///    normal has its basic direction (plane), or its centre plane runs from B toward C's basic
///    location (slot/tab); without C, x is the measurement x (or y) axis
///    projected onto A, and rotation about z is a free degree of freedom;
///  * y = z cross x (right-handed). Depths inside the material are negative z.

#include <Eigen/Core>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "cylzone/fit/fit_cylinder.hpp"
#include "cylzone/fit/fit_plane.hpp"
#include "cylzone/plan/plan.hpp"
#include "cylzone/io/point_cloud.hpp"
#include "cylzone/prepare/stray_points.hpp"

namespace cylzone {

/// Rigid transform from measurement coordinates to the frame: p_frame = rotation (p - origin).
struct DatumFrame {
  Eigen::Matrix3d rotation = Eigen::Matrix3d::Identity();  ///< rows: frame x, y, z axes
  Eigen::Vector3d origin = Eigen::Vector3d::Zero();         ///< measurement coordinates

  Eigen::Vector3d point_to_frame(const Eigen::Vector3d& p) const { return rotation * (p - origin); }
  Eigen::Matrix3Xd points_to_frame(const Eigen::Matrix3Xd& p) const {
    return rotation * (p.colwise() - origin);
  }
  Eigen::Vector3d direction_to_frame(const Eigen::Vector3d& d) const { return rotation * d; }
  Eigen::Vector3d point_to_measurement(const Eigen::Vector3d& q) const {
    return rotation.transpose() * q + origin;
  }
};

struct PlaneDatumResult {
  char label = 'A';
  PlaneAssociation association = PlaneAssociation::tangent_least_squares;
  PlaneFit plane;  ///< measurement coordinates; normal out of the material
  double flatness = 0.0;  ///< minimum-zone flatness of the datum feature's points
  /// The minimum-zone plane of the datum feature's points (fit_plane_minimum_zone, with the
  /// frame's fit options) that `flatness` and a minimum-zone or tangent minimax association
  /// rest on, its residual values released (form and rms kept): a further frame over the same
  /// points takes it (DatumFrameOptions::a_minimum_zone) instead of fitting it again.
  std::optional<PlaneFit> minimum_zone;
  bool material_side_inferred = false;
  /// Suspect points of the datum feature, screened against its least-squares plane's residuals
  /// along the outward normal (positive: standing proud of the surface). Reported only.
  StrayPointReport stray_points;
};

/// A cylindrical datum feature of size (B, or C when it is a bore or pin).
struct SizeDatumResult {
  char label = 'B';
  FeatureKind kind = FeatureKind::bore;
  /// Related actual mating envelope, axis constrained perpendicular to A (measurement coords):
  /// maximum inscribed cylinder of a bore, minimum circumscribed of a pin.
  CylinderFit related_envelope;
  double mating_size = 0.0;  ///< diameter of the related envelope
  /// The plan datum's settled boundary (PlanDatum::boundary, set by validate_plan): MMB if
  /// any reference uses it, else LMB if any, else RMB.
  MaterialBoundary boundary = MaterialBoundary::rmb;
  std::optional<double> mmb_size;  ///< the plan's MMB, or else the MMC size when a size is given
  /// Radius of the circle within which the datum axis may move relative to an MMB simulator:
  /// (mating - MMB) / 2 for a bore, (MMB - mating) / 2 for a pin (ASME Y14.5-2018, datum
  /// feature shift; datum_shift_at_mmb). Computed only when `boundary` is MMB; 0 otherwise,
  /// without a size, and (with a note) when the feature violates its MMB.
  double shift_allowance = 0.0;
  std::optional<SizeLimits> size;
  Eigen::Vector3d axis_on_a = Eigen::Vector3d::Zero();  ///< where its axis meets A (measurement)
  /// Suspect points, screened against the residuals of its least-squares cylinder held
  /// perpendicular to A (positive: away from the axis). Reported only.
  StrayPointReport stray_points;
};

/// Clocking datum C given as a plane (tangent plane on its material side, perpendicular to A).
struct ClockingPlaneResult {
  PlaneFit plane;  ///< measurement coordinates; normal out of the material
  /// Suspect points, screened against its least-squares plane's residuals along the outward
  /// normal. Reported only.
  StrayPointReport stray_points;
};

/// Clocking datum C given as a width feature of size: a slot (internal: two parallel faces
/// facing each other) or a tab (external: two parallel faces facing away from each other).
/// Associated at RMB as ASME Y14.5-2018 simulates a tertiary datum feature of size (from memory
/// for the clause): two parallel planes perpendicular to A, symmetric about a centre plane that
/// contains datum axis B, expanding (slot) or contracting (tab) to the feature while the centre
/// plane turns about B's axis. The related mating width is the largest (slot) or smallest (tab)
/// width so reached; the centre plane clocks the frame (docs/datum-frame.md).
struct ClockingWidthResult {
  char label = 'C';
  FeatureKind kind = FeatureKind::slot;  ///< slot or tab
  double mating_width = 0.0;  ///< distance between the simulator's planes, mm
  /// Unit normal of the centre plane, measurement coordinates, perpendicular to A:
  /// z x centre_direction (it points to the face called positive below).
  Eigen::Vector3d centre_plane_normal = Eigen::Vector3d::UnitY();
  /// Unit direction of the centre plane in A, from B's axis toward the feature's points
  /// (measurement coordinates). The frame is clocked so that it has C's basic direction.
  Eigen::Vector3d centre_direction = Eigen::Vector3d::UnitX();
  /// The centroid of C's points projected onto A and onto the centre plane (measurement
  /// coordinates): the feature's location on its centre line, used by the datum mobility.
  Eigen::Vector3d centre_on_a = Eigen::Vector3d::Zero();
  /// C's points projected onto A (measurement coordinates), split by face: the face on the
  /// side of +centre_plane_normal and the other. The datum mobility checks an MMB simulator
  /// against them.
  Eigen::Matrix3Xd positive_face;
  Eigen::Matrix3Xd negative_face;
  MaterialBoundary boundary = MaterialBoundary::rmb;  ///< as SizeDatumResult::boundary
  std::optional<SizeLimits> size;
  std::optional<double> mmb_size;  ///< the plan's MMB, or else the MMC width when a size is given
  /// As SizeDatumResult::shift_allowance, for the width: (mating - MMB) / 2 for a slot,
  /// (MMB - mating) / 2 for a tab, how far the centre plane may move off an MMB simulator's;
  /// computed only at MMB; 0 otherwise, without a size, and (with a note) when the feature
  /// violates its MMB.
  double shift_allowance = 0.0;
  int iterations = 0;  ///< objective evaluations of the one-dimensional search
  /// Suspect points, screened against the residuals of each face's least-squares line in A
  /// (positive: into the gap for a slot, away from the material... see datum_frame.cpp).
  StrayPointReport stray_points;
};

/// A point of a toleranced feature that settles what the datums leave free (see
/// DatumFrameOptions::anchors).
struct FrameAnchor {
  std::string name;         ///< for the frame's note, e.g. "bore P1"
  Eigen::Vector3d point;    ///< measurement coordinates, e.g. the centroid of the bore's points
  Eigen::Vector2d basic;    ///< the feature's basic location (x, y) in the frame
};

struct DatumFrameOptions {
  /// Overrides datum A's association (used for the sensitivity study).
  std::optional<PlaneAssociation> a_association;
  /// What fixes the freedoms the datum reference leaves free (no B: translation in A; no C:
  /// rotation about A's normal). The standards leave them to the evaluation (the datum
  /// mobility), but every figure reported in the frame (deviations, axis points, the frame-fixed
  /// position, the mobility's motion) needs a start that moves with the part, not with the
  /// measuring machine, or it would depend on how the part sat on the table. With B and no C,
  /// the first anchor away from B's axis and from the origin turns x so that its projection
  /// onto A lies in the direction of its basic location; without B, the first two anchors with
  /// distinct basic locations fix both the rotation and the origin (the first anchor's
  /// projection at its basic location). Empty, or too few: the measurement x axis and origin
  /// projected onto A, as the frame's note says.
  std::vector<FrameAnchor> anchors;
  FitOptions fit;  ///< its `threads` is the thread option of the frame's fits and screens
  /// Datum A's minimum-zone plane as an earlier frame over the SAME points with the same `fit`
  /// (threads aside) found it (PlaneDatumResult::minimum_zone): the frame uses it instead of
  /// fitting it again, with the same bits (the association study builds four more frames on
  /// a dense scan's face). Its point count must be A's (else std::invalid_argument).
  std::optional<PlaneFit> a_minimum_zone;
  /// Datum A's least-squares plane (fit_plane_least_squares) of the SAME points, fitted with
  /// `fit` less its fixed_direction and axis_hint (the options the frame fits A's planes
  /// with): the frame takes it as the tangent least-squares plane's and A's minimum-zone
  /// plane's start (fit_plane_minimum_zone from a least-squares plane) and, when it holds
  /// its residual values, as the least-squares association and for A's screen (also
  /// screen_datum_a), instead of fitting it again, with the same bits (evaluate_part fits it
  /// once, for the material side too, and releases its values). Shared, not copied: its values
  /// are one per point of a dense face. Its point count must be A's (else
  /// std::invalid_argument).
  std::shared_ptr<const PlaneFit> a_least_squares;
  /// The prepare stage of each datum feature (prepare.hpp): the stray-point screen, on or off.
  bool stray_screen = true;
  StrayPointOptions stray_points;
  /// A's flatness (PlaneDatumResult::flatness) when A's association does not give it: its
  /// minimum-zone fit. Off (a Monte Carlo trial: no bore characteristic reads it), flatness is
  /// left 0 unless the association is a minimax or minimum-zone plane; nothing else changes.
  bool flatness = true;
  /// A's stray-point screen left to the caller (screen_datum_a), who runs it alongside other
  /// work (evaluate_part: beside the bores). The frame returned then has no A screen's record
  /// nor note, and keeps A's plane residual values for it; nothing else in it depends on that
  /// screen. When B or C fails the screen runs all the same, so that its failure is reported
  /// first as without this option.
  bool defer_a_screen = false;
};

/// One datum feature's specification paired with its points (measurement coordinates, as
/// loaded). Both are referenced, not copied: they must outlive the call.
struct DatumInput {
  const PlanDatum& plan;
  const PointCloud& points;
};

struct DatumFrameResult {
  DatumFrame frame;
  PlaneDatumResult a;
  std::optional<SizeDatumResult> b;
  std::optional<SizeDatumResult> c_feature;  ///< C as a bore or pin
  std::optional<ClockingPlaneResult> c_plane;  ///< C as a plane
  std::optional<ClockingWidthResult> c_width;  ///< C as a slot or tab
  bool rotation_fixed = false;     ///< C present
  bool translation_fixed = false;  ///< B present
  /// Remarks on the frame, including one per datum feature with suspect (stray) points.
  std::vector<std::string> notes;
};

/// Direction from plane A into the material, inferred as the side of A on which the bores'
/// points lie (bores are cut into the material): +-a_least_squares.normal. Points within A's
/// form (residual span) of the plane do not count; at least three in four of the others must be
/// on one side. Throws FitError when the points straddle A more evenly, or none is off A.
Eigen::Vector3d infer_material_side(const PlaneFit& a_least_squares,
                                    const std::vector<const Eigen::Matrix3Xd*>& bore_points);

/// Builds the frame from `datums` (A first, then B and C when present); `a_material_side` is
/// the direction into the material for A in measurement coordinates (given in the plan or
/// inferred). Each datum feature is prepared (prepare.hpp) inside, as soon as the element its
/// screen is judged against is known (B's cylinder is held perpendicular to A); its record is
/// the `stray_points` of its result. No IO, no state. Throws FitError naming the datum for
/// degenerate datum features (e.g. "datum B: axis parallel to A ...", or a fit's own message
/// prefixed "datum B: "), and std::invalid_argument for no datum or more than three.
DatumFrameResult establish_datum_frame(const std::vector<DatumInput>& datums,
                                       const Eigen::Vector3d& a_material_side,
                                       const DatumFrameOptions& options = {});

/// Datum A's stray-point screen for a frame built with DatumFrameOptions::defer_a_screen: the
/// same screen (stray_points.hpp, on A's least-squares plane's residuals) and the same note as
/// the frame's own, placed first among `frame.notes` as there, so that the frame ends with the
/// same bits as one that screened A itself (the screen's result does not depend on its threads,
/// `options.stray_points.threads`). `a_points` are A's points the frame was built from; A's plane
/// residual values must still be held (else std::invalid_argument). Throws FitError "datum A:
/// ..." as the frame would. No IO, no state.
void screen_datum_a(const PointCloud& a_points, DatumFrameResult& frame,
                    const DatumFrameOptions& options);

}  // namespace cylzone
