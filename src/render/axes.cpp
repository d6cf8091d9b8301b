#include "render/axes.hpp"

#include <algorithm>
#include <cmath>
#include <stdexcept>

#include "render/text_metrics.hpp"
#include "render/unit_text.hpp"

namespace habcast {

std::vector<Tick> round_ticks(double lo, double hi, int count) {
  std::vector<Tick> ticks;
  if (!(hi > lo) || count < 1) return ticks;
  const double raw = (hi - lo) / count;
  const double exponent = std::floor(std::log10(raw));
  double mantissa = 10.0;
  for (double m : {1.0, 2.0, 5.0})
    if (raw <= m * std::pow(10.0, exponent)) {
      mantissa = m;
      break;
    }
  // Tick n is n * mantissa / 10^-exponent: dividing by an exact power of ten gives 0.6, not 3 * 0.2.
  const double divisor = exponent < 0 ? std::pow(10.0, -exponent) : 1.0;
  const double multiplier = exponent < 0 ? mantissa : mantissa * std::pow(10.0, exponent);
  const double tolerance = 1e-9 * (hi - lo);
  for (double n = std::ceil((lo - tolerance) * divisor / multiplier);; n += 1.0) {
    const double v = n * multiplier / divisor;
    if (v > hi + tolerance) break;
    ticks.push_back({v == 0.0 ? 0.0 : v, typeset_number(v == 0.0 ? 0.0 : v, 4)});
  }
  return ticks;
}

Axes::Axes(Figure& figure, const Rect& area, double x0, double x1, double y0, double y1)
    : figure_(figure), area_(area), x0_(x0), x1_(x1), y0_(y0), y1_(y1) {
  if (!(x1 != x0 && y1 != y0 && std::isfinite(x1 - x0) && std::isfinite(y1 - y0)))
    throw std::invalid_argument("axes need two distinct, finite ends on each axis");
}

double Axes::px(double x) const { return area_.x + (x - x0_) / (x1_ - x0_) * area_.width; }
double Axes::py(double y) const { return area_.y + (y1_ - y) / (y1_ - y0_) * area_.height; }

bool Axes::contains(Point2 d) const {
  const Point2 p = page(d);
  return p.x >= area_.x && p.x <= area_.right() && p.y >= area_.y && p.y <= area_.bottom();
}

void Axes::frame(const Stroke& stroke) { figure_.rect(area_, std::nullopt, stroke, "frame"); }

void Axes::x_axis(const std::vector<Tick>& ticks, const std::string& title) {
  const Stroke tick_stroke = figure_style::frame();
  TextStyle label = figure_style::tick_label();
  label.anchor = Anchor::middle;
  label.baseline = Baseline::top;
  double lowest = area_.bottom() + figure_style::kTickLength;
  for (const Tick& t : ticks) {
    const double x = px(t.value);
    if (x < area_.x - 0.01 || x > area_.right() + 0.01) continue;
    figure_.line({x, area_.bottom()}, {x, area_.bottom() + figure_style::kTickLength}, tick_stroke, "tick");
    figure_.text({x, area_.bottom() + figure_style::kTickLength + 2.0}, t.label, label, "tick-label");
    const TextExtent e = measure_text(t.label, label);
    lowest = std::max(lowest, area_.bottom() + figure_style::kTickLength + 2.0 + e.ascent + e.descent);
  }
  TextStyle t = figure_style::axis_title();
  t.anchor = Anchor::middle;
  t.baseline = Baseline::top;
  figure_.text({area_.x + area_.width / 2.0, lowest + 3.0}, title, t, "axis-title");
}

void Axes::y_axis(const std::vector<Tick>& ticks, const std::string& title) {
  const Stroke tick_stroke = figure_style::frame();
  TextStyle label = figure_style::tick_label();
  label.anchor = Anchor::end;
  label.baseline = Baseline::middle;
  double widest = 0.0;
  for (const Tick& t : ticks) {
    const double y = py(t.value);
    if (y < area_.y - 0.01 || y > area_.bottom() + 0.01) continue;
    figure_.line({area_.x - figure_style::kTickLength, y}, {area_.x, y}, tick_stroke, "tick");
    figure_.text({area_.x - figure_style::kTickLength - 2.0, y}, t.label, label, "tick-label");
    widest = std::max(widest, measure_text(t.label, label).width);
  }
  TextStyle t = figure_style::axis_title();
  t.anchor = Anchor::middle;
  t.baseline = Baseline::bottom;
  t.angle_degrees = 90.0;
  figure_.text({area_.x - figure_style::kTickLength - 2.0 - widest - 4.0, area_.y + area_.height / 2.0}, title, t, "axis-title");
}

void Axes::grid(const std::vector<Tick>& x_ticks, const std::vector<Tick>& y_ticks, const Stroke& stroke) {
  for (const Tick& t : x_ticks)
    if (px(t.value) > area_.x + 0.5 && px(t.value) < area_.right() - 0.5)
      figure_.line({px(t.value), area_.y}, {px(t.value), area_.bottom()}, stroke, "grid");
  for (const Tick& t : y_ticks)
    if (py(t.value) > area_.y + 0.5 && py(t.value) < area_.bottom() - 0.5)
      figure_.line({area_.x, py(t.value)}, {area_.right(), py(t.value)}, stroke, "grid");
}

void Axes::line(const std::vector<Point2>& data, const Stroke& stroke, const std::string& role) {
  std::vector<Point2> pts;
  pts.reserve(data.size());
  for (const Point2& d : data) pts.push_back(page(d));
  figure_.path(std::move(pts), false, std::nullopt, stroke, role, area_);
}

void Axes::segment(Point2 from, Point2 to, const Stroke& stroke, const std::string& role) { line({from, to}, stroke, role); }

void Axes::polygon(const std::vector<Point2>& data, std::optional<Fill> fill, std::optional<Stroke> stroke, const std::string& role,
                   std::optional<Hatch> hatch) {
  std::vector<Point2> pts;
  pts.reserve(data.size());
  for (const Point2& d : data) pts.push_back(page(d));
  figure_.add({PathMark{std::move(pts), true, std::move(fill), std::move(stroke), std::move(hatch)}, area_, role});
}

void Axes::band(const std::vector<double>& x, const std::vector<double>& lower, const std::vector<double>& upper, const Fill& fill,
                const std::string& role) {
  if (x.size() != lower.size() || x.size() != upper.size()) throw std::invalid_argument("a band needs as many lower and upper values as x values");
  std::vector<Point2> outline;
  outline.reserve(2 * x.size());
  for (std::size_t i = 0; i < x.size(); ++i) outline.push_back({x[i], upper[i]});
  for (std::size_t i = x.size(); i-- > 0;) outline.push_back({x[i], lower[i]});
  polygon(outline, fill, std::nullopt, role);
}

void Axes::points(const std::vector<Point2>& data, const Marker& marker, const std::string& role) {
  std::vector<Point2> pts;
  pts.reserve(data.size());
  for (const Point2& d : data) pts.push_back(page(d));
  figure_.markers(std::move(pts), marker, role, area_);
}

Rect Axes::data_rect(double x0, double x1, double y0, double y1) const {
  const double left = std::min(px(x0), px(x1)), top = std::min(py(y0), py(y1));
  return {left, top, std::fabs(px(x1) - px(x0)), std::fabs(py(y1) - py(y0))};
}

void Axes::image(IndexedImage image, const std::string& role) { figure_.image(area_, std::move(image), role); }

void Axes::image(IndexedImage image, double x0, double x1, double y0, double y1, const std::string& role) {
  figure_.image(data_rect(x0, x1, y0, y1), std::move(image), role);
}

void Axes::hatch_mask(PixelMask mask, const Hatch& hatch, const std::string& role) {
  figure_.hatch_mask(area_, std::move(mask), hatch, role);
}

void Axes::text(Point2 data, std::string text, const TextStyle& style, const std::string& role) {
  figure_.text(page(data), std::move(text), style, role);
}

}  // namespace habcast
