#pragma once
// The pixel grid of a raster (size, georeferencing, CRS) and the co-registration check that runs
// before a single pixel is read.
#include <array>
#include <string>

namespace habcast {

struct RasterGrid {
  int width = 0;
  int height = 0;
  std::array<double, 6> geotransform{0, 1, 0, 0, 0, -1};  ///< GDAL order
  bool has_geotransform = false;
  std::string crs_wkt;       ///< empty when the raster has no CRS
  std::string crs_name;      ///< human-readable name, e.g. "WGS 84 / UTM zone 30N"
  std::string linear_units;  ///< e.g. "metre"; empty for geographic or unknown CRS
  double linear_units_to_metre = 0.0;  ///< 0 when not a projected CRS in known units
  int block_width = 256;     ///< natural block size of the first band
  int block_height = 256;

  /// |a*e - b*d| in CRS units squared (0 without a geotransform).
  [[nodiscard]] double pixel_area() const;
};

/// Reads the grid of band `band` of the raster at `path`. Throws InputError naming the file when it
/// cannot be opened or lacks the band.
RasterGrid read_grid(const std::string& path, int band = 1);

/// Throws InputError when `other` is not on the same grid as `reference`: different size,
/// geotransform differing by more than `pixel_tolerance` of a pixel in origin or pixel size, or a
/// different CRS (compared with OGRSpatialReference::IsSame, not by string; one with and one without
/// a CRS also differ). The message names both files and says how they differ and what to do.
void check_same_grid(const std::string& reference_path, const RasterGrid& reference,
                     const std::string& other_path, const RasterGrid& other,
                     double pixel_tolerance = 0.01);

}  // namespace habcast
