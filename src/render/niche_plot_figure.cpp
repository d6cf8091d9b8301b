// Draws a NichePlot as a Figure: the response as filled bands between the contour levels (habcast's
// ramp, lighter = higher), thin contour lines with their values, the breadth level, the training
// sites and their hull, the optimum with the principal axes and the lines of conditional optima,
// and a legend beside the plot. Greyscale-safe: the bands rise in lightness, and every other mark
// differs by shape or dash, drawn over a white underlay so it reads on dark and light bands alike.
#include <algorithm>
#include <cmath>

#include "render/drawing.hpp"
#include "render/niche_plot.hpp"

namespace habcast {

namespace {

namespace fs = figure_style;

constexpr double kPlotLeft = 54.0;      // plot area's left edge: room for tick labels and the y title
constexpr double kPlotSide = 282.0;     // the plot is square
constexpr double kNicheLegendGap = 26.0; // between the plot and the legend column
constexpr double kNicheMargin = 8.0;     // page edge
constexpr double kPixelsPerPoint = 2.0;  // resolution of the band image (144 per inch; edges are smooth)

const Stroke kUnderlay{fs::kWhite, 2.6, {}, 0.7};

std::vector<double> band_edges(const NichePlot& plot) {
  std::vector<double> edges;
  for (const ContourLevel& l : plot.levels)
    if (!l.breadth) edges.push_back(l.value);
  std::sort(edges.begin(), edges.end());
  return edges;
}

std::vector<Rgb> band_colours(std::size_t edges) {
  std::vector<Rgb> colours;
  for (std::size_t i = 0; i <= edges; ++i) colours.push_back(ramp_colour(edges == 0 ? 0.5 : static_cast<double>(i) / static_cast<double>(edges)));
  return colours;
}

/// The response, bilinear between grid samples, at grid coordinates (column, row).
double response_at(const NichePlot& p, double column, double row) {
  const double c = std::clamp(column, 0.0, p.grid - 1.0), r = std::clamp(row, 0.0, p.grid - 1.0);
  const auto c0 = static_cast<Eigen::Index>(std::min(std::floor(c), p.grid - 2.0));
  const auto r0 = static_cast<Eigen::Index>(std::min(std::floor(r), p.grid - 2.0));
  const double fc = c - static_cast<double>(c0), fr = r - static_cast<double>(r0);
  const Eigen::MatrixXd& v = p.response;
  return (1 - fr) * ((1 - fc) * v(r0, c0) + fc * v(r0, c0 + 1)) + fr * ((1 - fc) * v(r0 + 1, c0) + fc * v(r0 + 1, c0 + 1));
}

IndexedImage band_image(const NichePlot& p, const std::vector<double>& edges) {
  IndexedImage img;
  img.width = img.height = static_cast<int>(kPlotSide * kPixelsPerPoint);
  img.palette = band_colours(edges.size());
  img.index.resize(static_cast<std::size_t>(img.width) * static_cast<std::size_t>(img.height));
  for (int y = 0; y < img.height; ++y)
    for (int x = 0; x < img.width; ++x) {
      const double v = response_at(p, (x + 0.5) / img.width * (p.grid - 1), (y + 0.5) / img.height * (p.grid - 1));
      const auto band = std::upper_bound(edges.begin(), edges.end(), v) - edges.begin();
      img.index[static_cast<std::size_t>(y) * static_cast<std::size_t>(img.width) + static_cast<std::size_t>(x)] =
          static_cast<std::uint8_t>(band);
    }
  return img;
}

std::vector<Point2> to_model(const NichePlot& p, const Polyline& line) {
  std::vector<Point2> out;
  for (const Point2& q : line.points)
    out.push_back({p.x0 + q.x / (p.grid - 1) * (p.x1 - p.x0), p.y1 - q.y / (p.grid - 1) * (p.y1 - p.y0)});
  if (line.closed && !out.empty()) out.push_back(out.front());
  return out;
}

Stroke contour_stroke() { return {kInk, 0.45, {}, 0.55}; }
Stroke breadth_stroke() { return {kInk, 1.3, {4.0, 2.2}}; }
Stroke hull_stroke() { return {kInk, 0.9, {2.5, 1.8}}; }
Stroke axis_stroke() { return {kInk, 1.1}; }
Stroke conditional_stroke(std::size_t i) { return {kInk, 0.9, i % 2 == 0 ? std::vector<double>{0.9, 1.8} : std::vector<double>{5.0, 1.8, 0.9, 1.8}}; }
Marker site_marker() { return {MarkerShape::circle, 2.4, Fill{kInk, 0.8}, Stroke{fs::kWhite, 0.35}}; }
Marker optimum_marker() { return {MarkerShape::circle, 6.5, Fill{fs::kWhite}, Stroke{kInk, 1.3}}; }

/// A line drawn over a white underlay, so it stays visible on the darkest band.
void underlaid(Axes& ax, const std::vector<Point2>& pts, const Stroke& stroke, const std::string& role) {
  Stroke under = kUnderlay;
  under.width = stroke.width + 0.9;
  ax.line(pts, under, role + "-underlay");
  ax.line(pts, stroke, role);
}

void draw_contours(Axes& ax, const NichePlot& p) {
  for (const ContourLevel& level : p.levels)
    for (const Polyline& line : level.lines) {
      if (level.breadth) underlaid(ax, to_model(p, line), breadth_stroke(), "breadth-contour");
      else ax.line(to_model(p, line), contour_stroke(), "contour");
    }
}

void draw_contour_labels(Axes& ax, const NichePlot& p) {
  TextStyle label{6.5};
  label.anchor = Anchor::middle;
  label.baseline = Baseline::middle;
  label.halo = 1.4;
  std::vector<Point2> placed;  // labels closer than 24 pt to an earlier one are left out
  const Rect& a = ax.area();
  for (const ContourLevel& level : p.levels) {
    if (level.breadth || level.lines.empty()) continue;
    const auto longest = std::max_element(level.lines.begin(), level.lines.end(),
                                          [](const Polyline& x, const Polyline& y) { return x.points.size() < y.points.size(); });
    if (longest->points.size() < 8) continue;
    const std::vector<Point2> pts = to_model(p, *longest);
    const Point2 q = ax.page(pts[pts.size() / 2]);
    const bool crowded = std::any_of(placed.begin(), placed.end(), [&](const Point2& o) { return std::hypot(o.x - q.x, o.y - q.y) < 24.0; });
    const bool inside = q.x > a.x + 10 && q.x < a.right() - 10 && q.y > a.y + 8 && q.y < a.bottom() - 8;
    if (crowded || !inside) continue;
    placed.push_back(q);
    ax.text(pts[pts.size() / 2], typeset_number(level.value, 3), label, "contour-label");
  }
}

void draw_geometry(Figure& fig, Axes& ax, const NichePlot& p) {
  for (std::size_t i = 0; i < p.conditional_optima.size(); ++i)
    underlaid(ax, {p.conditional_optima[i].from, p.conditional_optima[i].to}, conditional_stroke(i), "conditional-optimum");
  for (const PlotLine& l : p.principal_axes) underlaid(ax, {l.from, l.to}, axis_stroke(), "principal-axis");
  if (!p.stationary) return;
  ax.points({*p.stationary}, optimum_marker(), "optimum");
  TextStyle label{fs::kLegendSize, true};
  label.halo = 1.6;
  label.baseline = Baseline::bottom;
  const Point2 at = ax.page(*p.stationary);
  // Above and to the right of the marker, unless that runs off the plot.
  const bool room = at.x + 60.0 < ax.area().right();
  label.anchor = room ? Anchor::start : Anchor::end;
  fig.text({at.x + (room ? 4.5 : -4.5), at.y - 3.5}, p.stationary_label, label, "optimum-label");
}

Legend build_legend(const NichePlot& p, const std::vector<double>& edges, double width) {
  Legend legend(width);
  std::string heading = p.response_label;
  if (!heading.empty()) heading[0] = static_cast<char>(std::toupper(static_cast<unsigned char>(heading[0])));
  legend.heading(heading);
  std::vector<std::string> labels;
  for (double e : edges) labels.push_back(typeset_number(e, 3));
  legend.colour_steps(band_colours(edges.size()), labels);
  legend.gap(8.0);
  for (const ContourLevel& l : p.levels)
    if (l.breadth) {
      legend.line(typeset_number(l.value, 3) + " (" + typeset_number(p.breadth_percent, 3) + " % of the peak)", breadth_stroke());
      break;
    }
  if (!p.training.empty()) legend.marker("training site", site_marker());
  if (p.hull.size() >= 3) legend.line("training hull", hull_stroke());
  if (p.stationary) legend.marker(p.stationary_label, optimum_marker());
  if (!p.principal_axes.empty()) legend.line("principal axes", axis_stroke());
  for (std::size_t i = 0; i < p.conditional_optima.size(); ++i) legend.line(p.conditional_optima[i].label, conditional_stroke(i));
  return legend;
}

}  // namespace

Figure niche_plot_figure(const NichePlot& p) {
  const double width = kA4FigureWidth;
  const double legend_x = kPlotLeft + kPlotSide + kNicheLegendGap;
  const double text_width = width - 2 * kNicheMargin;

  // Header: the title, then what the other covariates are held at.
  std::vector<std::string> subtitle = p.subtitle.empty() ? std::vector<std::string>{} : wrap_text(p.subtitle, fs::subtitle(), text_width);
  const double title_y = kNicheMargin + fs::kTitleSize;
  const double subtitle_y = title_y + 1.5 * fs::kSubtitleSize;
  const double top = (subtitle.empty() ? title_y : subtitle_y + 1.3 * fs::kSubtitleSize * static_cast<double>(subtitle.size() - 1)) + 14.0;

  const std::vector<double> edges = band_edges(p);
  const Legend legend = build_legend(p, edges, width - legend_x - kNicheMargin);
  std::vector<std::string> notes;
  for (const std::string& n : p.notes) notes.push_back("Note: " + n + ".");
  std::vector<std::string> foot;
  for (const std::string& n : notes)
    for (const std::string& line : wrap_text(n, fs::note(), text_width)) foot.push_back(line);
  if (!p.caption.empty())
    for (const std::string& line : wrap_text(p.caption, fs::note(), text_width)) foot.push_back(line);
  const double axis_bottom = top + kPlotSide + 34.0;
  const double body_bottom = std::max(axis_bottom, top + legend.height());
  const double height = body_bottom + (foot.empty() ? 0.0 : 6.0 + 1.3 * fs::kNoteSize * static_cast<double>(foot.size())) + kNicheMargin;

  Figure fig(width, height);
  fig.title = p.title;
  fig.subject = p.subtitle;
  fig.text({kNicheMargin, title_y}, p.title, fs::title(), "title");
  fig.text_lines({kNicheMargin, subtitle_y}, subtitle, fs::subtitle(), 1.3, "subtitle");

  Axes ax(fig, Rect{kPlotLeft, top, kPlotSide, kPlotSide}, p.x0, p.x1, p.y0, p.y1);
  ax.image(band_image(p, edges), "response-bands");
  draw_contours(ax, p);
  if (p.hull.size() >= 3) {
    std::vector<Point2> ring = p.hull;
    ring.push_back(ring.front());
    underlaid(ax, ring, hull_stroke(), "training-hull");
  }
  ax.points(p.training, site_marker(), "training-point");
  draw_geometry(fig, ax, p);
  draw_contour_labels(ax, p);

  std::vector<Tick> xt, yt;
  for (const PlotTick& t : p.x_ticks) xt.push_back({t.position, t.label});
  for (const PlotTick& t : p.y_ticks) yt.push_back({t.position, t.label});
  ax.x_axis(xt, p.x_label);
  ax.y_axis(yt, p.y_label);
  ax.frame();
  legend.draw(fig, {legend_x, top});
  fig.text_lines({kNicheMargin, body_bottom + 6.0 + fs::kNoteSize}, foot, fs::note(), 1.3, "note");
  return fig;
}

}  // namespace habcast
