#include "render/colour_ramp.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>

namespace habcast {

namespace {

// CIE D65 reference white (CIE 15:2004), Y normalised to 1.
constexpr double kXn = 0.95047, kYn = 1.0, kZn = 1.08883;
constexpr double kPi = 3.14159265358979323846;

double lab_f_inverse(double t) {
  const double delta = 6.0 / 29.0;
  return t > delta ? t * t * t : 3.0 * delta * delta * (t - 4.0 / 29.0);
}

double lab_f(double t) {
  const double delta = 6.0 / 29.0;
  return t > delta * delta * delta ? std::cbrt(t) : t / (3.0 * delta * delta) + 4.0 / 29.0;
}

double srgb_encode(double v) { return v <= 0.0031308 ? 12.92 * v : 1.055 * std::pow(v, 1.0 / 2.4) - 0.055; }
double srgb_decode(double v) { return v <= 0.04045 ? v / 12.92 : std::pow((v + 0.055) / 1.055, 2.4); }

struct Linear {
  double r, g, b;
  [[nodiscard]] bool in_gamut() const {
    return r >= -1e-9 && r <= 1 + 1e-9 && g >= -1e-9 && g <= 1 + 1e-9 && b >= -1e-9 && b <= 1 + 1e-9;
  }
};

/// L*C*h -> linear sRGB (IEC 61966-2-1 matrix).
Linear lch_to_linear(double L, double C, double h_degrees) {
  const double h = h_degrees * kPi / 180.0;
  const double a = C * std::cos(h), b = C * std::sin(h);
  const double fy = (L + 16.0) / 116.0;
  const double X = kXn * lab_f_inverse(fy + a / 500.0);
  const double Y = kYn * lab_f_inverse(fy);
  const double Z = kZn * lab_f_inverse(fy - b / 200.0);
  return {3.2406 * X - 1.5372 * Y - 0.4986 * Z, -0.9689 * X + 1.8758 * Y + 0.0415 * Z,
          0.0557 * X - 0.2040 * Y + 1.0570 * Z};
}

std::uint8_t to_byte(double linear) {
  const double v = srgb_encode(std::clamp(linear, 0.0, 1.0));
  return static_cast<std::uint8_t>(std::lround(v * 255.0));
}

}  // namespace

Rgb ramp_colour(double t) {
  t = std::clamp(t, 0.0, 1.0);
  const double L = 28.0 + 64.0 * t;
  const double hue = 285.0 - 190.0 * t;
  // Chroma peaks mid-ramp; near the dark and light ends only a little colour fits in the gamut.
  double C = 30.0 + 45.0 * std::sin(kPi * t * 0.9);
  Linear c = lch_to_linear(L, C, hue);
  while (!c.in_gamut() && C > 0.0) {
    C = std::max(0.0, C - 0.5);
    c = lch_to_linear(L, C, hue);
  }
  return {to_byte(c.r), to_byte(c.g), to_byte(c.b)};
}

std::string to_hex(Rgb c) {
  char buf[8];
  std::snprintf(buf, sizeof buf, "#%02x%02x%02x", c.r, c.g, c.b);
  return buf;
}

double lightness(Rgb c) {
  const double r = srgb_decode(c.r / 255.0), g = srgb_decode(c.g / 255.0), b = srgb_decode(c.b / 255.0);
  const double Y = 0.2126 * r + 0.7152 * g + 0.0722 * b;
  return 116.0 * lab_f(Y / kYn) - 16.0;
}

}  // namespace habcast
