#include "render/figure.hpp"

#include <stdexcept>

namespace habcast {

Figure::Figure(double width, double height) : width_(width), height_(height) {
  if (!(width > 0.0 && height > 0.0)) throw std::invalid_argument("a figure needs a positive width and height");
}

std::vector<const Mark*> Figure::marks_with_role(const std::string& role) const {
  std::vector<const Mark*> out;
  for (const Mark& m : marks_)
    if (m.role == role) out.push_back(&m);
  return out;
}

void Figure::path(std::vector<Point2> points, bool closed, std::optional<Fill> fill, std::optional<Stroke> stroke,
                  const std::string& role, std::optional<Rect> clip) {
  add({PathMark{std::move(points), closed, std::move(fill), std::move(stroke), std::nullopt}, clip, role});
}

void Figure::line(Point2 from, Point2 to, const Stroke& stroke, const std::string& role) {
  path({from, to}, false, std::nullopt, stroke, role);
}

void Figure::rect(const Rect& r, std::optional<Fill> fill, std::optional<Stroke> stroke, const std::string& role) {
  path({{r.x, r.y}, {r.right(), r.y}, {r.right(), r.bottom()}, {r.x, r.bottom()}}, true, std::move(fill), std::move(stroke), role);
}

void Figure::text(Point2 at, std::string text, const TextStyle& style, const std::string& role) {
  if (text.empty()) return;
  add({TextMark{at, std::move(text), style}, std::nullopt, role});
}

double Figure::text_lines(Point2 at, const std::vector<std::string>& lines, const TextStyle& style, double leading,
                          const std::string& role) {
  double y = at.y;
  for (std::size_t i = 0; i < lines.size(); ++i) {
    if (i > 0) y += leading * style.size;
    text({at.x, y}, lines[i], style, role);
  }
  return y;
}

void Figure::markers(std::vector<Point2> centres, const Marker& marker, const std::string& role, std::optional<Rect> clip) {
  add({MarkersMark{std::move(centres), marker}, clip, role});
}

void Figure::image(const Rect& where, IndexedImage image, const std::string& role) {
  if (image.width <= 0 || image.height <= 0 ||
      image.index.size() != static_cast<std::size_t>(image.width) * static_cast<std::size_t>(image.height))
    throw std::invalid_argument("an image needs width * height palette indices");
  if (image.palette.empty() || image.palette.size() > 256) throw std::invalid_argument("an image needs 1 to 256 palette colours");
  add({ImageMark{where, std::move(image)}, std::nullopt, role});
}

void Figure::hatch_mask(const Rect& where, PixelMask mask, const Hatch& hatch, const std::string& role) {
  if (mask.width <= 0 || mask.height <= 0 ||
      mask.on.size() != static_cast<std::size_t>(mask.width) * static_cast<std::size_t>(mask.height))
    throw std::invalid_argument("a hatch mask needs width * height values");
  add({HatchMaskMark{where, std::move(mask), hatch}, std::nullopt, role});
}

}  // namespace habcast
