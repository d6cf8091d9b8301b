#pragma once
// A one-page picture of a prediction: suitability coloured with habcast's ramp, extrapolated
// pixels hatched, no-data pale grey, a legend, a scale bar and a line saying how the raster was
// sampled. The rasters are read decimated (GDAL RasterIO into a buffer of the picture's size,
// from overviews when the file has them), so memory and time depend on the picture, not on the
// raster: a 100 Mpix map draws in about a second.
#include <string>

#include "render/figure.hpp"

namespace habcast {

struct QuicklookLayout {
  Rect map;                        ///< the map on the page, points
  int pixels_x = 0, pixels_y = 0;  ///< cells read across and down (never more than the raster has)
  int repeat = 1;                  ///< each cell drawn as repeat x repeat image pixels, so a small raster
                                   ///< stays crisp cells when a PDF viewer smooths the image
  double width = 0;                ///< the page, points (its height follows the legend and notes)
};

/// The page for a raster of raster_width x raster_height cells: at A4 text width (170 mm), the
/// map fitted (aspect kept) into a box of 330 x 360 pt beside a legend column; the map is read at
/// the picture's resolution (300 dpi), or at the raster's own size when that is smaller.
QuicklookLayout quicklook_layout(int raster_width, int raster_height);

/// Draws `suitability_path` (band 1), hatching pixels whose flag in `extrapolation_path` (band 1;
/// empty: none) is neither 0 nor 255. `caption` (e.g. the model's description) is printed under
/// the map. Throws InputError naming a raster that cannot be read.
Figure quicklook_figure(const std::string& suitability_path, const std::string& extrapolation_path, const std::string& title,
                        const std::string& caption = {});

}  // namespace habcast
