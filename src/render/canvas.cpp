#include "render/canvas.hpp"

#include <algorithm>
#include <cmath>

#include "render/bitmap_font.hpp"

namespace habcast {

Canvas::Canvas(int width, int height, Rgb background)
    : width_(width), height_(height), pixels_(static_cast<std::size_t>(width) * static_cast<std::size_t>(height) * 3) {
  fill_rect(0, 0, width, height, background);
}

Rgb Canvas::at(int x, int y) const {
  const std::size_t plane = static_cast<std::size_t>(width_) * static_cast<std::size_t>(height_);
  const std::size_t i = static_cast<std::size_t>(y) * static_cast<std::size_t>(width_) + static_cast<std::size_t>(x);
  return {pixels_[i], pixels_[plane + i], pixels_[2 * plane + i]};
}

void Canvas::set(int x, int y, Rgb c) {
  if (x < 0 || y < 0 || x >= width_ || y >= height_) return;
  const std::size_t plane = static_cast<std::size_t>(width_) * static_cast<std::size_t>(height_);
  const std::size_t i = static_cast<std::size_t>(y) * static_cast<std::size_t>(width_) + static_cast<std::size_t>(x);
  pixels_[i] = c.r;
  pixels_[plane + i] = c.g;
  pixels_[2 * plane + i] = c.b;
}

void Canvas::fill_rect(int x, int y, int w, int h, Rgb c) {
  for (int yy = std::max(0, y); yy < std::min(height_, y + h); ++yy)
    for (int xx = std::max(0, x); xx < std::min(width_, x + w); ++xx) set(xx, yy, c);
}

void Canvas::rect_outline(int x, int y, int w, int h, Rgb c) {
  line(x, y, x + w - 1, y, c);
  line(x, y + h - 1, x + w - 1, y + h - 1, c);
  line(x, y, x, y + h - 1, c);
  line(x + w - 1, y, x + w - 1, y + h - 1, c);
}

void Canvas::line(double x0, double y0, double x1, double y1, Rgb c, int width, int dash) {
  // Steps of at most half a pixel along the line, a square brush of `width` at each step.
  const double length = std::hypot(x1 - x0, y1 - y0);
  const int steps = std::max(1, static_cast<int>(std::ceil(length * 2.0)));
  const int lo = -(width - 1) / 2, hi = width / 2;
  for (int s = 0; s <= steps; ++s) {
    const double t = static_cast<double>(s) / steps;
    if (dash > 0 && static_cast<int>(t * length / dash) % 2 == 1) continue;
    const int x = static_cast<int>(std::lround(x0 + t * (x1 - x0)));
    const int y = static_cast<int>(std::lround(y0 + t * (y1 - y0)));
    for (int dy = lo; dy <= hi; ++dy)
      for (int dx = lo; dx <= hi; ++dx) set(x + dx, y + dy, c);
  }
}

void Canvas::circle(double cx, double cy, double r, Rgb fill, Rgb outline) {
  const int x0 = static_cast<int>(std::floor(cx - r - 1)), x1 = static_cast<int>(std::ceil(cx + r + 1));
  const int y0 = static_cast<int>(std::floor(cy - r - 1)), y1 = static_cast<int>(std::ceil(cy + r + 1));
  for (int y = y0; y <= y1; ++y)
    for (int x = x0; x <= x1; ++x) {
      const double d = std::hypot(x - cx, y - cy);
      if (d <= r - 1.0) set(x, y, fill);
      else if (d <= r) set(x, y, outline);
    }
}

void Canvas::text(int x, int y, const std::string& s, Rgb c, int scale) {
  for (std::size_t i = 0; i < s.size(); ++i) {
    const auto rows = glyph(s[i]);
    const int gx = x + static_cast<int>(i) * kGlyphAdvance * scale;
    for (int r = 0; r < kGlyphHeight; ++r)
      for (int col = 0; col < kGlyphWidth; ++col)
        if (rows[static_cast<std::size_t>(r)] & (1u << (kGlyphWidth - 1 - col)))
          fill_rect(gx + col * scale, y + r * scale, scale, scale, c);
  }
}

int Canvas::text_width(const std::string& s, int scale) {
  return s.empty() ? 0 : (static_cast<int>(s.size()) * kGlyphAdvance - 1) * scale;
}

}  // namespace habcast
