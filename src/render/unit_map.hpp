#pragma once
// A one-page map of management units: each unit filled with the colour of its mean suitability
// (habcast's ramp), hatched where more than half of its checked area is extrapolated, pale grey
// where it has no prediction; the grid's extent outlined, a legend and a scale bar. Drawn through
// the Figure interface, so it is written as SVG, PNG or PDF alike.
#include <optional>
#include <string>
#include <vector>

#include "core/numeric/convex_hull_2d.hpp"
#include "raster/raster_grid.hpp"
#include "render/figure.hpp"

namespace habcast {

struct UnitMapUnit {
  std::vector<std::vector<Point2>> rings;  ///< grid cell coordinates (x right, y down); holes included
  std::optional<double> mean;              ///< none: no prediction
  bool mostly_extrapolated = false;        ///< more than half of the checked area flagged
};

struct UnitMapInput {
  std::string title;
  std::string value_label;  ///< e.g. "Mean suitability (probability)"
  double lo = 0.0, hi = 1.0;
  RasterGrid grid;
  std::vector<UnitMapUnit> units;
  std::string caption;
};

Figure unit_map_figure(const UnitMapInput& input);

}  // namespace habcast
