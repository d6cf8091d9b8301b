#pragma once
// The niche plot's page layout and the map from model units to page pixels, shared by the SVG
// and PNG writers so that both pictures put every mark in the same place.
#include "render/niche_plot.hpp"

namespace habcast {

namespace niche_page {
inline constexpr int kWidth = 760, kHeight = 560;
inline constexpr int kLeft = 78, kTop = 62, kPlotW = 440, kPlotH = 420;  ///< the plot area
inline constexpr int kLegendX = 542;
}  // namespace niche_page

/// Page coordinates of a plot: model units (x0..x1, y0..y1) or response-grid cells (0..grid-1).
struct NichePlotFrame {
  const NichePlot& p;
  [[nodiscard]] double px(double x) const {
    return niche_page::kLeft + (x - p.x0) / (p.x1 - p.x0) * niche_page::kPlotW;
  }
  [[nodiscard]] double py(double y) const {
    return niche_page::kTop + (p.y1 - y) / (p.y1 - p.y0) * niche_page::kPlotH;
  }
  [[nodiscard]] double gx(double column) const {
    return niche_page::kLeft + column / (p.grid - 1) * niche_page::kPlotW;
  }
  [[nodiscard]] double gy(double row) const { return niche_page::kTop + row / (p.grid - 1) * niche_page::kPlotH; }
  [[nodiscard]] Point2 model(Point2 q) const { return {px(q.x), py(q.y)}; }
  [[nodiscard]] Point2 grid(Point2 q) const { return {gx(q.x), gy(q.y)}; }
};

}  // namespace habcast
