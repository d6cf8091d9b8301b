#pragma once
// A plot area on a figure: data coordinates mapped linearly onto a page rectangle, with ticks,
// tick labels and axis titles outside it, and marks in data units clipped to it.
#include <optional>
#include <string>
#include <vector>

#include "render/figure.hpp"
#include "render/figure_style.hpp"

namespace habcast {

struct Tick {
  double value = 0.0;  ///< data units
  std::string label;
};

/// Ticks at round values (1, 2 or 5 times a power of ten) from lo to hi inclusive, about `count`
/// of them, labelled with at most 4 significant digits.
std::vector<Tick> round_ticks(double lo, double hi, int count = 5);

class Axes {
 public:
  /// Data x0..x1 across `area` left to right, y0..y1 bottom to top.
  Axes(Figure& figure, const Rect& area, double x0, double x1, double y0, double y1);

  [[nodiscard]] const Rect& area() const { return area_; }
  [[nodiscard]] double px(double x) const;
  [[nodiscard]] double py(double y) const;
  [[nodiscard]] Point2 page(Point2 data) const { return {px(data.x), py(data.y)}; }
  [[nodiscard]] bool contains(Point2 data) const;

  /// The box around the plot area (drawn last by the caller, over the data).
  void frame(const Stroke& stroke = figure_style::frame());
  /// Ticks pointing out of the bottom edge, their labels, and the axis title centred below them.
  void x_axis(const std::vector<Tick>& ticks, const std::string& title);
  /// Ticks out of the left edge, labels, and the title reading upwards to their left.
  void y_axis(const std::vector<Tick>& ticks, const std::string& title);
  /// Light lines across the plot at the ticks (drawn first, under the data).
  void grid(const std::vector<Tick>& x_ticks, const std::vector<Tick>& y_ticks, const Stroke& stroke = figure_style::grid());

  void line(const std::vector<Point2>& data, const Stroke& stroke, const std::string& role = {});
  void segment(Point2 from, Point2 to, const Stroke& stroke, const std::string& role = {});
  void polygon(const std::vector<Point2>& data, std::optional<Fill> fill, std::optional<Stroke> stroke,
               const std::string& role = {}, std::optional<Hatch> hatch = {});
  /// The area between lower(x) and upper(x), e.g. a confidence band; x ascending.
  void band(const std::vector<double>& x, const std::vector<double>& lower, const std::vector<double>& upper,
            const Fill& fill, const std::string& role = {});
  void points(const std::vector<Point2>& data, const Marker& marker, const std::string& role = {});
  /// An image covering data x0..x1, y0..y1 (row 0 at y1); by default the whole plot area.
  void image(IndexedImage image, const std::string& role = {});
  void image(IndexedImage image, double x0, double x1, double y0, double y1, const std::string& role = {});
  void hatch_mask(PixelMask mask, const Hatch& hatch, const std::string& role = {});
  void text(Point2 data, std::string text, const TextStyle& style, const std::string& role = {});

 private:
  Figure& figure_;
  Rect area_;
  double x0_, x1_, y0_, y1_;
  [[nodiscard]] Rect data_rect(double x0, double x1, double y0, double y1) const;
};

}  // namespace habcast
