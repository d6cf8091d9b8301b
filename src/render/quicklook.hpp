#pragma once
// A small PNG picture of a prediction: suitability coloured with habcast's ramp, extrapolated
// pixels hatched, no-data pale grey, a legend, a scale bar and a note of the pixel size.
// The rasters are read decimated (GDAL resamples while reading, using overviews when the file
// has them), so memory is bounded by the picture, never by the raster.
#include <string>

namespace habcast {

struct QuicklookLayout {
  int map_width = 0, map_height = 0;  ///< the map part, pixels
  int width = 0, height = 0;          ///< the whole PNG
};

/// Sizes for a raster of raster_width x raster_height: the map is scaled so that its longer side
/// is `max_edge` pixels (aspect kept, at least 1 pixel); the PNG adds a 16-pixel margin, a title
/// band of 40 pixels, a legend column of 220 pixels and a footer of 60 pixels:
/// width = map_width + 252, height = max(map_height, 240) + 100.
QuicklookLayout quicklook_layout(int raster_width, int raster_height, int max_edge);

/// Renders `suitability_path` (band 1), hatching pixels whose flag in `extrapolation_path`
/// (band 1; empty: none) is neither 0 nor 255, and writes the PNG to `png_path`. Returns the
/// layout used. Throws InputError naming a raster that cannot be read, IoError when the PNG
/// cannot be written.
QuicklookLayout write_quicklook(const std::string& suitability_path, const std::string& extrapolation_path,
                                const std::string& png_path, const std::string& title, int max_edge = 512);

}  // namespace habcast
