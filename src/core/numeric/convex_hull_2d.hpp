#pragma once
// Convex hull of points in a plane (Andrew's monotone chain, Andrew 1979, Information Processing
// Letters 9: 216-219) and the point-in-hull test. Used for the training hull of a pair of
// covariates: drawn in describe's plot and checked against the optimum.
#include <vector>

namespace habcast {

struct Point2 {
  double x = 0.0;
  double y = 0.0;
};

/// Hull vertices in counter-clockwise order, starting at the lowest-x (then lowest-y) point, without
/// repeating it and without collinear points. Non-finite points are ignored. Fewer than three
/// vertices when the points are all equal or collinear.
std::vector<Point2> convex_hull(std::vector<Point2> points);

/// True when `p` lies inside or on the boundary of the counter-clockwise hull `hull` (relative
/// tolerance 1e-12 of the hull's extent for the boundary). False for a degenerate hull.
bool inside_hull(const std::vector<Point2>& hull, Point2 p);

}  // namespace habcast
