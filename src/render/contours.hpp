#pragma once
// Contour lines of a function sampled on a regular grid, by marching squares (Lorensen & Cline
// 1987 in two dimensions): each grid cell contributes the segments where the level crosses its
// edges, found by linear interpolation, and segments that share an edge crossing are joined into
// polylines. Ambiguous cells (a saddle within one cell) are resolved by the cell-centre average.
#include <Eigen/Core>
#include <vector>

#include "core/numeric/convex_hull_2d.hpp"

namespace habcast {

/// One contour line in grid coordinates: x = column (0..cols-1), y = row (0..rows-1).
struct Polyline {
  std::vector<Point2> points;
  bool closed = false;  ///< the last point joins the first
};

/// Contour lines at `level` of `values` (rows x cols samples). NaN samples leave their cells out.
std::vector<Polyline> contour_lines(const Eigen::MatrixXd& values, double level);

/// About `count` round levels (1, 2 or 5 times a power of ten) strictly between lo and hi.
std::vector<double> nice_levels(double lo, double hi, int count);

}  // namespace habcast
