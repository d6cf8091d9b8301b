#pragma once
// habcast's sequential colour ramp for maps and plots: our own design, not taken from any
// palette. Colours are laid out in CIE L*C*h (CIE 15:2004, D65 white) with lightness rising
// linearly from dark to light, so the ramp reads in order when printed in greyscale and does not
// rely on telling red from green: the hue runs from blue-violet through teal and green to yellow,
// away from the red-green axis that the common colour-vision deficiencies confuse.
#include <cstdint>
#include <string>

namespace habcast {

struct Rgb {
  std::uint8_t r = 0, g = 0, b = 0;
};

/// Near-black for text, axes and outlines in every picture.
inline constexpr Rgb kInk{20, 20, 20};

/// Colour at position t in [0, 1] (clamped): L* = 28 + 64 t, hue 285 deg -> 95 deg, chroma
/// reduced where needed to stay inside the sRGB gamut (IEC 61966-2-1), so L* stays exact up to
/// 8-bit rounding.
Rgb ramp_colour(double t);

/// "#rrggbb".
std::string to_hex(Rgb c);

/// CIE L* of an 8-bit sRGB colour (for tests and for choosing readable text colours).
double lightness(Rgb c);

}  // namespace habcast
