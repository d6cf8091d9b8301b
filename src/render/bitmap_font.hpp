#pragma once
// A 5 x 7 pixel font of our own for labels in PNG images (legends, scale notes), so that PNG
// output needs no font library. Upper-case letters, digits and common punctuation; lower-case
// letters are drawn as upper case; other characters as a small box.
#include <array>
#include <cstdint>

namespace habcast {

constexpr int kGlyphWidth = 5;
constexpr int kGlyphHeight = 7;
constexpr int kGlyphAdvance = 6;  ///< glyph width plus one column of spacing

/// Rows of the glyph for `ch`, top first; bit 4 of each row is the leftmost pixel.
std::array<std::uint8_t, kGlyphHeight> glyph(char ch);

}  // namespace habcast
