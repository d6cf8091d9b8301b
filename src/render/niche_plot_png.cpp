// Rasterises a NichePlot: the response as filled bands between contour levels (lighter = higher),
// the contour lines, training data, optimum, axes, and labels in the built-in bitmap font.
#include "render/niche_plot_png.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>

#include "core/base/number_text.hpp"
#include "render/canvas.hpp"
#include "render/niche_plot_frame.hpp"
#include "render/png_writer.hpp"

namespace habcast {

namespace {

using namespace niche_page;
const Rgb kWhite{255, 255, 255};

std::vector<double> band_edges(const NichePlot& plot) {
  std::vector<double> edges;
  for (const ContourLevel& l : plot.levels)
    if (!l.breadth) edges.push_back(l.value);
  std::sort(edges.begin(), edges.end());
  return edges;
}

Rgb band_colour(double value, const std::vector<double>& edges) {
  const auto band = std::upper_bound(edges.begin(), edges.end(), value) - edges.begin();
  return ramp_colour(edges.empty() ? 0.5 : static_cast<double>(band) / static_cast<double>(edges.size()));
}

void fill_field(Canvas& canvas, const NichePlot& plot, const std::vector<double>& edges) {
  for (int y = 0; y < kPlotH; ++y)
    for (int x = 0; x < kPlotW; ++x) {
      // The nearest grid sample; the grid is finer than the bands are wide.
      const auto r = static_cast<Eigen::Index>(std::lround((y + 0.5) / kPlotH * (plot.grid - 1)));
      const auto c = static_cast<Eigen::Index>(std::lround((x + 0.5) / kPlotW * (plot.grid - 1)));
      canvas.set(kLeft + x, kTop + y, band_colour(plot.response(r, c), edges));
    }
}

bool inside_plot(double x, double y) { return x >= kLeft && x < kLeft + kPlotW && y >= kTop && y < kTop + kPlotH; }

void clipped_line(Canvas& canvas, Point2 a, Point2 b, Rgb c, int width, int dash) {
  // Sample the segment and draw only the parts inside the plot area.
  const int n = std::max(2, static_cast<int>(std::hypot(b.x - a.x, b.y - a.y)));
  for (int i = 0; i < n; ++i) {
    const double t0 = static_cast<double>(i) / n, t1 = static_cast<double>(i + 1) / n;
    const double x0 = a.x + t0 * (b.x - a.x), y0 = a.y + t0 * (b.y - a.y);
    const double x1 = a.x + t1 * (b.x - a.x), y1 = a.y + t1 * (b.y - a.y);
    if (dash > 0 && (i / dash) % 2 == 1) continue;
    if (inside_plot(x0, y0) && inside_plot(x1, y1)) canvas.line(x0, y0, x1, y1, c, width);
  }
}

void draw_lines(Canvas& canvas, const NichePlotFrame& f) {
  for (const ContourLevel& level : f.p.levels)
    for (const Polyline& line : level.lines) {
      std::vector<Point2> pts = line.points;
      if (line.closed && !pts.empty()) pts.push_back(pts.front());
      for (std::size_t i = 0; i + 1 < pts.size(); ++i)
        clipped_line(canvas, {f.gx(pts[i].x), f.gy(pts[i].y)}, {f.gx(pts[i + 1].x), f.gy(pts[i + 1].y)},
                     level.breadth ? kInk : Rgb{60, 60, 60}, level.breadth ? 2 : 1, 0);
    }
  for (std::size_t i = 0; i < f.p.hull.size() && f.p.hull.size() >= 3; ++i) {
    const Point2& a = f.p.hull[i];
    const Point2& b = f.p.hull[(i + 1) % f.p.hull.size()];
    clipped_line(canvas, {f.px(a.x), f.py(a.y)}, {f.px(b.x), f.py(b.y)}, kInk, 1, 4);
  }
  for (const Point2& q : f.p.training)
    if (inside_plot(f.px(q.x), f.py(q.y))) canvas.circle(f.px(q.x), f.py(q.y), 2.5, kInk, kWhite);
  for (std::size_t i = 0; i < f.p.conditional_optima.size(); ++i) {
    const PlotLine& l = f.p.conditional_optima[i];
    clipped_line(canvas, {f.px(l.from.x), f.py(l.from.y)}, {f.px(l.to.x), f.py(l.to.y)}, kInk, 1, i == 0 ? 3 : 8);
  }
  for (const PlotLine& l : f.p.principal_axes)
    clipped_line(canvas, {f.px(l.from.x), f.py(l.from.y)}, {f.px(l.to.x), f.py(l.to.y)}, kInk, 2, 0);
  if (f.p.stationary) {
    const double x = f.px(f.p.stationary->x), y = f.py(f.p.stationary->y);
    canvas.circle(x, y, 6, kWhite, kInk);
    canvas.circle(x, y, 5, kWhite, kInk);
  }
}

void draw_frame_and_labels(Canvas& canvas, const NichePlotFrame& f) {
  canvas.rect_outline(kLeft - 1, kTop - 1, kPlotW + 2, kPlotH + 2, kInk);
  for (const PlotTick& t : f.p.x_ticks) {
    const double x = f.px(t.position);
    canvas.line(x, kTop + kPlotH, x, kTop + kPlotH + 4, kInk);
    canvas.text(static_cast<int>(x) - Canvas::text_width(t.label) / 2, kTop + kPlotH + 8, t.label, kInk);
  }
  for (const PlotTick& t : f.p.y_ticks) {
    const double y = f.py(t.position);
    canvas.line(kLeft - 5, y, kLeft - 1, y, kInk);
    canvas.text(kLeft - 8 - Canvas::text_width(t.label), static_cast<int>(y) - 3, t.label, kInk);
  }
  canvas.text(kLeft + kPlotW / 2 - Canvas::text_width(f.p.x_label) / 2, kTop + kPlotH + 26, f.p.x_label, kInk);
  canvas.text(8, kTop - 14, f.p.y_label, kInk);  // the bitmap font is not rotated: label above the axis
  const int title_scale = Canvas::text_width(f.p.title, 2) <= kWidth - 2 * 12 ? 2 : 1;
  canvas.text(12, 12, f.p.title, kInk, title_scale);
  canvas.text(12, 36, f.p.subtitle, kInk);
  int y = kHeight - 14;
  for (auto it = f.p.notes.rbegin(); it != f.p.notes.rend(); ++it, y -= 12) canvas.text(12, y, "NOTE: " + *it, kInk);
}

void draw_legend(Canvas& canvas, const NichePlot& plot, const std::vector<double>& edges) {
  int y = kTop;
  canvas.text(kLegendX, y, plot.response_label.substr(0, 34), kInk);
  y += 16;
  // One swatch per band, highest first.
  for (std::size_t i = edges.size() + 1; i-- > 0;) {
    const std::string label = i == edges.size() ? "> " + significant(edges.back(), 3) : (i == 0 ? "< " + significant(edges.front(), 3) : significant(edges[i - 1], 3) + " - " + significant(edges[i], 3));
    canvas.fill_rect(kLegendX, y, 22, 11, ramp_colour(edges.empty() ? 0.5 : static_cast<double>(i) / static_cast<double>(edges.size())));
    canvas.rect_outline(kLegendX, y, 22, 11, kInk);
    canvas.text(kLegendX + 30, y + 2, label, kInk);
    y += 15;
    if (edges.empty()) break;
  }
  y += 10;
  canvas.line(kLegendX, y + 4, kLegendX + 22, y + 4, kInk, 2);
  canvas.text(kLegendX + 30, y + 1, significant(plot.breadth_percent, 3) + " % OF PEAK", kInk);
  y += 16;
  if (!plot.training.empty()) {
    canvas.circle(kLegendX + 11, y + 4, 2.5, kInk, kWhite);
    canvas.text(kLegendX + 30, y + 1, "TRAINING SITE", kInk);
    y += 16;
  }
  if (plot.hull.size() >= 3) {
    for (int x = 0; x < 22; x += 8) canvas.line(kLegendX + x, y + 4, kLegendX + x + 3, y + 4, kInk);
    canvas.text(kLegendX + 30, y + 1, "TRAINING HULL", kInk);
    y += 16;
  }
  if (plot.stationary) {
    canvas.circle(kLegendX + 11, y + 4, 5, kWhite, kInk);
    canvas.text(kLegendX + 30, y + 1, plot.stationary_label, kInk);
    y += 16;
  }
  if (!plot.principal_axes.empty()) {
    canvas.line(kLegendX, y + 4, kLegendX + 22, y + 4, kInk, 2);
    canvas.text(kLegendX + 30, y + 1, "PRINCIPAL AXES", kInk);
    y += 16;
  }
  for (std::size_t i = 0; i < plot.conditional_optima.size(); ++i) {
    const int dash = i == 0 ? 3 : 8;
    for (int x = 0; x < 22; x += 2 * dash) canvas.line(kLegendX + x, y + 4, kLegendX + std::min(22, x + dash - 1), y + 4, kInk);
    canvas.text(kLegendX + 30, y + 1, plot.conditional_optima[i].label.substr(0, 30), kInk);
    y += 16;
  }
}

}  // namespace

void write_niche_plot_png(const NichePlot& plot, const std::string& path) {
  Canvas canvas(kWidth, kHeight);
  const NichePlotFrame f{plot};
  const std::vector<double> edges = band_edges(plot);
  fill_field(canvas, plot, edges);
  draw_lines(canvas, f);
  draw_frame_and_labels(canvas, f);
  draw_legend(canvas, plot, edges);
  write_png(canvas, path, {{"Title", plot.title}, {"Description", plot.subtitle}, {"Software", "habcast describe"}});
}

}  // namespace habcast
