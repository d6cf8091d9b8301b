#pragma once
// Writes a Figure as the bytes of an SVG, PNG or PDF file through Cairo (with Pango for text), so
// the three files of one figure come from the same drawing code. The caller writes the bytes to
// disk (write_file_atomically), keeping the temporary-name-and-rename rule of every output.
#include <string>

#include "render/figure.hpp"

namespace habcast {

enum class FigureFormat { svg, png, pdf };

/// The format a path asks for, by its extension (.svg, .png, .pdf, any case). Throws UsageError
/// naming the path and the three choices otherwise.
FigureFormat figure_format(const std::string& path);

/// Resolution of PNG files: 300 pixels per inch, print quality at the figure's size.
inline constexpr double kPngDpi = 300.0;

std::string encode_figure(const Figure& figure, FigureFormat format, double png_dpi = kPngDpi);
/// encode_figure in the format of `path`'s extension.
std::string encode_figure(const Figure& figure, const std::string& path);

/// Pixel size of the PNG of a figure: its page size at `png_dpi`, rounded up.
int png_pixels(double points, double png_dpi = kPngDpi);

}  // namespace habcast
