#pragma once
// A scale bar for maps: a bar of a round length (1, 2 or 5 times a power of ten, in m or km)
// of at most `max_length` points, with its length written beside it.
#include <string>

#include "render/figure.hpp"

namespace habcast {

/// The round length in metres drawn by scale_bar (largest 1, 2, 5 x 10^k <= the longest allowed).
double scale_bar_metres(double metres_per_point, double max_length);

/// Draws the bar with its left end at `left` (its baseline at left.y). Returns the bar's length
/// in points.
double scale_bar(Figure& figure, Point2 left, double metres_per_point, double max_length, const std::string& role = "scale-bar");

}  // namespace habcast
