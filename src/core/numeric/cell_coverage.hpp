#pragma once
// The share of each grid cell's area that lies inside a polygon, computed exactly (up to rounding)
// by clipping: the polygon is cut to each row of cells, then to each cell on its boundary, and the
// clipped rings' signed areas are summed (Sutherland and Hodgman 1974, "Reentrant polygon
// clipping", Communications of the ACM 17(1): 32-42; clipping a ring of any shape against a convex
// cell keeps its signed area exact, the degenerate edges it adds along the cell's sides having no
// area). Cells that no edge crosses are wholly inside or wholly outside, decided once per run of
// such cells. Coordinates are in cell units: cell (row r, column c) is [c, c+1] x [r, r+1].
#include <cstdint>
#include <functional>
#include <vector>

#include "core/numeric/convex_hull_2d.hpp"

namespace habcast {

/// One polygon: its rings (outer boundaries and holes, any orientation; a hole is a ring whose
/// orientation is opposite to the ring that contains it, which coverage_polygon() arranges).
/// Rings need not be closed (the last vertex joins the first).
struct CoveragePolygon {
  std::vector<std::vector<Point2>> rings;
  double min_x = 0.0, min_y = 0.0, max_x = 0.0, max_y = 0.0;  ///< bounding box, cell units
};

/// Builds a CoveragePolygon from an outer ring and its holes (each in any orientation, closed or
/// not): outer rings are made counter-clockwise and holes clockwise, so signed areas add up to the
/// polygon's area. A multipolygon is several outer rings with their holes in one call, one
/// `outers` entry per part; its parts must not overlap (as in a valid OGC multipolygon).
CoveragePolygon coverage_polygon(const std::vector<std::vector<Point2>>& outers,
                                 const std::vector<std::vector<std::vector<Point2>>>& holes_of_each);

/// Signed area of a ring (positive when counter-clockwise), by the shoelace formula.
double ring_area(const std::vector<Point2>& ring);

/// Calls `visit(row, column, fraction)` for every cell in rows [row0, row1) and columns
/// [col0, col1) whose covered fraction is above zero, in row-major order; fraction is in (0, 1]
/// (values within 1e-12 of 1 are returned as exactly 1). Cells outside the polygon's bounding box
/// cost nothing.
void visit_cell_coverage(const CoveragePolygon& polygon, int row0, int row1, int col0, int col1,
                         const std::function<void(int row, int column, double fraction)>& visit);

}  // namespace habcast
