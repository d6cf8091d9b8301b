#pragma once
// Shared helpers of the test suite: a self-deleting temporary folder, writing small GeoTIFFs from a
// function of (row, column) with GDAL directly (independent of habcast's writer), and reading
// rasters back with GDAL.
#include <cstdint>
#include <filesystem>
#include <functional>
#include <string>
#include <vector>

namespace habcast::test {

class TempDir {
 public:
  explicit TempDir(const std::string& tag);
  ~TempDir();
  TempDir(const TempDir&) = delete;
  TempDir& operator=(const TempDir&) = delete;
  [[nodiscard]] const std::filesystem::path& path() const { return path_; }
  [[nodiscard]] std::string file(const std::string& name) const { return (path_ / name).string(); }

 private:
  std::filesystem::path path_;
};

struct GridSpec {
  int width = 64;
  int height = 48;
  double origin_x = 500000.0;
  double origin_y = 4000000.0;
  double pixel = 100.0;
  int epsg = 32630;  ///< 0: no CRS
  int block = 16;    ///< tile edge; 0 writes a striped file
};

/// Writes a one-band GeoTIFF whose pixel (row, col) is value(row, col). `gdal_type` is a GDAL type
/// name ("Float32", "Byte", "Int16"). nodata is set when has_nodata.
void write_raster(const std::string& path, const GridSpec& grid, const std::string& gdal_type,
                  const std::function<double(int row, int col)>& value, bool has_nodata = false, double nodata = 0.0);

/// All values of band `band` (row-major), read with GDAL.
std::vector<double> read_band(const std::string& path, int band = 1);

/// Value of one pixel.
double read_pixel(const std::string& path, int band, int row, int col);

/// Text of a file.
std::string read_text(const std::string& path);

/// Writes text to a file.
void write_text(const std::string& path, const std::string& text);

/// Files in a folder (names only), sorted.
std::vector<std::string> list_dir(const std::string& folder);

/// Runs habcast in-process: returns the exit code; captures stdout and stderr.
int run_cli(const std::vector<std::string>& args, std::string* out = nullptr, std::string* err = nullptr);

/// Path of a file under the source tree.
std::string source_path(const std::string& relative);

}  // namespace habcast::test
