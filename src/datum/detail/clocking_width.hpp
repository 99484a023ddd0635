#pragma once
// Private: the related mating width of a slot or tab whose centre plane must contain a given
// axis (datum B's), solved in the plane of A. Used by the datum frame for a clocking datum C
// that is a width feature (datum_frame.cpp); implemented in clocking_width.cpp.
//
// Problem (ASME Y14.5-2018, datum feature simulator of a tertiary width feature at RMB,
// constrained in location by the higher-precedence datum axis; from memory for the clause).
// The points q_i are given in coordinates of A's plane about B's axis. A centre line through
// the origin at angle theta has the unit normal n(theta) = (-sin theta, cos theta), and the
// signed distances d_i(theta) = n(theta).q_i. Each point belongs to face s_i = +1 or -1, the
// side of the centre line it lies on at the start. The simulator's planes are symmetric about
// the centre line, so
//     slot (internal):  w = max over theta of 2 min_i s_i d_i(theta)   (planes expand),
//     tab (external):   w = min over theta of 2 max_i s_i d_i(theta)   (planes contract).
//
// Each s_i d_i(theta) is a sinusoid, positive and strictly concave on the interval of theta
// where point i stays on its face's side. On the intersection of those intervals (it contains
// the start) the slot's objective, a minimum of concave functions, is concave: one maximum,
// found by golden-section search. The tab's objective, a maximum of concave functions, is
// convex up to the small curvature of the sinusoids near its optimum, so a coarse scan of the
// interval precedes the golden-section search (as in the datum mobility search). The optimum of
// either lies where two sinusoids cross, or (slot only) at the peak of one; both are known in
// closed form, so the two points active at the ends of the final interval give the optimum
// exactly, to rounding (the closed-form candidates are kept only when they are no worse).

#include <Eigen/Core>

namespace cylzone::detail {

struct WidthAboutAxis {
  double angle = 0.0;         ///< direction of the centre line, radians, in the points' coordinates
  double start_angle = 0.0;   ///< the starting direction the faces were told by
  double mating_width = 0.0;  ///< the related mating width, in the points' unit
  Eigen::VectorXi face;       ///< +1 or -1 per point: the side of the centre line it belongs to
  int evaluations = 0;        ///< objective evaluations
};

/// Solves the problem above for `points` (2 x n, coordinates about the axis) of a slot
/// (`internal` true) or a tab. The faces are told once, by the side of a starting centre line
/// they lie on: the faces are found as two parallel lines (split at the largest gap across their
/// common direction, that direction re-estimated from each face's own points, from four
/// candidate directions, the cleanest split kept), and the start is the line through the origin
/// midway in angle between them. When no line through the origin separates such faces, the
/// start is the least-squares line through the origin (the principal direction of sum q q^T
/// nearer the centroid's direction). Deterministic.
///
/// Throws FitError: fewer than 2 points on a face (the message says which and how many); a point
/// within 1e-9 (relative to the data's size) of the starting centre line, so the faces are not
/// separated; points not all on the centroid's side of the line through the origin across the
/// centre line (the direction from the axis to the feature cannot be told), including a centroid
/// on the axis; non-finite coordinates.
WidthAboutAxis fit_width_about_origin(const Eigen::Matrix2Xd& points, bool internal);

}  // namespace cylzone::detail
