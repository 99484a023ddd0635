// The datum reference frame from probed datum features (ASME Y14.5-2018 section 4; ISO
// 5459:2011), with the convention of datum_frame.hpp and docs/datum-frame.md.
//
// Order of constraint follows the datum precedence: A fixes the normal (z) and the height; B,
// associated with A's orientation held, fixes the origin in A; C, associated with A's
// orientation held and B's location known, fixes the rotation about z.
#include "cylzone/datum/datum_frame.hpp"

#include <Eigen/Eigenvalues>
#include <Eigen/Geometry>
#include <algorithm>
#include <array>
#include <cmath>
#include <cstddef>
#include <exception>
#include <limits>
#include <optional>
#include <stdexcept>
#include <string>
#include <utility>
#include <vector>

#include "cylzone/core/errors.hpp"
#include "cylzone/fit/fit_circle.hpp"
#include "cylzone/evaluate/material_condition.hpp"
#include "cylzone/datum/tangent_plane.hpp"
#include "cylzone/prepare/prepare.hpp"
#include "datum/detail/clocking_width.hpp"
#include "detail/fit_support.hpp"
#include "detail/parallel.hpp"
#include "prepare/detail/stray_point_message.hpp"
#include "datum/detail/tangent_line.hpp"

namespace cylzone {
namespace {

constexpr double degrees_per_radian = 180.0 / 3.14159265358979323846;
// A secondary or tertiary feature whose least-squares axis (or plane normal) is more than this
// from the orientation the frame needs (axis along A's normal; plane normal in A) is taken to
// be the wrong feature for the role: the association would be meaningless, not merely poor.
constexpr double orientation_limit_deg = 45.0;
// Beyond this, the feature's own orientation is worth a note: its envelope is held to A.
constexpr double orientation_note_deg = 1.0;
// Without C, measurement x is used unless it is within about 8 degrees of A's normal.
constexpr double nearly_parallel_cosine = 0.99;
// See tangent_plane.cpp: the material side must make a clear angle with the plane.
constexpr double least_material_cosine = 0.2;

std::string label_text(char label) { return std::string("datum ") + label; }

// The boundary the plan settled for the datum feature (validate_plan), its MMB size (the plan's
// or else its MMC size, reported whatever the boundary) and, at MMB only, the shift it allows:
// a feature violating its MMB allows nothing and gets a note (ASME Y14.5-2018 datum feature
// shift; common practice). Only MMB moves the datum: RMB and LMB leave the shift at 0.
void set_mmb_boundary(const PlanDatum& datum, double mating, const std::string& measure,
                      const std::string& allowance_name, MaterialBoundary& boundary,
                      std::optional<double>& mmb_size, double& shift_allowance,
                      std::vector<std::string>& notes) {
  boundary = datum.boundary;
  const DatumShiftAtMmb shift = datum_shift_at_mmb(datum.kind, datum.size, datum.mmb_size, mating);
  mmb_size = shift.boundary_size;
  if (boundary != MaterialBoundary::mmb || !mmb_size) return;
  shift_allowance = shift.allowance;
  if (shift.violates)
    notes.push_back(label_text(datum.label) + ": related mating " + measure + " " +
                    detail::format_number(mating, 4) + " mm violates its MMB " +
                    detail::format_number(*mmb_size, 4) + " mm: it does not fit an MMB simulator, no " +
                    allowance_name + " is available");
}

// Runs `associate`, naming the datum in any FitError it throws.
template <class Associate>
auto for_datum(char label, Associate&& associate) -> decltype(associate()) {
  try {
    return associate();
  } catch (const FitError& error) {
    throw FitError(label_text(label) + ": " + error.what());
  }
}

double angle_deg(const Eigen::Vector3d& a, const Eigen::Vector3d& b) {
  return std::atan2(a.cross(b).norm(), a.dot(b)) * degrees_per_radian;
}

// Angle between the feature's own least-squares axis and A's normal, 0..90 degrees; empty when
// the points fix no axis (one cross-section of a short bore gives the circle's normal instead).
std::optional<double> own_axis_angle_deg(const PointCloud& cloud, const Eigen::Vector3d& z,
                                         const FitOptions& fit) {
  FitOptions free = fit;
  free.fixed_direction.reset();
  free.axis_hint = z;
  try {
    // Only the axis is read: no residual pass or coverage (the same axis and errors).
    const Axis axis = cloud.has_vectors()
                          ? fit_cylinder_least_squares_axis(cloud.points, cloud.vectors, free)
                          : fit_cylinder_least_squares_axis(cloud.points, free);
    return angle_deg(axis.direction, z);
  } catch (const FitError&) {
  }
  try {
    return angle_deg(fit_circle_least_squares(cloud.points, free).normal, z);
  } catch (const FitError&) {
  }
  return std::nullopt;
}

// The frame is built from all points; a suspect point is only named.
constexpr const char* stray_closing = "the frame uses all points: review the data";

// Adds the note for a datum feature with suspect points: "datum B: 2 suspect point(s) ...".
void note_stray_points(std::vector<std::string>& notes, char label,
                       const StrayPointReport& report,
                       const std::vector<detail::SuspectContact>& contacts) {
  if (report.points.empty()) return;
  notes.push_back(label_text(label) + ": " +
                  detail::stray_point_message(report, contacts, stray_closing));
}

// The minimum-zone plane `zone` of `points` with its residual values, recomputed by the fit's
// own expression (fit_plane_minimum_zone) when they were released.
PlaneFit with_residuals(const Eigen::Matrix3Xd& points, PlaneFit zone) {
  if (zone.residuals.values.size() != points.cols())
    zone.residuals = detail::make_residuals(
        ((points.colwise() - zone.point).transpose() * zone.normal).eval());
  return zone;
}

// Datum plane A by its association method; normal out of the material, residuals along it.
// `zone_of_a` gives A's minimum-zone plane (fitted once per frame, or the caller's): the
// minimum-zone and tangent minimax associations are built on it. `least_squares`, when not
// null, is A's least-squares plane with `fit` (the caller's, DatumFrameOptions::
// a_least_squares): the tangent least-squares plane starts from it and the least-squares
// association is it, rather than a fit of its own.
template <class ZoneOfA>
PlaneFit associate_plane(const Eigen::Matrix3Xd& points, PlaneAssociation method,
                         const Eigen::Vector3d& material_side, const FitOptions& fit,
                         ZoneOfA&& zone_of_a, const PlaneFit* least_squares) {
  switch (method) {
    case PlaneAssociation::tangent_least_squares:
      return least_squares
                 ? fit_plane_tangent_least_squares(points, material_side, *least_squares, fit)
                 : fit_plane_tangent_least_squares(points, material_side, fit);
    case PlaneAssociation::tangent_minimax:
      return tangent_minimax_from_zone(points, zone_of_a(), material_side);
    case PlaneAssociation::least_squares:
    case PlaneAssociation::minimum_zone:
      break;
  }
  PlaneFit plane = method != PlaneAssociation::least_squares ? with_residuals(points, zone_of_a())
                   : least_squares                            ? *least_squares
                                                              : fit_plane_least_squares(points, fit);
  const Eigen::Vector3d side = detail::checked_direction(material_side, "the material side of A");
  const double cosine = plane.normal.dot(side);
  if (std::abs(cosine) < least_material_cosine)
    throw FitError("the material side direction lies almost in the plane (" +
                   detail::format_number(std::acos(std::abs(cosine)) * degrees_per_radian, 1) +
                   " degrees from its normal); it must point into the material");
  if (cosine > 0.0) {
    plane.normal = -plane.normal;
    plane.residuals.values = -plane.residuals.values;
  }
  return plane;
}

// The prepare options of the datum features' stray-point screens, on `threads` threads.
PrepareOptions screen_options(const DatumFrameOptions& options, std::size_t threads) {
  PrepareOptions prepare;
  prepare.stray_screen = options.stray_screen;
  prepare.stray_points = options.stray_points;
  prepare.stray_points.threads = threads;
  return prepare;
}

// Where the line through `axis` meets plane A.
Eigen::Vector3d meet_plane(const Axis& axis, const PlaneFit& plane) {
  const double t = (plane.point - axis.point).dot(plane.normal) / axis.direction.dot(plane.normal);
  return axis.point + t * axis.direction;
}

// A bore or pin used as datum B or as clocking datum C: its related actual mating envelope
// with the axis held along A's normal (maximum inscribed for a bore, minimum circumscribed for
// a pin: ASME Y14.5-2018, related actual mating envelope).
SizeDatumResult associate_size_datum(const PlanDatum& datum, const PointCloud& cloud,
                                     const PlaneFit& a, const FitOptions& fit,
                                     const PrepareOptions& prepare,
                                     std::vector<std::string>& notes) {
  const Eigen::Vector3d& z = a.normal;
  if (const std::optional<double> angle = own_axis_angle_deg(cloud, z, fit)) {
    // The axis direction's sign is arbitrary: 0 and 180 degrees are both perpendicular to A.
    const double tilt = std::min(*angle, 180.0 - *angle);
    if (tilt > orientation_limit_deg)
      throw FitError("axis parallel to A (its least-squares axis is " +
                     detail::format_number(tilt, 1) +
                     " degrees from A's normal); a datum feature of size must cross A");
    if (tilt > orientation_note_deg)
      notes.push_back(label_text(datum.label) + ": its least-squares axis is " +
                      detail::format_number(tilt, 2) +
                      " degrees from A's normal; its mating envelope is held perpendicular to A");
  }
  FitOptions held = fit;
  held.fixed_direction = z;
  held.axis_hint = z;
  SizeDatumResult result;
  result.label = datum.label;
  result.kind = datum.kind;
  result.related_envelope = datum.kind == FeatureKind::pin
                                ? fit_cylinder_minimum_circumscribed(cloud.points, held)
                                : fit_cylinder_maximum_inscribed(cloud.points, held);
  result.mating_size = result.related_envelope.diameter();
  result.axis_on_a = meet_plane(result.related_envelope.axis, a);
  // The envelope's own warnings (coverage, a non-unique envelope) concern the datum: pass them on.
  for (const std::string& warning : result.related_envelope.summary.warnings)
    notes.push_back(label_text(datum.label) + ": related mating envelope: " + warning);
  // Prepare (prepare.hpp): the stray-point screen on the residuals of the least-squares
  // cylinder held perpendicular to A; the datum axis rests on the envelope's contacts.
  // Screen off (a Monte Carlo trial): no record.
  if (prepare.stray_screen) {
    PrepareOptions screen = prepare;
    screen.fit = held;
    result.stray_points = screen_feature(datum.kind, cloud, screen);
    const std::vector<std::size_t> contacts = suspect_contacts(
        result.stray_points, result.related_envelope.residuals.values,
        datum.kind == FeatureKind::pin ? ContactSide::highest : ContactSide::lowest);
    note_stray_points(notes, datum.label, result.stray_points,
                      {{contacts, "its related mating envelope",
                        "the datum axis and its mating size rest on"}});
  }
  result.size = datum.size;
  set_mmb_boundary(datum, result.mating_size, "size", "datum shift", result.boundary,
                   result.mmb_size, result.shift_allowance, notes);
  return result;
}

// Frame x with a measured in-plane direction `measured` (unit, perpendicular to z) turned to
// the angle of `basic` (its direction in the frame): measured = cos(phi) x + sin(phi) y.
Eigen::Vector3d clocked_x(const Eigen::Vector3d& measured, const Eigen::Vector2d& basic,
                          const Eigen::Vector3d& z) {
  const Eigen::Vector2d unit = basic.normalized();
  return unit.x() * measured - unit.y() * z.cross(measured);
}

Eigen::Vector3d in_plane_unit(const Eigen::Vector3d& v, const Eigen::Vector3d& z) {
  return (v - v.dot(z) * z).normalized();
}

/// The frame's x axis and origin where the datums leave them free, from the part's anchors.
struct AnchoredFreedoms {
  Eigen::Vector3d x;
  Eigen::Vector3d origin;
  std::string note;
};

/// See DatumFrameOptions::anchors. `origin` is B's axis on A when `translation_fixed`. Anchors
/// closer than 1e-6 of the part's size to the origin (or to each other), or with a basic
/// location as close to zero (or to each other's), cannot tell a direction and are passed over.
std::optional<AnchoredFreedoms> anchored_freedoms(const std::vector<FrameAnchor>& anchors,
                                                  const PlaneFit& a, const Eigen::Vector3d& z,
                                                  const Eigen::Vector3d& origin,
                                                  bool translation_fixed) {
  std::vector<Eigen::Vector3d> on_a;
  double size = 0.0;
  for (const FrameAnchor& anchor : anchors) {
    on_a.push_back(anchor.point - (anchor.point - a.point).dot(z) * z);
    size = std::max({size, anchor.basic.norm(), (on_a.back() - a.point).norm()});
  }
  const double small = 1e-6 * std::max(size, 1.0);
  const auto apart = [&](const Eigen::Vector3d& p, const Eigen::Vector3d& q) {
    return (p - q).norm() > small;
  };
  for (std::size_t i = 0; i < anchors.size(); ++i) {
    if (translation_fixed) {
      if (anchors[i].basic.norm() <= small || !apart(on_a[i], origin)) continue;
      return AnchoredFreedoms{
          clocked_x(in_plane_unit(on_a[i] - origin, z), anchors[i].basic, z), origin,
          "no datum C: rotation about A's normal is not constrained; the frame is turned so "
          "that the centroid of " + anchors[i].name +
              "'s points lies in the direction of its basic location"};
    }
    for (std::size_t j = i + 1; j < anchors.size(); ++j) {
      const Eigen::Vector2d basic = anchors[j].basic - anchors[i].basic;
      if (basic.norm() <= small || !apart(on_a[j], on_a[i])) continue;
      const Eigen::Vector3d x = clocked_x(in_plane_unit(on_a[j] - on_a[i], z), basic, z);
      const Eigen::Vector3d y = z.cross(x);
      return AnchoredFreedoms{
          x, on_a[i] - anchors[i].basic.x() * x - anchors[i].basic.y() * y,
          "no datum B or C: translation in A and rotation about A's normal are not "
          "constrained; the frame is placed so that the centroid of " + anchors[i].name +
              "'s points is at its basic location and that of " + anchors[j].name +
              "'s in the direction of theirs"};
    }
  }
  return std::nullopt;
}

// How far a plane with unit normal `normal` leans from perpendicular to A (normal z), degrees:
// 0 for a plane containing z, 90 for a plane parallel to A. The normal's sign is arbitrary.
double lean_from_perpendicular_deg(const Eigen::Vector3d& normal, const Eigen::Vector3d& z) {
  const double angle = angle_deg(normal, z);
  return 90.0 - std::min(angle, 180.0 - angle);
}

// Clocking datum plane C: the tangent least-squares plane of C's points constrained to contain
// A's normal, i.e. the tangent line of their projections onto A (detail/tangent_line.hpp).
ClockingPlaneResult associate_clocking_plane(const PlanDatum& datum, const PointCloud& cloud,
                                             const PlaneFit& a,
                                             const std::optional<Eigen::Vector3d>& b_axis_on_a,
                                             const FitOptions& fit,
                                             const PrepareOptions& prepare,
                                             std::vector<std::string>& notes) {
  const Eigen::Vector3d& z = a.normal;
  FitOptions plain = fit;
  plain.fixed_direction.reset();
  plain.axis_hint.reset();
  // Also checks the points (count, collinearity).
  const PlaneFit own = fit_plane_least_squares(cloud.points, plain);
  const double tilt = lean_from_perpendicular_deg(own.normal, z);
  if (tilt > orientation_limit_deg)
    throw FitError("plane parallel to A (its least-squares normal is " +
                   detail::format_number(90.0 - tilt, 1) +
                   " degrees from A's normal); a clocking plane must be perpendicular to A");
  if (tilt > orientation_note_deg)
    notes.push_back(label_text(datum.label) + ": its least-squares plane is " +
                    detail::format_number(tilt, 2) +
                    " degrees out of perpendicular to A; it is associated perpendicular to A");

  const Eigen::Matrix3d basis = detail::basis_from_direction(z);
  const Eigen::Matrix2Xd projected = detail::planar_coordinates(cloud.points, a.point, basis);
  Eigen::Vector3d side;
  if (datum.material_side) {
    side = detail::checked_direction(*datum.material_side, "the material side of C");
    if (side.cross(z).norm() < least_material_cosine)
      throw FitError("its material side direction is almost along A's normal; it must point "
                     "into the material across plane C");
  } else if (b_axis_on_a) {
    // The side containing B's axis: B is a feature of the same part, so it lies in the material
    // behind the face C.
    const double offset = (*b_axis_on_a - own.point).dot(own.normal);
    const double band = std::max(own.residuals.form,
                                 1e-9 * detail::data_scale(cloud.points, own.point));
    if (std::abs(offset) <= band)
      throw FitError("the axis of datum B lies in plane C, so C's material side cannot be told; "
                     "give C's material_side in the plan");
    side = *b_axis_on_a - detail::centroid(cloud.points);
  } else {
    throw FitError("its material side is needed: there is no datum B to tell it");
  }
  const Eigen::Vector2d side_in_a = basis.leftCols<2>().transpose() * side;
  const detail::TangentLine2d line =
      detail::fit_line_2d_tangent_least_squares(projected, side_in_a, fit);

  ClockingPlaneResult result;
  PlaneFit& plane = result.plane;
  plane.normal = (basis.leftCols<2>() * line.normal).normalized();
  const Eigen::Vector3d on_line = a.point + basis.leftCols<2>() * line.point;
  const Eigen::Vector3d centre = detail::centroid(cloud.points);
  plane.point = centre - (centre - on_line).dot(plane.normal) * plane.normal;
  // The 2D residuals, recomputed in space and moved so that the largest is exactly 0.
  Eigen::VectorXd residuals = (cloud.points.colwise() - plane.point).transpose() * plane.normal;
  const double outermost = residuals.maxCoeff();
  plane.point += outermost * plane.normal;
  residuals.array() -= outermost;
  plane.residuals = detail::make_residuals(std::move(residuals));
  plane.summary.method = FitMethod::least_squares;
  plane.summary.status = line.status;
  plane.summary.iterations = line.iterations;
  plane.summary.point_count = cloud.size();
  plane.summary.message =
      "tangent least-squares plane perpendicular to A: " +
      detail::iteration_message(line.status, line.iterations, fit) + ", " +
      std::to_string(line.contacts) + (line.contacts == 1 ? " contact point" : " contact points");
  // Prepare (prepare.hpp): the stray-point screen on the least-squares plane's residuals; the
  // clocking plane rests on its contacts (residual 0, all others below).
  if (!prepare.stray_screen) return result;  // no record: no copy of the cloud to make one
  PrepareOptions screen = prepare;
  screen.fit = plain;
  screen.outward = plane.normal;
  result.stray_points = screen_feature(datum.kind, cloud, screen);
  note_stray_points(notes, datum.label, result.stray_points,
                    {{suspect_contacts(result.stray_points, plane.residuals.values,
                                       ContactSide::highest),
                      "the clocking plane", "the frame's rotation about A's normal rests on"}});
  return result;
}

// Clocking datum C as a slot or tab (detail/clocking_width.hpp): the simulator's two planes
// perpendicular to A, symmetric about a centre plane through B's axis (`origin`, on A), at
// RMB expand (slot) or contract (tab) to the feature while the centre plane turns about B's
// axis. Distances to planes containing A's normal are the in-plane distances of the points
// projected onto A, so the problem is solved in A's plane about B's axis.
ClockingWidthResult associate_clocking_width(const PlanDatum& datum, const PointCloud& cloud,
                                             const PlaneFit& a, const Eigen::Vector3d& origin,
                                             const FitOptions& fit,
                                             const PrepareOptions& prepare,
                                             std::vector<std::string>& notes) {
  const Eigen::Vector3d& z = a.normal;
  const bool internal = !is_external(datum.kind);
  const std::string feature(feature_kind_name(datum.kind));
  const Eigen::Matrix3d basis = detail::basis_from_direction(z);
  const Eigen::Matrix2Xd projected = detail::planar_coordinates(cloud.points, origin, basis);
  const detail::WidthAboutAxis width = detail::fit_width_about_origin(projected, internal);

  ClockingWidthResult result;
  result.label = datum.label;
  result.kind = datum.kind;
  result.mating_width = width.mating_width;
  result.iterations = width.evaluations;
  const Eigen::Vector2d u(std::cos(width.angle), std::sin(width.angle));
  const Eigen::Vector2d n(-u.y(), u.x());
  result.centre_direction = (basis.leftCols<2>() * u).normalized();
  result.centre_plane_normal = z.cross(result.centre_direction).normalized();
  const Eigen::Vector2d centroid = projected.rowwise().mean();
  result.centre_on_a = origin + centroid.dot(u) * result.centre_direction;
  // The points of each face, by index: [0] the face +1 (left of the centre line), [1] the other.
  const Eigen::Index count = projected.cols();
  std::array<std::vector<Eigen::Index>, 2> members;
  for (Eigen::Index i = 0; i < count; ++i) members[width.face(i) > 0 ? 0 : 1].push_back(i);
  const auto columns = [&](const Eigen::Matrix3Xd& points, const std::vector<Eigen::Index>& of) {
    Eigen::Matrix3Xd picked(3, static_cast<Eigen::Index>(of.size()));
    for (std::size_t k = 0; k < of.size(); ++k)
      picked.col(static_cast<Eigen::Index>(k)) = points.col(of[k]);
    return picked;
  };
  // C's points projected onto A, in measurement coordinates.
  const Eigen::Matrix3Xd on_a = (basis.leftCols<2>() * projected).colwise() + origin;
  result.positive_face = columns(on_a, members[0]);
  result.negative_face = columns(on_a, members[1]);

  // Each face's own least-squares plane against A: the simulator holds its planes
  // perpendicular to A whatever the faces do, which is worth a note when they lean (a draft,
  // a tilted cutter), and a face nearly parallel to A is the wrong feature for the role.
  FitOptions plain = fit;
  plain.fixed_direction.reset();
  plain.axis_hint.reset();
  for (const int face : {1, -1}) {
    const Eigen::Matrix3Xd face_points = columns(cloud.points, members[face > 0 ? 0 : 1]);
    // Named as in detail/clocking_width.hpp: +1 is left of the centre line.
    const std::string side = "of the " + feature + (face > 0 ? " left" : " right") +
                             " of its centre line (seen from outside the material looking "
                             "from B toward C)";
    // Points of one face that fix no plane (2 points, or a line of points) cannot tell its
    // orientation; the association itself needs only their projections.
    std::optional<double> tilt;
    try {
      const PlaneFit own = fit_plane_least_squares(face_points, plain);
      tilt = lean_from_perpendicular_deg(own.normal, z);
    } catch (const FitError&) {
    }
    if (tilt && *tilt > orientation_limit_deg)
      throw FitError("the face " + side + " is parallel to A (its least-squares normal " +
                     "is " + detail::format_number(90.0 - *tilt, 1) +
                     " degrees from A's normal); its faces must be perpendicular to A");
    if (tilt && *tilt > orientation_note_deg)
      notes.push_back(label_text(datum.label) + ": the face " + side + " is " +
                      detail::format_number(*tilt, 2) +
                      " degrees out of perpendicular to A; the simulator's planes are held "
                      "perpendicular to A");
  }

  // Signed distances d from the centre plane, and each point's residual from the simulator's
  // plane on its face, <= 0 with the contacts at 0: slot w/2 - s d, tab s d - w/2.
  const Eigen::VectorXd d = projected.transpose() * n;
  const Eigen::VectorXd s = width.face.cast<double>();
  const Eigen::VectorXd on_face = s.cwiseProduct(d);
  // The faces are told apart by the side of the centre line through B's axis each point lies
  // on. Points of one face only (or of a feature far off B's axis) are split all the same, into
  // two "faces" that lie across each other: a real face's spread across the centre plane is its
  // form and its small lean against the simulator, far less than the gap between the faces.
  {
    double gap = 0.0;
    double spread = 0.0;
    for (const std::vector<Eigen::Index>& of : members) {
      double lo = std::numeric_limits<double>::infinity(), hi = -lo;
      for (const Eigen::Index i : of) {
        lo = std::min(lo, on_face(i));
        hi = std::max(hi, on_face(i));
      }
      gap += lo;
      spread = std::max(spread, hi - lo);
    }
    if (!(spread < 0.5 * gap))
      throw FitError("its two faces are not told apart: split by the centre line through datum "
                     "B's axis they are " + detail::format_number(gap, 4) +
                     " mm apart at their nearest points while a face spreads " +
                     detail::format_number(spread, 4) +
                     " mm across the centre plane; give points on both faces of the " + feature);
  }

  const Eigen::VectorXd simulator_residuals =
      internal ? Eigen::VectorXd((0.5 * width.mating_width - on_face.array()).matrix())
               : Eigen::VectorXd((on_face.array() - 0.5 * width.mating_width).matrix());

  // Stray-point screen (stray_points.hpp) on the residuals of each face's least-squares line
  // in A, positive out of the material: toward the centre plane for a slot, away from it for a
  // tab. The simulator rests on its contacts.
  if (prepare.stray_screen && cloud.size() > prepare.stray_points.neighbours) {
    Eigen::VectorXd residuals(count);
    for (const int face : {1, -1}) {
      const std::vector<Eigen::Index>& of = members[face > 0 ? 0 : 1];
      Eigen::Matrix2Xd q(2, static_cast<Eigen::Index>(of.size()));
      for (std::size_t k = 0; k < of.size(); ++k)
        q.col(static_cast<Eigen::Index>(k)) = projected.col(of[k]);
      const Eigen::Vector2d mean = q.rowwise().mean();
      const Eigen::Matrix2Xd centred = q.colwise() - mean;
      // Least-squares line: its normal is the eigenvector of the smaller eigenvalue of the
      // scatter (Pearson 1901; common practice), turned away from the centre plane.
      const Eigen::SelfAdjointEigenSolver<Eigen::Matrix2d> eigen(centred * centred.transpose());
      Eigen::Vector2d normal = eigen.eigenvectors().col(0);
      if (normal.dot(n) * face < 0.0) normal = -normal;
      const double outward = internal ? -1.0 : 1.0;
      for (std::size_t k = 0; k < of.size(); ++k)
        residuals(of[k]) = outward * centred.col(static_cast<Eigen::Index>(k)).dot(normal);
    }
    PrepareOptions screen = prepare;
    screen.residuals = std::move(residuals);
    result.stray_points = screen_feature(datum.kind, cloud, screen);
    note_stray_points(notes, datum.label, result.stray_points,
                      {{suspect_contacts(result.stray_points, simulator_residuals,
                                         ContactSide::highest),
                        "the " + feature + "'s simulator",
                        "the frame's rotation about A's normal rests on"}});
  }

  result.size = datum.size;
  set_mmb_boundary(datum, result.mating_width, "width", "rotation allowance", result.boundary,
                   result.mmb_size, result.shift_allowance, notes);
  return result;
}

// The caller's least-squares plane of A (DatumFrameOptions::a_least_squares) when given and,
// if `with_values`, holding its residual values; else null (the reader fits its own). Another
// point count is the caller's error.
const PlaneFit* a_least_squares_of(const PointCloud& a_points, const DatumFrameOptions& options,
                                   bool with_values) {
  if (!options.a_least_squares) return nullptr;
  const PlaneFit& plane = *options.a_least_squares;
  if (plane.summary.point_count != a_points.size())
    throw std::invalid_argument(
        "establish_datum_frame: the given least-squares plane of A is of " +
        std::to_string(plane.summary.point_count) + " points, A has " +
        std::to_string(a_points.size()));
  if (with_values && static_cast<std::size_t>(plane.residuals.values.size()) != a_points.size())
    return nullptr;
  return &plane;
}

// Stray-point screen of A on its least-squares plane's residuals (stray_points.hpp), and its
// note, placed first among `notes`: A's association writes no note, so in the frame's serial
// order A's comes before B's and C's. A tangent plane rests on its highest points (residual 0);
// a minimax or minimum-zone plane is set by the extremes on both sides; a least-squares plane
// has no contacts. Screen off (a Monte Carlo trial): an empty record, without the copy of A's
// cloud that prepare_feature would make to return one.
void screen_plane_a(const PointCloud& cloud, const DatumFrameOptions& options,
                    PlaneDatumResult& a, std::vector<std::string>& notes) {
  const PrepareOptions prepare = screen_options(options, options.stray_points.threads);
  if (prepare.stray_screen) a.stray_points = for_datum(a.label, [&] {
    PrepareOptions screen = prepare;
    screen.fit = options.fit;
    screen.fit.fixed_direction.reset();
    screen.fit.axis_hint.reset();
    screen.outward = a.plane.normal;
    // The caller's least-squares plane (the same fit as the screen's own, see
    // a_least_squares_of): its residuals turned as prepare turns its own plane's, so that a
    // point standing proud of the surface is positive.
    if (const PlaneFit* own = a_least_squares_of(cloud, options, true)) {
      const bool turned = own->normal.dot(*screen.outward) < 0.0;
      screen.residuals = turned ? Eigen::VectorXd(-own->residuals.values) : own->residuals.values;
    }
    return screen_feature(FeatureKind::plane, cloud, screen);
  });
  std::vector<std::size_t> contacts;
  const Eigen::VectorXd& r = a.plane.residuals.values;
  const auto add = [&](ContactSide side) {
    for (std::size_t i : suspect_contacts(a.stray_points, r, side))
      if (std::find(contacts.begin(), contacts.end(), i) == contacts.end()) contacts.push_back(i);
  };
  if (a.association != PlaneAssociation::least_squares) add(ContactSide::highest);
  if (a.association == PlaneAssociation::tangent_minimax ||
      a.association == PlaneAssociation::minimum_zone)
    add(ContactSide::lowest);
  std::vector<std::string> note;
  note_stray_points(note, a.label, a.stray_points,
                    {{contacts, "the " + std::string(association_name(a.association)) +
                                    " datum plane",
                      "the frame's orientation and height rest on"}});
  notes.insert(notes.begin(), note.begin(), note.end());
}

}  // namespace

Eigen::Vector3d infer_material_side(const PlaneFit& a_least_squares,
                                    const std::vector<const Eigen::Matrix3Xd*>& bore_points) {
  const Eigen::Vector3d n = detail::checked_direction(a_least_squares.normal, "the normal of A");
  // Points within A's own form of the plane (the mouths of the bores) cannot tell a side.
  const double band = std::max(a_least_squares.residuals.form, 0.0);
  std::size_t positive = 0, negative = 0;
  for (const Eigen::Matrix3Xd* points : bore_points) {
    if (points == nullptr) throw std::invalid_argument("infer_material_side: null point set");
    const Eigen::VectorXd d = (points->colwise() - a_least_squares.point).transpose() * n;
    positive += static_cast<std::size_t>((d.array() > band).count());
    negative += static_cast<std::size_t>((d.array() < -band).count());
  }
  // Bores are cut into the material, so their points lie on its side of A. Burrs, chamfers or
  // a bore entered from the far face may put a few on the other side: a clear majority of
  // three to one decides; anything closer is reported rather than guessed.
  const std::size_t total = positive + negative;
  if (total == 0)
    throw FitError("cannot infer the material side of datum A: no bore point lies off A by more "
                   "than its form (" + detail::format_number(band, 4) +
                   " mm); give material_side for A in the plan");
  if (4 * std::max(positive, negative) < 3 * total)
    throw FitError("cannot infer the material side of datum A: " + std::to_string(positive) +
                   " bore points lie on one side of A and " + std::to_string(negative) +
                   " on the other; give material_side for A in the plan");
  return positive > negative ? n : Eigen::Vector3d(-n);
}

DatumFrameResult establish_datum_frame(const std::vector<DatumInput>& datums,
                                       const Eigen::Vector3d& a_material_side,
                                       const DatumFrameOptions& options) {
  if (datums.empty() || datums.size() > 3)
    throw std::invalid_argument("establish_datum_frame: " + std::to_string(datums.size()) +
                                " datums; expected 1 to 3 (A first, then B and C)");
  DatumFrameResult result;
  const FitOptions& fit = options.fit;
  // Each datum feature is prepared (prepare.hpp) as soon as the element its screen needs is
  // known: B's least-squares cylinder is held perpendicular to A, so A comes first.
  const PrepareOptions prepare = screen_options(options, options.stray_points.threads);
  const auto cloud_of = [&](std::size_t k) -> const PointCloud& { return datums[k].points; };

  // ---- primary: plane A
  const PlanDatum& a_datum = datums[0].plan;
  if (a_datum.kind != FeatureKind::plane)
    throw FitError(label_text(a_datum.label) + ": the primary datum must be a plane, not a " +
                   std::string(feature_kind_name(a_datum.kind)));
  result.a.label = a_datum.label;
  result.a.association = options.a_association.value_or(a_datum.association);
  result.a.material_side_inferred = !a_datum.material_side.has_value();
  FitOptions plane_fit = fit;
  plane_fit.fixed_direction.reset();
  plane_fit.axis_hint.reset();
  // A's minimum-zone plane: the flatness, and the minimum-zone and tangent minimax
  // associations, rest on it. The caller's when given (the same points and fit options: the
  // association study's frames take the evaluation's), else fitted once, when first needed.
  std::optional<PlaneFit>& zone = result.a.minimum_zone;
  if (options.a_minimum_zone) {
    if (options.a_minimum_zone->summary.point_count != cloud_of(0).size())
      throw std::invalid_argument(
          "establish_datum_frame: the given minimum-zone plane of A is of " +
          std::to_string(options.a_minimum_zone->summary.point_count) + " points, A has " +
          std::to_string(cloud_of(0).size()));
    zone = options.a_minimum_zone;
  }
  // Its start is the caller's least-squares plane of A when given (its normal and form, with
  // or without its values: the same plane fit_plane_minimum_zone would fit first), not a fit
  // of A's points again.
  const PlaneFit* zone_start = a_least_squares_of(cloud_of(0), options, false);
  const auto minimum_zone_of_a = [&](const FitOptions& with) {
    return zone_start ? fit_plane_minimum_zone(cloud_of(0).points, *zone_start, with)
                      : fit_plane_minimum_zone(cloud_of(0).points, with);
  };
  const auto zone_of_a = [&]() -> const PlaneFit& {
    if (!zone) zone = minimum_zone_of_a(plane_fit);
    return *zone;
  };
  // The tangent plane's start needs the normal only; the least-squares association is the
  // whole plane, residual values included.
  const PlaneFit* a_least_squares = a_least_squares_of(
      cloud_of(0), options, result.a.association == PlaneAssociation::least_squares);
  result.a.plane = for_datum(a_datum.label, [&] {
    return associate_plane(cloud_of(0).points, result.a.association, a_material_side, plane_fit,
                           zone_of_a, a_least_squares);
  });
  const bool zone_known = result.a.association == PlaneAssociation::tangent_minimax ||
                          result.a.association == PlaneAssociation::minimum_zone;
  const Eigen::Vector3d z = result.a.plane.normal;
  // A's flatness (its minimum-zone fit) and datums B and C rest on A's associated plane
  // alone, not on each other nor on A's stray-point screen: when the flatness needs a fit of
  // its own, the two run side by side on the one thread budget (half each), each writing only
  // its own results and B and C their notes, so every bit is the serial order's (no fit's
  // result depends on its threads). A's screen and its note follow, the note placed before
  // B's as in the serial order; failures are reported in that order too: the flatness's,
  // then the screen's, then B's or C's.
  const bool flatness_fit = !zone_known && options.flatness && !zone;
  const std::size_t side_by_side = flatness_fit ? detail::worker_count(2, fit.threads) : 1;
  FitOptions half_fit = fit;
  half_fit.threads = std::max<std::size_t>(1, fit.threads / side_by_side);
  FitOptions zone_fit = plane_fit;
  zone_fit.threads = half_fit.threads;
  const PrepareOptions half_prepare = screen_options(
      options, std::max<std::size_t>(1, options.stray_points.threads / side_by_side));
  Eigen::Vector3d origin;
  Eigen::Vector3d x;
  std::optional<std::size_t> no_b_note;  // replaced when anchors place the origin
  std::exception_ptr b_or_c_failure;
  const std::size_t notes_before_b = result.notes.size();
  const auto associate_b_and_c = [&] {
    const FitOptions& fit = half_fit;  // this task's share of the threads
    const PrepareOptions& prepare = half_prepare;
    // ---- secondary: bore or pin B, locating the origin
    origin = result.a.plane.point.dot(z) * z;  // measurement origin projected on A
    if (datums.size() >= 2) {
      const PlanDatum& b_datum = datums[1].plan;
      if (b_datum.kind == FeatureKind::plane)
        throw FitError(label_text(b_datum.label) +
                       ": a secondary datum plane is not supported; B must be a bore or a pin");
      if (b_datum.kind == FeatureKind::slot || b_datum.kind == FeatureKind::tab)
        throw FitError(label_text(b_datum.label) + ": a " +
                       std::string(feature_kind_name(b_datum.kind)) +
                       " cannot be datum B, which locates the origin with its axis; B must be a "
                       "bore or a pin");
      result.b = for_datum(b_datum.label, [&] {
        return associate_size_datum(b_datum, cloud_of(1), result.a.plane, fit, prepare,
                                    result.notes);
      });
      origin = result.b->axis_on_a;
      result.translation_fixed = true;
    }
    if (datums.size() < 2) {
      no_b_note = result.notes.size();
      result.notes.push_back("no datum B: the origin is the measurement origin projected onto " +
                             label_text(a_datum.label) + "; translation in A is not constrained");
    }

    // ---- tertiary: C, clocking the rotation about z
    if (datums.size() == 3) {
      const PlanDatum& c_datum = datums[2].plan;
      if (c_datum.kind == FeatureKind::plane) {
        if (!c_datum.outward_normal || !(c_datum.outward_normal->norm() > 0.0))
          throw FitError(label_text(c_datum.label) +
                         ": the basic direction of its outward normal is needed to clock the frame");
        const std::optional<Eigen::Vector3d> b_axis =
            result.b ? std::optional<Eigen::Vector3d>(result.b->axis_on_a) : std::nullopt;
        result.c_plane = for_datum(c_datum.label, [&] {
          return associate_clocking_plane(c_datum, cloud_of(2), result.a.plane, b_axis, fit,
                                          prepare, result.notes);
        });
        x = clocked_x(in_plane_unit(result.c_plane->plane.normal, z), *c_datum.outward_normal, z);
        result.notes.push_back(
            label_text(c_datum.label) +
            " (plane): tangent least-squares plane perpendicular to A; the frame is turned so its "
            "outward normal has its basic direction");
      } else if (c_datum.kind == FeatureKind::slot || c_datum.kind == FeatureKind::tab) {
        const std::string kind(feature_kind_name(c_datum.kind));
        if (!c_datum.basic_location || !(c_datum.basic_location->norm() > 0.0))
          throw FitError(label_text(c_datum.label) +
                         ": its basic location (away from B's axis) is needed to clock the frame");
        result.c_width = for_datum(c_datum.label, [&] {
          return associate_clocking_width(c_datum, cloud_of(2), result.a.plane, origin, fit,
                                          prepare, result.notes);
        });
        x = clocked_x(in_plane_unit(result.c_width->centre_direction, z), *c_datum.basic_location,
                      z);
        // ASME Y14.5-2018: a tertiary datum feature of size at RMB, its simulator located by the
        // datum axis B (from memory for the clause).
        result.notes.push_back(
            label_text(c_datum.label) + " (" + kind + "): its simulator, two parallel planes "
            "perpendicular to A about a centre plane through B's axis, " +
            (c_datum.kind == FeatureKind::slot ? "expands" : "contracts") +
            " to the " + kind + " (related mating width); the frame is turned so the centre plane "
            "runs from B in the direction of C's basic location");
      } else {
        if (!c_datum.basic_location || !(c_datum.basic_location->norm() > 0.0))
          throw FitError(label_text(c_datum.label) +
                         ": its basic location (away from B's axis) is needed to clock the frame");
        result.c_feature = for_datum(c_datum.label, [&] {
          return associate_size_datum(c_datum, cloud_of(2), result.a.plane, fit, prepare,
                                      result.notes);
        });
        const Eigen::Vector3d towards_c = result.c_feature->axis_on_a - origin;
        const Eigen::Vector3d in_a = towards_c - towards_c.dot(z) * z;
        // Within the envelopes' own form of each other the direction from B to C is not fixed by
        // the points; below 1e-9 of the data's size it is rounding.
        const double b_form = result.b ? result.b->related_envelope.residuals.form : 0.0;
        const double band =
            std::max(b_form + result.c_feature->related_envelope.residuals.form,
                     1e-9 * std::max(1.0, detail::data_scale(cloud_of(2).points,
                                                            detail::centroid(cloud_of(2).points))));
        if (in_a.norm() <= band)
          throw FitError(label_text(c_datum.label) + ": its axis coincides with the axis of " +
                         (result.b ? label_text(result.b->label) : std::string("the origin")) +
                         " (" + detail::format_number(in_a.norm(), 6) +
                         " mm apart on A), so it cannot clock the frame");
        x = clocked_x(in_a.normalized(), *c_datum.basic_location, z);
        // Common practice for a tertiary datum feature of size at RMB: it removes the rotation
        // about the datum axis only; its distance from B is the part's, not the simulator's.
        result.notes.push_back(
            label_text(c_datum.label) + " (" + std::string(feature_kind_name(c_datum.kind)) +
            "): clocks the frame only; the frame is turned so its axis lies in the direction of "
            "its basic location from B, its distance from B is not used");
      }
      result.rotation_fixed = true;
    } else if (const std::optional<AnchoredFreedoms> anchored =
                   anchored_freedoms(options.anchors, result.a.plane, z, origin,
                                     result.translation_fixed)) {
      // The freedoms the datums leave are settled by the part's own features, so that nothing
      // reported in the frame depends on the part's placement on the machine (DatumFrameOptions::
      // anchors); the datum mobility still explores them.
      x = anchored->x;
      origin = anchored->origin;
      if (no_b_note) result.notes.erase(result.notes.begin() + static_cast<std::ptrdiff_t>(*no_b_note));
      result.notes.push_back(anchored->note);
    } else {
      const Eigen::Vector3d measurement_x = Eigen::Vector3d::UnitX();
      const bool use_y = std::abs(measurement_x.dot(z)) > nearly_parallel_cosine;
      x = in_plane_unit(use_y ? Eigen::Vector3d::UnitY() : measurement_x, z);
      result.notes.push_back(std::string("no datum C: x is the measurement ") +
                             (use_y ? "y" : "x") +
                             " axis projected onto A; rotation about A's normal is not constrained");
    }
  };
  detail::parallel_for(2, side_by_side, [&](std::size_t task, std::size_t) {
    if (task == 1) {
      try {
        associate_b_and_c();
      } catch (...) {
        b_or_c_failure = std::current_exception();
      }
      return;
    }
    // Off (DatumFrameOptions::flatness): 0, as nothing will read it.
    if (zone_known)
      result.a.flatness = result.a.plane.residuals.form;
    else if (flatness_fit)
      result.a.flatness = for_datum(a_datum.label, [&] {
        zone = minimum_zone_of_a(zone_fit);
        return zone->residuals.form;
      });
    else if (options.flatness)
      result.a.flatness = for_datum(a_datum.label, [&] { return zone_of_a().residuals.form; });
    // Its residual values are released (one per point of A): a frame that associates A by the
    // minimum zone computes them again (with_residuals), nothing else reads them.
    if (zone) zone->residuals.values = Eigen::VectorXd();
  });
  // B's and C's notes are taken out, to follow A's screen's.
  const std::vector<std::string> b_and_c_notes(
      result.notes.begin() + static_cast<std::ptrdiff_t>(notes_before_b), result.notes.end());
  result.notes.resize(notes_before_b);  // none: A's association writes no note
  // A's screen and its note (before B's and C's, as in the serial order), unless the caller
  // runs it later (DatumFrameOptions::defer_a_screen); not when B or C failed, so that a
  // failure of A's screen is still reported before theirs.
  if (!options.defer_a_screen || b_or_c_failure)
    screen_plane_a(cloud_of(0), options, result.a, result.notes);

  if (b_or_c_failure) std::rethrow_exception(b_or_c_failure);
  result.notes.insert(result.notes.end(), b_and_c_notes.begin(), b_and_c_notes.end());

  result.frame.origin = origin;
  result.frame.rotation.row(0) = x.transpose();
  result.frame.rotation.row(1) = z.cross(x).transpose();
  result.frame.rotation.row(2) = z.transpose();
  return result;
}

void screen_datum_a(const PointCloud& a_points, DatumFrameResult& frame,
                    const DatumFrameOptions& options) {
  if (static_cast<std::size_t>(frame.a.plane.residuals.values.size()) != a_points.size())
    throw std::invalid_argument(
        "screen_datum_a: A's plane has " + std::to_string(frame.a.plane.residuals.values.size()) +
        " residual values for " + std::to_string(a_points.size()) + " points");
  screen_plane_a(a_points, options, frame.a, frame.notes);
}

}  // namespace cylzone
