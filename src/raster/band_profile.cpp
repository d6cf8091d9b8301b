#include "raster/band_profile.hpp"

#include <gdal.h>
#include <gdal_priv.h>
#include <gdal_rat.h>

#include <cmath>
#include <vector>

#include "raster/covariate_reader.hpp"
#include "raster/gdal_handles.hpp"
#include "raster/raster_grid.hpp"
#include "raster/window.hpp"

namespace habcast {

BandProfile profile_band(const std::string& path, int band) {
  const DatasetPtr ds = open_input_raster(path);
  GDALRasterBand& b = input_band(*ds, path, band);
  BandProfile p;
  // GDAL 3.6's GeoTIFF driver loads the .aux.xml sidecar (where category names and attribute
  // tables usually live) only when metadata is first asked for.
  (void)b.GetMetadata();
  if (char** list = b.GetCategoryNames())
    for (std::int64_t code = 0; list[code] != nullptr; ++code)
      if (list[code][0] != '\0') p.category_names[code] = list[code];
  const GDALRasterAttributeTable* rat = b.GetDefaultRAT();
  p.attribute_table = rat != nullptr && rat->GetRowCount() > 0;
  const GDALDataType t = b.GetRasterDataType();
  p.data_type = GDALGetDataTypeName(t);
  p.integer_type = GDALDataTypeIsInteger(t) && !GDALDataTypeIsComplex(t);
  return p;
}

ClassCensus count_classes(const std::string& path, int band, std::size_t max_classes) {
  const RasterGrid grid = read_grid(path, band);
  CovariateReader reader(path, band);
  ClassCensus c;
  std::vector<double> values;
  std::vector<std::uint8_t> valid;
  for (const Window& w : block_windows(grid.width, grid.height, grid.block_width, grid.block_height)) {
    values.assign(static_cast<std::size_t>(w.pixels()), 0.0);
    valid.assign(values.size(), 1);
    reader.read(w, values.data(), valid.data());
    for (std::size_t i = 0; i < values.size(); ++i) {
      if (!valid[i]) continue;
      ++c.valid_pixels;
      const double v = values[i];
      if (v != std::floor(v)) {
        ++c.fractional_pixels;
        continue;
      }
      const auto code = static_cast<std::int64_t>(v);
      const auto it = c.pixels.find(code);
      if (it != c.pixels.end()) ++it->second;
      else if (c.pixels.size() < max_classes) c.pixels.emplace(code, 1);
      else c.truncated = true;
    }
  }
  return c;
}

}  // namespace habcast
