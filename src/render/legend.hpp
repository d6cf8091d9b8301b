#pragma once
// A legend: a column of entries (a mark beside its label), laid out beside the plot, never over
// the data. Build it entry by entry, ask its height to place it, then draw it on the figure.
#include <functional>
#include <optional>
#include <string>
#include <utility>
#include <variant>
#include <vector>

#include "render/figure.hpp"
#include "render/figure_style.hpp"

namespace habcast {

class Legend {
 public:
  /// A column `width` points wide; labels wrap to fit beside their marks.
  explicit Legend(double width, TextStyle label = figure_style::legend());

  void heading(const std::string& text);
  void line(const std::string& label, const Stroke& stroke);
  void marker(const std::string& label, const Marker& marker);
  void swatch(const std::string& label, const Fill& fill, std::optional<Stroke> outline = {}, std::optional<Hatch> hatch = {});
  /// A stepped colour bar, highest step on top: `colours` low to high, `edges` the labels of the
  /// boundaries between steps (colours.size() - 1 of them).
  void colour_steps(const std::vector<Rgb>& colours, const std::vector<std::string>& edges);
  /// A continuous colour bar from 0 (bottom) to 1 (top), with labels at positions in 0..1; the
  /// colours are habcast's ramp unless another function of 0..1 is given (e.g. a diverging one).
  void colour_ramp(const std::vector<std::pair<double, std::string>>& labels, double bar_height = 90.0,
                   std::function<Rgb(double)> colours = ramp_colour);
  void gap(double points = 6.0);

  [[nodiscard]] double width() const { return width_; }
  [[nodiscard]] double height() const;
  /// Draws the legend with its top-left corner at `top_left`; returns the bottom edge.
  double draw(Figure& figure, Point2 top_left, const std::string& role = "legend") const;

 private:
  struct Heading { std::string text; };
  struct LineKey { std::string label; Stroke stroke; };
  struct MarkerKey { std::string label; Marker marker; };
  struct SwatchKey { std::string label; Fill fill; std::optional<Stroke> outline; std::optional<Hatch> hatch; };
  struct Steps { std::vector<Rgb> colours; std::vector<std::string> edges; };
  struct Ramp { std::vector<std::pair<double, std::string>> labels; double height; std::function<Rgb(double)> colours; };
  struct Gap { double height; };
  using Entry = std::variant<Heading, LineKey, MarkerKey, SwatchKey, Steps, Ramp, Gap>;

  double width_;
  TextStyle label_;
  std::vector<Entry> entries_;
  double entry_height(const Entry& e) const;
};

}  // namespace habcast
