#pragma once
// Helpers for the raster tests: a private temporary folder and tiny rasters written with GDAL
// itself, so that habcast's readers are checked against files it did not write.
#include <cpl_conv.h>
#include <gdal_priv.h>
#include <ogr_spatialref.h>
#include <unistd.h>

#include <array>
#include <atomic>
#include <filesystem>
#include <functional>
#include <memory>
#include <stdexcept>
#include <string>
#include <vector>

#include "raster/gdal_handles.hpp"
#include "raster/gdal_session.hpp"
#include "raster/raster_grid.hpp"

namespace habcast::test {

/// A fresh folder under the system temporary directory, removed with everything in it.
class TempFolder {
 public:
  TempFolder() {
    static std::atomic<int> counter{0};
    path_ = std::filesystem::temp_directory_path() /
            ("habcast-raster-test-" + std::to_string(getpid()) + "-" + std::to_string(counter++));
    std::filesystem::remove_all(path_);
    std::filesystem::create_directories(path_);
  }
  ~TempFolder() {
    std::error_code ignored;
    std::filesystem::remove_all(path_, ignored);
  }
  TempFolder(const TempFolder&) = delete;
  TempFolder& operator=(const TempFolder&) = delete;

  [[nodiscard]] std::string file(const std::string& name) const { return (path_ / name).string(); }
  [[nodiscard]] const std::filesystem::path& path() const { return path_; }
  [[nodiscard]] std::vector<std::string> names() const {
    std::vector<std::string> found;
    for (const auto& entry : std::filesystem::directory_iterator(path_)) {
      found.push_back(entry.path().filename().string());
    }
    return found;
  }

 private:
  std::filesystem::path path_;
};

/// WKT of an EPSG CRS, as GDAL writes it.
inline std::string epsg_wkt(int code) {
  OGRSpatialReference srs;
  if (srs.importFromEPSG(code) != OGRERR_NONE) throw std::runtime_error("EPSG:" + std::to_string(code));
  char* wkt = nullptr;
  srs.exportToWkt(&wkt);
  std::string text = wkt;
  CPLFree(wkt);
  return text;
}

/// A UTM zone 30N grid, 30 m pixels: the reference grid of most tests.
inline RasterGrid utm_grid(int width, int height) {
  RasterGrid grid;
  grid.width = width;
  grid.height = height;
  grid.geotransform = {500000.0, 30.0, 0.0, 4650000.0, 0.0, -30.0};
  grid.has_geotransform = true;
  grid.crs_wkt = epsg_wkt(32630);
  grid.crs_name = "WGS 84 / UTM zone 30N";
  return grid;
}

/// Opens a file with GDAL itself (read-only), for checking what habcast wrote.
inline DatasetPtr open_with_gdal(const std::string& path) {
  ensure_gdal();
  DatasetPtr dataset(GDALDataset::Open(path.c_str(), GDAL_OF_RASTER | GDAL_OF_READONLY));
  if (!dataset) throw std::runtime_error("GDAL cannot open " + path + ": " + take_gdal_error());
  return dataset;
}

/// Writes a one-band GeoTIFF with GDAL itself on `grid` (georeferenced when the grid says so).
/// `values` must hold width*height pixels of `type`; `configure` may set nodata, scale, masks.
template <typename T>
void write_geotiff(const std::string& path, const RasterGrid& grid, GDALDataType type, const std::vector<T>& values,
                   const std::function<void(GDALDataset&)>& configure = {},
                   const std::vector<std::string>& creation_options = {}, int band_count = 1) {
  ensure_gdal();
  GDALDriver* driver = GetGDALDriverManager()->GetDriverByName("GTiff");
  std::vector<const char*> options;
  for (const auto& option : creation_options) options.push_back(option.c_str());
  options.push_back(nullptr);
  DatasetPtr dataset(
      driver->Create(path.c_str(), grid.width, grid.height, band_count, type, const_cast<char**>(options.data())));
  if (!dataset) throw std::runtime_error("cannot create " + path + ": " + take_gdal_error());
  if (grid.has_geotransform) {
    std::array<double, 6> transform = grid.geotransform;
    dataset->SetGeoTransform(transform.data());
  }
  if (!grid.crs_wkt.empty()) {
    OGRSpatialReference srs;
    srs.importFromWkt(grid.crs_wkt.c_str());
    dataset->SetSpatialRef(&srs);
  }
  if (configure) configure(*dataset);
  if (dataset->GetRasterBand(1)->RasterIO(GF_Write, 0, 0, grid.width, grid.height, const_cast<T*>(values.data()),
                                          grid.width, grid.height, type, 0, 0, nullptr) != CE_None) {
    throw std::runtime_error("cannot write " + path + ": " + take_gdal_error());
  }
}

/// A plain pixel grid without georeferencing.
inline RasterGrid pixel_grid(int width, int height) {
  RasterGrid grid;
  grid.width = width;
  grid.height = height;
  return grid;
}

}  // namespace habcast::test
