#include "render/unit_map.hpp"

#include <algorithm>
#include <cmath>

#include "core/numeric/cell_coverage.hpp"
#include "render/drawing.hpp"

namespace habcast {

namespace {

namespace fs = figure_style;

constexpr double kMargin = 8.0, kMapBoxWidth = 330.0, kMapBoxHeight = 360.0, kLegendGap = 18.0;
const Rgb kNoPrediction{228, 228, 228};

}  // namespace

Figure unit_map_figure(const UnitMapInput& in) {
  const RasterGrid& g = in.grid;
  // The map shows the grid's extent and every unit that reaches into it, clipped to that extent.
  const double W = std::max(1, g.width), H = std::max(1, g.height);
  const double scale = std::min(kMapBoxWidth / W, kMapBoxHeight / H);
  const double top = kMargin + fs::kTitleSize + 14.0;
  const Rect map{kMargin, top, W * scale, H * scale};
  auto page = [&](const Point2& cell) { return Point2{map.x + cell.x * scale, map.y + cell.y * scale}; };

  Figure fig(kA4FigureWidth, 100.0);  // height set below, once the legend is measured
  fig.title = in.title;
  fig.text({kMargin, kMargin + fs::kTitleSize}, in.title, fs::title(), "title");
  fig.rect(map, Fill{fs::kWhite}, std::nullopt, "map-ground");

  const double span = in.hi > in.lo ? in.hi - in.lo : 1.0;
  bool any_hatched = false, any_missing = false;
  for (const UnitMapUnit& u : in.units) {
    if (u.rings.empty()) continue;
    std::optional<Fill> fill = Fill{kNoPrediction};
    Rgb under = kNoPrediction;
    if (u.mean) {
      under = ramp_colour(std::clamp((*u.mean - in.lo) / span, 0.0, 1.0));
      fill = Fill{under};
    } else {
      any_missing = true;
    }
    std::optional<Hatch> hatch;
    if (u.mostly_extrapolated) {
      any_hatched = true;
      // Ink over light colours, white over dark ones, so the hatching shows in greyscale too.
      hatch = Hatch{lightness(under) > 55.0 ? kInk : fs::kWhite, 3.2, 0.7};
    }
    for (std::size_t r = 0; r < u.rings.size(); ++r) {
      std::vector<Point2> pts;
      pts.reserve(u.rings[r].size());
      for (const Point2& p : u.rings[r]) pts.push_back(page(p));
      // The first ring is the outer boundary; later rings of a part are holes or further parts.
      // Holes are drawn over in the ground colour (the display list has no even-odd fill).
      const bool hole = r > 0 && ring_area(u.rings[r]) < 0.0;
      PathMark mark{pts, true, hole ? std::optional<Fill>(Fill{fs::kWhite}) : fill, Stroke{kInk, 0.4},
                    hole ? std::nullopt : hatch};
      fig.add(Mark{mark, map, hole ? "unit-hole" : "unit"});
    }
  }
  fig.rect(map, std::nullopt, fs::frame(), "map-frame");

  // Legend beside the map.
  Legend legend(kA4FigureWidth - map.right() - kLegendGap - kMargin);
  legend.heading(in.value_label);
  std::vector<std::pair<double, std::string>> labels;
  for (const Tick& t : round_ticks(in.lo, in.hi, 4)) labels.emplace_back((t.value - in.lo) / span, t.label);
  legend.colour_ramp(labels, 110.0);
  legend.gap(6.0);
  if (any_hatched)
    legend.swatch("more than half of the unit extrapolated", Fill{ramp_colour(0.8)}, Stroke{kInk, 0.4},
                  Hatch{kInk, 3.2, 0.7});
  if (any_missing) legend.swatch("no prediction", Fill{kNoPrediction}, Stroke{kInk, 0.4});
  const double legend_bottom = legend.draw(fig, {map.right() + kLegendGap, map.y});

  double y = std::max(map.bottom(), legend_bottom) + 6.0;
  if (g.has_geotransform && g.linear_units_to_metre > 0.0) {
    const double metres_per_point = std::fabs(g.geotransform[1]) * g.linear_units_to_metre / scale;
    scale_bar(fig, {map.x, y + 22.0}, metres_per_point, map.width / 3.0);
    y += 26.0;
  }
  std::string note = std::to_string(in.units.size()) + (in.units.size() == 1 ? " unit" : " units") +
                     " over the prediction grid" + (g.crs_name.empty() ? std::string() : " (" + g.crs_name + ")") +
                     "; a unit's colour is its area-weighted mean, see units.csv for intervals";
  if (!in.caption.empty()) note += ". " + in.caption;
  y += 4.0 + fs::kNoteSize;
  for (const std::string& line : wrap_text(note, fs::note(), fig.width() - 2 * kMargin)) {
    fig.text({kMargin, y}, line, fs::note(), "note");
    y += 1.3 * fs::kNoteSize;
  }
  Figure sized(kA4FigureWidth, y + kMargin);
  sized.title = fig.title;
  for (const Mark& m : fig.marks()) sized.add(m);
  return sized;
}

}  // namespace habcast
