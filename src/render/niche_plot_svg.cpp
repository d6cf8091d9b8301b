// Draws a NichePlot as SVG. Greyscale-safe: contour colours come from the monotone-lightness ramp,
// and every other mark differs by shape or dash pattern, never by hue alone.
#include <algorithm>
#include <cmath>
#include <cstdio>

#include "core/base/number_text.hpp"
#include "render/colour_ramp.hpp"
#include "render/niche_plot.hpp"
#include "render/niche_plot_frame.hpp"
#include "render/svg_document.hpp"

namespace habcast {

namespace {

using namespace niche_page;
constexpr const char* kFont = "DejaVu Sans, Verdana, Arial, sans-serif";

/// Splits text at spaces into lines of at most `width` characters (longer words stay whole).
std::vector<std::string> wrap(const std::string& text, std::size_t width) {
  std::vector<std::string> lines;
  std::string line, word;
  auto flush_word = [&] {
    if (word.empty()) return;
    if (!line.empty() && line.size() + 1 + word.size() > width) {
      lines.push_back(line);
      line.clear();
    }
    line += (line.empty() ? "" : " ") + word;
    word.clear();
  };
  for (char ch : text) {
    if (ch == ' ') flush_word();
    else word += ch;
  }
  flush_word();
  if (!line.empty()) lines.push_back(line);
  return lines;
}

Attributes text_style(double x, double y, double size, const std::string& anchor = "start") {
  return {{"x", svg_number(x)}, {"y", svg_number(y)}, {"font-family", kFont}, {"font-size", svg_number(size)},
          {"text-anchor", anchor}};
}

Attributes line_attributes(Point2 a, Point2 b) {
  return {{"x1", svg_number(a.x)}, {"y1", svg_number(a.y)}, {"x2", svg_number(b.x)}, {"y2", svg_number(b.y)}};
}

Attributes with(Attributes a, const Attributes& more) {
  a.insert(a.end(), more.begin(), more.end());
  return a;
}

Attributes contour_style(const ContourLevel& level) {
  Attributes a{{"class", level.breadth ? "contour breadth" : "contour"},
               {"fill", "none"},
               {"stroke", to_hex(ramp_colour(level.ramp))},
               {"stroke-width", level.breadth ? "2.6" : "1.6"},
               {"stroke-linejoin", "round"}};
  if (level.breadth) a.emplace_back("stroke-dasharray", "8 4");
  return a;
}

const char* kConditionalDash[2] = {"2 3", "9 3 2 3"};

void draw_contours(SvgDocument& svg, const NichePlotFrame& f) {
  for (const ContourLevel& level : f.p.levels)
    for (const Polyline& line : level.lines) {
      std::vector<Point2> pts;
      for (const Point2& q : line.points) pts.push_back(f.grid(q));
      if (line.closed && !pts.empty()) pts.push_back(pts.front());
      svg.element("polyline", with(contour_style(level), {{"points", svg_points(pts)}, {"data-level", significant(level.value, 3)}}));
    }
}

void draw_contour_labels(SvgDocument& svg, const NichePlotFrame& f) {
  std::vector<Point2> placed;  // labels closer than this to an earlier one are left out
  for (const ContourLevel& level : f.p.levels) {
    if (level.breadth || level.lines.empty()) continue;
    const auto longest = std::max_element(level.lines.begin(), level.lines.end(), [](const Polyline& a, const Polyline& b) {
      return a.points.size() < b.points.size();
    });
    if (longest->points.size() < 8) continue;
    const Point2 q = f.grid(longest->points[longest->points.size() / 2]);
    const bool crowded = std::any_of(placed.begin(), placed.end(), [&](const Point2& p) { return std::hypot(p.x - q.x, p.y - q.y) < 28.0; });
    const bool inside = q.x > kLeft + 10 && q.x < kLeft + kPlotW - 10 && q.y > kTop + 10 && q.y < kTop + kPlotH - 10;
    if (crowded || !inside) continue;
    placed.push_back(q);
    svg.text("text", with(text_style(q.x, q.y + 3, 9, "middle"),
                          {{"class", "contour-label"}, {"stroke", "#ffffff"}, {"stroke-width", "3"}, {"paint-order", "stroke"}, {"fill", "#222222"}}),
             significant(level.value, 3));
  }
}

void draw_data(SvgDocument& svg, const NichePlotFrame& f) {
  if (f.p.hull.size() >= 3) {
    std::vector<Point2> pts;
    for (const Point2& q : f.p.hull) pts.push_back(f.model(q));
    svg.element("polygon", {{"class", "training-hull"}, {"points", svg_points(pts)}, {"fill", "#000000"}, {"fill-opacity", "0.035"},
                            {"stroke", "#444444"}, {"stroke-width", "1.2"}, {"stroke-dasharray", "5 3"}});
  }
  for (const Point2& q : f.p.training) {
    const Point2 s = f.model(q);
    svg.element("circle", {{"class", "training-point"}, {"cx", svg_number(s.x)}, {"cy", svg_number(s.y)}, {"r", "2.2"},
                           {"fill", "#1a1a1a"}, {"fill-opacity", "0.5"}});
  }
}

void draw_geometry(SvgDocument& svg, const NichePlotFrame& f) {
  for (std::size_t i = 0; i < f.p.conditional_optima.size(); ++i) {
    const PlotLine& l = f.p.conditional_optima[i];
    svg.element("line", with(line_attributes(f.model(l.from), f.model(l.to)),
                             {{"class", "conditional-optimum"}, {"stroke", "#111111"}, {"stroke-width", "1.3"},
                              {"stroke-dasharray", kConditionalDash[i % 2]}}));
  }
  for (const PlotLine& l : f.p.principal_axes)
    svg.element("line", with(line_attributes(f.model(l.from), f.model(l.to)),
                             {{"class", "principal-axis"}, {"stroke", "#000000"}, {"stroke-width", "1.4"}}));
  if (f.p.stationary) {
    const Point2 s = f.model(*f.p.stationary);
    svg.element("circle", {{"class", "optimum"}, {"cx", svg_number(s.x)}, {"cy", svg_number(s.y)}, {"r", "5.5"},
                           {"fill", "#ffffff"}, {"stroke", "#000000"}, {"stroke-width", "2"}});
    svg.text("text", with(text_style(s.x + 8, s.y - 7, 11), {{"class", "optimum-label"}, {"font-weight", "bold"},
                                                             {"stroke", "#ffffff"}, {"stroke-width", "3"}, {"paint-order", "stroke"}}),
             f.p.stationary_label);
  }
}

void draw_axes(SvgDocument& svg, const NichePlotFrame& f) {
  svg.element("rect", {{"class", "frame"}, {"x", svg_number(kLeft)}, {"y", svg_number(kTop)}, {"width", svg_number(kPlotW)},
                       {"height", svg_number(kPlotH)}, {"fill", "none"}, {"stroke", "#000000"}});
  for (const PlotTick& t : f.p.x_ticks) {
    const double x = f.px(t.position);
    svg.element("line", with(line_attributes({x, kTop + kPlotH}, {x, kTop + kPlotH + 5}), {{"stroke", "#000000"}}));
    svg.text("text", with(text_style(x, kTop + kPlotH + 18, 11, "middle"), {{"class", "tick-label"}}), t.label);
  }
  for (const PlotTick& t : f.p.y_ticks) {
    const double y = f.py(t.position);
    svg.element("line", with(line_attributes({kLeft - 5, y}, {kLeft, y}), {{"stroke", "#000000"}}));
    svg.text("text", with(text_style(kLeft - 8, y + 4, 11, "end"), {{"class", "tick-label"}}), t.label);
  }
  svg.text("text", with(text_style(kLeft + kPlotW / 2, kTop + kPlotH + 42, 13, "middle"), {{"class", "axis-label"}}), f.p.x_label);
  const double yx = 22, yy = kTop + kPlotH / 2;
  svg.text("text", with(text_style(yx, yy, 13, "middle"), {{"class", "axis-label"}, {"transform", "rotate(-90 " + svg_number(yx) + " " + svg_number(yy) + ")"}}),
           f.p.y_label);
}

void legend_entry(SvgDocument& svg, double y, const std::string& label, const Attributes& mark, const std::string& kind) {
  if (kind == "circle") svg.element("circle", with({{"cx", svg_number(kLegendX + 12)}, {"cy", svg_number(y - 4)}}, mark));
  else if (kind == "rect") svg.element("rect", with({{"x", svg_number(kLegendX + 2)}, {"y", svg_number(y - 10)}, {"width", "20"}, {"height", "12"}}, mark));
  else svg.element("line", with(line_attributes({kLegendX, y - 4}, {kLegendX + 24, y - 4}), mark));
  svg.text("text", text_style(kLegendX + 32, y, 11), label);
}

void draw_legend(SvgDocument& svg, const NichePlotFrame& f, double fraction_percent) {
  svg.begin("g", {{"class", "legend"}});
  double y = kTop + 4;
  for (const std::string& line : wrap(f.p.response_label, 30)) {
    svg.text("text", with(text_style(kLegendX, y, 12), {{"font-weight", "bold"}}), line);
    y += 15;
  }
  y += 5;
  std::vector<const ContourLevel*> levels;
  for (const ContourLevel& l : f.p.levels) levels.push_back(&l);
  std::sort(levels.begin(), levels.end(), [](const ContourLevel* a, const ContourLevel* b) { return a->value > b->value; });
  for (const ContourLevel* l : levels) {
    const std::string label = l->breadth ? significant(l->value, 3) + " (" + significant(fraction_percent, 3) + " % of peak)" : significant(l->value, 3);
    legend_entry(svg, y, label, with(contour_style(*l), {}), "line");
    y += 17;
  }
  y += 10;
  if (!f.p.training.empty()) {
    legend_entry(svg, y, "training site", {{"r", "2.6"}, {"fill", "#1a1a1a"}, {"fill-opacity", "0.5"}}, "circle");
    y += 18;
  }
  if (f.p.hull.size() >= 3) {
    legend_entry(svg, y, "training hull", {{"fill", "#000000"}, {"fill-opacity", "0.035"}, {"stroke", "#444444"}, {"stroke-dasharray", "5 3"}}, "rect");
    y += 18;
  }
  if (f.p.stationary) {
    legend_entry(svg, y, f.p.stationary_label, {{"r", "5"}, {"fill", "#ffffff"}, {"stroke", "#000000"}, {"stroke-width", "2"}}, "circle");
    y += 18;
  }
  if (!f.p.principal_axes.empty()) {
    legend_entry(svg, y, "principal axes", {{"stroke", "#000000"}, {"stroke-width", "1.4"}}, "line");
    y += 18;
  }
  for (std::size_t i = 0; i < f.p.conditional_optima.size(); ++i) {
    legend_entry(svg, y, f.p.conditional_optima[i].label,
                 {{"stroke", "#111111"}, {"stroke-width", "1.3"}, {"stroke-dasharray", kConditionalDash[i % 2]}}, "line");
    y += 18;
  }
  svg.end();
}

}  // namespace

std::string niche_plot_svg(const NichePlot& plot) {
  SvgDocument svg(kWidth, kHeight);
  const NichePlotFrame f{plot};
  svg.element("rect", {{"width", svg_number(kWidth)}, {"height", svg_number(kHeight)}, {"fill", "#ffffff"}});
  svg.text("title", {}, plot.title);
  svg.text("text", with(text_style(kLeft, 26, 15), {{"class", "title"}, {"font-weight", "bold"}}), plot.title);
  if (!plot.subtitle.empty()) svg.text("text", with(text_style(kLeft, 44, 11), {{"class", "subtitle"}}), plot.subtitle);
  svg.begin("defs");
  svg.begin("clipPath", {{"id", "plot-area"}});
  svg.element("rect", {{"x", svg_number(kLeft)}, {"y", svg_number(kTop)}, {"width", svg_number(kPlotW)}, {"height", svg_number(kPlotH)}});
  svg.end();
  svg.end();
  svg.begin("g", {{"clip-path", "url(#plot-area)"}});
  draw_data(svg, f);
  draw_contours(svg, f);
  draw_geometry(svg, f);
  draw_contour_labels(svg, f);
  svg.end();
  draw_axes(svg, f);
  draw_legend(svg, f, plot.breadth_percent);
  double y = kHeight - 10;
  for (auto it = plot.notes.rbegin(); it != plot.notes.rend(); ++it, y -= 14)
    svg.text("text", with(text_style(kLeft, y, 11), {{"class", "note"}, {"font-style", "italic"}}), "Note: " + *it);
  return svg.str();
}

}  // namespace habcast
