#pragma once
// An RGB pixel canvas with the few drawing operations our PNG pictures need: filled rectangles,
// lines (with width and dashes), circles, and text in the built-in bitmap font.
#include <cstdint>
#include <string>
#include <vector>

#include "render/colour_ramp.hpp"

namespace habcast {

class Canvas {
 public:
  Canvas(int width, int height, Rgb background = {255, 255, 255});

  [[nodiscard]] int width() const { return width_; }
  [[nodiscard]] int height() const { return height_; }
  /// Band-sequential pixels: all red, then all green, then all blue (GDAL's default band layout).
  [[nodiscard]] const std::vector<std::uint8_t>& pixels() const { return pixels_; }
  [[nodiscard]] Rgb at(int x, int y) const;

  void set(int x, int y, Rgb c);  ///< ignored outside the canvas
  void fill_rect(int x, int y, int w, int h, Rgb c);
  void rect_outline(int x, int y, int w, int h, Rgb c);
  /// A line of `width` pixels; `dash` > 0 draws `dash` pixels on, `dash` off.
  void line(double x0, double y0, double x1, double y1, Rgb c, int width = 1, int dash = 0);
  void circle(double cx, double cy, double r, Rgb fill, Rgb outline);
  /// Text with its top-left corner at (x, y); each font pixel becomes scale x scale pixels.
  void text(int x, int y, const std::string& s, Rgb c, int scale = 1);
  /// Width in pixels of `s` drawn at `scale`.
  [[nodiscard]] static int text_width(const std::string& s, int scale = 1);

 private:
  int width_, height_;
  std::vector<std::uint8_t> pixels_;
};

}  // namespace habcast
