#include "core/numeric/cell_coverage.hpp"

#include <algorithm>
#include <cmath>

namespace habcast {

namespace {

enum class Axis { x, y };

/// Keeps the part of `ring` on one side of the line axis = value (the greater side when
/// `keep_greater`). Points created on the line get exactly `value`, so edges along the line are
/// recognisable afterwards.
void clip_half_plane(const std::vector<Point2>& ring, Axis axis, double value, bool keep_greater,
                     std::vector<Point2>& out) {
  out.clear();
  const std::size_t n = ring.size();
  if (n == 0) return;
  auto coord = [axis](const Point2& p) { return axis == Axis::x ? p.x : p.y; };
  auto inside = [&](const Point2& p) { return keep_greater ? coord(p) >= value : coord(p) <= value; };
  auto crossing = [&](const Point2& a, const Point2& b) {
    const double t = (value - coord(a)) / (coord(b) - coord(a));
    Point2 p;
    if (axis == Axis::x) {
      p.x = value;
      p.y = a.y + t * (b.y - a.y);
    } else {
      p.x = a.x + t * (b.x - a.x);
      p.y = value;
    }
    return p;
  };
  Point2 prev = ring[n - 1];
  bool prev_in = inside(prev);
  for (std::size_t i = 0; i < n; ++i) {
    const Point2& cur = ring[i];
    const bool cur_in = inside(cur);
    if (cur_in) {
      if (!prev_in) out.push_back(crossing(prev, cur));
      out.push_back(cur);
    } else if (prev_in) {
      out.push_back(crossing(prev, cur));
    }
    prev = cur;
    prev_in = cur_in;
  }
}

/// Clips every ring to the band lo <= axis <= hi; rings left with fewer than three points go.
void clip_band(const std::vector<std::vector<Point2>>& rings, Axis axis, double lo, double hi,
               std::vector<std::vector<Point2>>& out, std::vector<Point2>& scratch) {
  out.clear();
  for (const auto& ring : rings) {
    clip_half_plane(ring, axis, lo, true, scratch);
    if (scratch.size() < 3) continue;
    out.emplace_back();
    clip_half_plane(scratch, axis, hi, false, out.back());
    if (out.back().size() < 3) out.pop_back();
  }
}

double rings_area(const std::vector<std::vector<Point2>>& rings) {
  double a = 0.0;
  for (const auto& r : rings) a += ring_area(r);
  return a;
}

std::vector<Point2> open_ring(std::vector<Point2> ring) {
  while (ring.size() > 1 && ring.front().x == ring.back().x && ring.front().y == ring.back().y) ring.pop_back();
  return ring;
}

}  // namespace

double ring_area(const std::vector<Point2>& ring) {
  const std::size_t n = ring.size();
  if (n < 3) return 0.0;
  // Shoelace on coordinates taken relative to the first vertex: the products stay small, so the
  // area of a ring far from the origin loses no digits to cancellation.
  const double ox = ring[0].x, oy = ring[0].y;
  double twice = 0.0;
  for (std::size_t i = 1; i + 1 < n; ++i)
    twice += (ring[i].x - ox) * (ring[i + 1].y - oy) - (ring[i + 1].x - ox) * (ring[i].y - oy);
  return 0.5 * twice;
}

CoveragePolygon coverage_polygon(const std::vector<std::vector<Point2>>& outers,
                                 const std::vector<std::vector<std::vector<Point2>>>& holes_of_each) {
  CoveragePolygon p;
  bool first = true;
  auto add = [&](std::vector<Point2> ring, bool counter_clockwise) {
    ring = open_ring(std::move(ring));
    if (ring.size() < 3) return;
    if ((ring_area(ring) > 0.0) != counter_clockwise) std::reverse(ring.begin(), ring.end());
    for (const Point2& q : ring) {
      if (first) {
        p.min_x = p.max_x = q.x;
        p.min_y = p.max_y = q.y;
        first = false;
      }
      p.min_x = std::min(p.min_x, q.x);
      p.max_x = std::max(p.max_x, q.x);
      p.min_y = std::min(p.min_y, q.y);
      p.max_y = std::max(p.max_y, q.y);
    }
    p.rings.push_back(std::move(ring));
  };
  for (std::size_t i = 0; i < outers.size(); ++i) {
    add(outers[i], true);
    if (i < holes_of_each.size())
      for (const auto& hole : holes_of_each[i]) add(hole, false);
  }
  return p;
}

void visit_cell_coverage(const CoveragePolygon& polygon, int row0, int row1, int col0, int col1,
                         const std::function<void(int row, int column, double fraction)>& visit) {
  if (polygon.rings.empty()) return;
  const int r_first = std::max(row0, static_cast<int>(std::floor(polygon.min_y)));
  const int r_last = std::min(row1, static_cast<int>(std::ceil(polygon.max_y)));  // exclusive
  const int c_first = std::max(col0, static_cast<int>(std::floor(polygon.min_x)));
  const int c_last = std::min(col1, static_cast<int>(std::ceil(polygon.max_x)));  // exclusive
  if (r_first >= r_last || c_first >= c_last) return;

  std::vector<std::vector<Point2>> strip, cell;
  std::vector<Point2> scratch;
  std::vector<char> crossed(static_cast<std::size_t>(c_last - c_first));
  auto cell_fraction = [&](int c) {
    clip_band(strip, Axis::x, c, c + 1.0, cell, scratch);
    double f = rings_area(cell);
    if (f >= 1.0 - 1e-12) f = 1.0;
    return f;
  };

  for (int r = r_first; r < r_last; ++r) {
    clip_band(polygon.rings, Axis::y, r, r + 1.0, strip, scratch);
    if (strip.empty()) continue;
    // Columns whose interior some edge of the strip crosses. Edges lying on a cell side (along the
    // strip's top or bottom, or on a whole-number x) cross no cell's interior.
    std::fill(crossed.begin(), crossed.end(), 0);
    for (const auto& ring : strip) {
      const std::size_t n = ring.size();
      for (std::size_t i = 0; i < n; ++i) {
        const Point2& a = ring[i];
        const Point2& b = ring[(i + 1) % n];
        if (a.y == b.y && (a.y == r || a.y == r + 1.0)) continue;
        if (a.x == b.x && a.x == std::floor(a.x)) continue;
        const double lo = std::min(a.x, b.x), hi = std::max(a.x, b.x);
        const int first = static_cast<int>(std::floor(lo));
        // A vertical edge lies inside one column; another edge crosses those its x-range overlaps.
        const int last = hi == lo ? first : static_cast<int>(std::ceil(hi)) - 1;
        for (int c = std::max(first, c_first); c <= std::min(last, c_last - 1); ++c)
          crossed[static_cast<std::size_t>(c - c_first)] = 1;
      }
    }
    // Crossed cells are clipped one by one; a run of uncrossed cells is all inside or all outside,
    // which clipping its first cell tells (its area is then 0 or 1).
    int c = c_first;
    while (c < c_last) {
      if (crossed[static_cast<std::size_t>(c - c_first)]) {
        const double f = cell_fraction(c);
        if (f > 0.0) visit(r, c, f);
        ++c;
        continue;
      }
      int end = c;
      while (end < c_last && !crossed[static_cast<std::size_t>(end - c_first)]) ++end;
      if (cell_fraction(c) > 0.5)
        for (int k = c; k < end; ++k) visit(r, k, 1.0);
      c = end;
    }
  }
}

}  // namespace habcast
