#include "render/scale_bar.hpp"

#include <cmath>

#include "core/base/number_text.hpp"
#include "render/figure_style.hpp"

namespace habcast {

double scale_bar_metres(double metres_per_point, double max_length) {
  const double longest = metres_per_point * max_length;
  if (!(longest > 0.0) || !std::isfinite(longest)) return 0.0;
  const double power = std::pow(10.0, std::floor(std::log10(longest)));
  double length = power;
  for (double m : {2.0, 5.0})
    if (m * power <= longest * (1.0 + 1e-12)) length = m * power;
  return length;
}

double scale_bar(Figure& figure, Point2 left, double metres_per_point, double max_length, const std::string& role) {
  const double metres = scale_bar_metres(metres_per_point, max_length);
  if (metres <= 0.0) return 0.0;
  const double length = metres / metres_per_point;
  // Two halves, dark then white, in a dark outline: readable in greyscale and on any background.
  const double h = 3.0, half = length / 2.0;
  figure.rect({left.x, left.y - h, half, h}, Fill{kInk}, Stroke{kInk, 0.5}, role);
  figure.rect({left.x + half, left.y - h, half, h}, Fill{figure_style::kWhite}, Stroke{kInk, 0.5}, role);
  TextStyle label = figure_style::legend();
  label.baseline = Baseline::alphabetic;
  auto text = [](double m) { return m >= 1000.0 ? significant(m / 1000.0, 3) + " km" : significant(m, 3) + " m"; };
  label.anchor = Anchor::middle;
  figure.text({left.x, left.y - h - 2.5}, "0", label, role + "-label");
  figure.text({left.x + length, left.y - h - 2.5}, text(metres), label, role + "-label");
  return length;
}

}  // namespace habcast
