// The 2-D convex hull behind describe's training outline and its point-in-hull check.
#include <catch2/catch.hpp>
#include <cmath>
#include <limits>

#include "core/numeric/convex_hull_2d.hpp"

namespace habcast {
namespace {

TEST_CASE("The hull of a square with inner and edge points is its four corners, counter-clockwise", "[describe]") {
  const std::vector<Point2> points{{0, 0}, {2, 0}, {2, 2}, {0, 2}, {1, 1}, {1, 0}, {0.5, 1.5},
                                   {2, 1}, {std::numeric_limits<double>::quiet_NaN(), 5}};
  const std::vector<Point2> hull = convex_hull(points);
  REQUIRE(hull.size() == 4);
  CHECK((hull[0].x == 0 && hull[0].y == 0));
  CHECK((hull[1].x == 2 && hull[1].y == 0));
  CHECK((hull[2].x == 2 && hull[2].y == 2));
  CHECK((hull[3].x == 0 && hull[3].y == 2));
  CHECK(inside_hull(hull, {1.0, 1.0}));
  CHECK(inside_hull(hull, {2.0, 1.0}));  // on the boundary counts as inside
  CHECK_FALSE(inside_hull(hull, {2.0001, 1.0}));
  CHECK_FALSE(inside_hull(hull, {-1.0, -1.0}));
}

TEST_CASE("Collinear or repeated points give a degenerate hull that contains nothing", "[describe]") {
  const std::vector<Point2> hull = convex_hull({{0, 0}, {1, 1}, {2, 2}, {1, 1}});
  CHECK(hull.size() == 2);
  CHECK_FALSE(inside_hull(hull, {1, 1}));
}

TEST_CASE("The hull of points on a circle keeps every point", "[describe]") {
  std::vector<Point2> points;
  for (int i = 0; i < 36; ++i) points.push_back({std::cos(i * 0.1745), std::sin(i * 0.1745)});
  CHECK(convex_hull(points).size() == 36);
}

}  // namespace
}  // namespace habcast
