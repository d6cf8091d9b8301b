#include "test_support.hpp"

#include <gdal_priv.h>
#include <ogr_spatialref.h>
#include <unistd.h>

#include <algorithm>
#include <atomic>
#include <fstream>
#include <sstream>
#include <stdexcept>

#include "cli/app.hpp"
#include "raster/gdal_session.hpp"

namespace habcast::test {

namespace fs = std::filesystem;

TempDir::TempDir(const std::string& tag) {
  static std::atomic<int> counter{0};
  path_ = fs::temp_directory_path() /
          ("habcast-test-" + tag + "-" + std::to_string(getpid()) + "-" + std::to_string(counter++));
  fs::remove_all(path_);
  fs::create_directories(path_);
}

TempDir::~TempDir() {
  std::error_code ignored;
  fs::remove_all(path_, ignored);
}

void write_raster(const std::string& path, const GridSpec& grid, const std::string& gdal_type,
                  const std::function<double(int, int)>& value, bool has_nodata, double nodata) {
  ensure_gdal();
  GDALDriver* driver = GetGDALDriverManager()->GetDriverByName("GTiff");
  const GDALDataType type = GDALGetDataTypeByName(gdal_type.c_str());
  CPLStringList options;
  if (grid.block > 0) {
    options.SetNameValue("TILED", "YES");
    options.SetNameValue("BLOCKXSIZE", std::to_string(grid.block).c_str());
    options.SetNameValue("BLOCKYSIZE", std::to_string(grid.block).c_str());
  }
  options.SetNameValue("COMPRESS", "DEFLATE");
  GDALDataset* ds = driver->Create(path.c_str(), grid.width, grid.height, 1, type, options.List());
  if (!ds) throw std::runtime_error("test: cannot create " + path);
  double gt[6] = {grid.origin_x, grid.pixel, 0.0, grid.origin_y, 0.0, -grid.pixel};
  ds->SetGeoTransform(gt);
  if (grid.epsg > 0) {
    OGRSpatialReference srs;
    srs.importFromEPSG(grid.epsg);
    ds->SetSpatialRef(&srs);
  }
  GDALRasterBand* band = ds->GetRasterBand(1);
  if (has_nodata) band->SetNoDataValue(nodata);
  std::vector<double> row(static_cast<std::size_t>(grid.width));
  for (int r = 0; r < grid.height; ++r) {
    for (int c = 0; c < grid.width; ++c) row[static_cast<std::size_t>(c)] = value(r, c);
    if (band->RasterIO(GF_Write, 0, r, grid.width, 1, row.data(), grid.width, 1, GDT_Float64, 0, 0) != CE_None)
      throw std::runtime_error("test: cannot write " + path);
  }
  GDALClose(GDALDataset::ToHandle(ds));
}

std::vector<double> read_band(const std::string& path, int band) {
  ensure_gdal();
  GDALDataset* ds = GDALDataset::Open(path.c_str(), GDAL_OF_RASTER | GDAL_OF_READONLY);
  if (!ds) throw std::runtime_error("test: cannot open " + path);
  const int w = ds->GetRasterXSize();
  const int h = ds->GetRasterYSize();
  std::vector<double> v(static_cast<std::size_t>(w) * static_cast<std::size_t>(h));
  const CPLErr e = ds->GetRasterBand(band)->RasterIO(GF_Read, 0, 0, w, h, v.data(), w, h, GDT_Float64, 0, 0);
  GDALClose(GDALDataset::ToHandle(ds));
  if (e != CE_None) throw std::runtime_error("test: cannot read " + path);
  return v;
}

double read_pixel(const std::string& path, int band, int row, int col) {
  ensure_gdal();
  GDALDataset* ds = GDALDataset::Open(path.c_str(), GDAL_OF_RASTER | GDAL_OF_READONLY);
  if (!ds) throw std::runtime_error("test: cannot open " + path);
  double v = 0.0;
  const CPLErr e = ds->GetRasterBand(band)->RasterIO(GF_Read, col, row, 1, 1, &v, 1, 1, GDT_Float64, 0, 0);
  GDALClose(GDALDataset::ToHandle(ds));
  if (e != CE_None) throw std::runtime_error("test: cannot read " + path);
  return v;
}

std::string read_text(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  std::ostringstream s;
  s << in.rdbuf();
  return s.str();
}

void write_text(const std::string& path, const std::string& text) {
  std::ofstream out(path, std::ios::binary | std::ios::trunc);
  out << text;
}

std::vector<std::string> list_dir(const std::string& folder) {
  std::vector<std::string> names;
  if (!fs::exists(folder)) return names;
  for (const auto& e : fs::directory_iterator(folder)) names.push_back(e.path().filename().string());
  std::sort(names.begin(), names.end());
  return names;
}

int run_cli(const std::vector<std::string>& args, std::string* out, std::string* err) {
  std::ostringstream o, e;
  const int code = cli::run(args, o, e);
  if (out) *out = o.str();
  if (err) *err = e.str();
  return code;
}

std::string source_path(const std::string& relative) { return std::string(HABCAST_SOURCE_DIR) + "/" + relative; }

}  // namespace habcast::test
