#pragma once
// Sizes of text as Pango will set it, for laying figures out before they are drawn (legend
// widths, wrapped captions, margins for tick labels). Measured with hinting off, so a label is
// the same size in SVG, PNG and PDF.
#include <string>
#include <vector>

#include "render/figure.hpp"

namespace habcast {

struct TextExtent {
  double width = 0.0;    ///< points
  double ascent = 0.0;   ///< baseline to the top of the line, points
  double descent = 0.0;  ///< baseline to the bottom of the line, points
};

TextExtent measure_text(const std::string& text, const TextStyle& style);

/// `text` split at spaces into lines no wider than `width` points (a longer word stays whole).
std::vector<std::string> wrap_text(const std::string& text, const TextStyle& style, double width);

/// The family Pango actually uses for our font (for a test that the font package is installed:
/// without it, another sans-serif would stand in silently).
std::string resolved_font_family();

}  // namespace habcast
