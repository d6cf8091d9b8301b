#include "core/numeric/convex_hull_2d.hpp"

#include <algorithm>
#include <cmath>

namespace habcast {

namespace {

/// Twice the signed area of triangle o, a, b: > 0 when o -> a -> b turns left.
double cross(const Point2& o, const Point2& a, const Point2& b) {
  return (a.x - o.x) * (b.y - o.y) - (a.y - o.y) * (b.x - o.x);
}

}  // namespace

std::vector<Point2> convex_hull(std::vector<Point2> points) {
  points.erase(std::remove_if(points.begin(), points.end(),
                              [](const Point2& p) { return !std::isfinite(p.x) || !std::isfinite(p.y); }),
               points.end());
  std::sort(points.begin(), points.end(), [](const Point2& a, const Point2& b) { return a.x < b.x || (a.x == b.x && a.y < b.y); });
  points.erase(std::unique(points.begin(), points.end(), [](const Point2& a, const Point2& b) { return a.x == b.x && a.y == b.y; }),
               points.end());
  if (points.size() < 3) return points;
  std::vector<Point2> hull(2 * points.size());
  std::size_t n = 0;
  for (const Point2& p : points) {  // lower chain
    while (n >= 2 && cross(hull[n - 2], hull[n - 1], p) <= 0.0) --n;
    hull[n++] = p;
  }
  const std::size_t lower = n + 1;
  for (std::size_t i = points.size() - 1; i-- > 0;) {  // upper chain
    while (n >= lower && cross(hull[n - 2], hull[n - 1], points[i]) <= 0.0) --n;
    hull[n++] = points[i];
  }
  hull.resize(n - 1);  // the last point repeats the first
  return hull;
}

bool inside_hull(const std::vector<Point2>& hull, Point2 p) {
  if (hull.size() < 3) return false;
  double extent = 0.0;
  for (const Point2& h : hull) extent = std::max({extent, std::fabs(h.x - hull[0].x), std::fabs(h.y - hull[0].y)});
  const double tolerance = 1e-12 * extent * extent;
  for (std::size_t i = 0; i < hull.size(); ++i) {
    const Point2& a = hull[i];
    const Point2& b = hull[(i + 1) % hull.size()];
    if (cross(a, b, p) < -tolerance) return false;
  }
  return true;
}

}  // namespace habcast
