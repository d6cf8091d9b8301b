#include <catch2/catch.hpp>
#include <cmath>
#include <cstdint>
#include <cstring>
#include <limits>
#include <string>
#include <vector>

#include "core/base/error.hpp"
#include "raster/covariate_reader.hpp"
#include "raster/output_raster.hpp"
#include "raster/window.hpp"
#include "raster_test_support.hpp"

using Catch::Matchers::Contains;
using habcast::CovariateReader;
using habcast::OutputRaster;
using habcast::OutputSpec;
using habcast::OutputType;
using habcast::Window;
using habcast::test::open_with_gdal;
using habcast::test::TempFolder;
using habcast::test::utm_grid;

namespace {

/// Writes `pixels` block by block, as the pipeline does, then commits.
template <typename T>
void write_committed(const OutputSpec& spec, const habcast::RasterGrid& grid, const std::vector<T>& pixels) {
  OutputRaster output(spec, grid);
  std::vector<T> block;
  for (const Window& window : habcast::block_windows(grid.width, grid.height, 256, 256)) {
    block.clear();
    for (int row = window.y; row < window.y + window.height; ++row) {
      const auto start = pixels.begin() + static_cast<std::ptrdiff_t>(row) * grid.width + window.x;
      block.insert(block.end(), start, start + window.width);
    }
    output.write(1, window, block.data());
  }
  output.commit();
}

struct Read {
  std::vector<double> values;
  std::vector<std::uint8_t> valid;
};

Read read_back(const std::string& path, int width, int height) {
  CovariateReader reader(path, 1);
  Read result{std::vector<double>(static_cast<std::size_t>(width * height)),
              std::vector<std::uint8_t>(static_cast<std::size_t>(width * height), 1)};
  reader.read(Window{0, 0, width, height}, result.values.data(), result.valid.data());
  return result;
}

std::string image_structure(const std::string& path, const char* item) {
  auto dataset = open_with_gdal(path);
  const char* value = dataset->GetMetadataItem(item, "IMAGE_STRUCTURE");
  return value != nullptr ? value : "";
}

OutputSpec float_spec(const std::string& path) {
  OutputSpec spec;
  spec.final_path = path;
  spec.bands = {{"suitability (probability of presence)", "probability"}};
  return spec;
}

}  // namespace

TEST_CASE("Float32 pixels survive a round trip through an output and a covariate reader exactly", "[raster][io]") {
  TempFolder folder;
  const habcast::RasterGrid grid = utm_grid(300, 260);  // more than one 256 x 256 block each way
  std::vector<float> pixels(300 * 260);
  for (std::size_t i = 0; i < pixels.size(); ++i) pixels[i] = static_cast<float>(i) / 7.0f;
  // Values that lower precision would change: the float just above 1 (lost in float16 or when
  // printed with 6 digits), 2^24 - 1 (largest odd integer a float holds), a subnormal, and -0.
  pixels[0] = std::nextafter(1.0f, 2.0f);
  pixels[1] = 16777215.0f;
  pixels[2] = std::numeric_limits<float>::denorm_min();
  pixels[3] = 0.1f;
  pixels[4] = -9999.0f;  // the nodata value
  const std::string path = folder.file("suitability.tif");
  write_committed(float_spec(path), grid, pixels);

  Read result = read_back(path, 300, 260);
  CHECK(result.valid[4] == 0);
  bool all_equal = true;
  for (std::size_t i = 0; i < pixels.size(); ++i) {
    if (i != 4 && (result.valid[i] != 1 || result.values[i] != static_cast<double>(pixels[i]))) all_equal = false;
  }
  CHECK(all_equal);
  CHECK(result.values[0] == static_cast<double>(std::nextafter(1.0f, 2.0f)));
  CHECK(result.values[2] == static_cast<double>(std::numeric_limits<float>::denorm_min()));

  // Multi-threaded decoding gives the same pixels.
  CovariateReader threaded(path, 1, 2);
  std::vector<double> values(pixels.size());
  std::vector<std::uint8_t> valid(pixels.size(), 1);
  threaded.read(Window{0, 0, 300, 260}, values.data(), valid.data());
  CHECK(valid == result.valid);
  values[4] = result.values[4] = 0.0;  // NaN at the nodata pixel would never compare equal
  CHECK(values == result.values);
}

TEST_CASE("UInt8 pixels survive a round trip through an output and a covariate reader exactly", "[raster][io]") {
  TempFolder folder;
  const habcast::RasterGrid grid = utm_grid(270, 3);
  std::vector<std::uint8_t> pixels(270 * 3);
  for (std::size_t i = 0; i < pixels.size(); ++i) pixels[i] = static_cast<std::uint8_t>(i % 256);
  OutputSpec spec;
  spec.final_path = folder.file("flags.tif");
  spec.type = OutputType::uint8;
  spec.bands = {{"extrapolation flags", ""}};
  spec.nodata = 255;
  write_committed(spec, grid, pixels);

  const Read result = read_back(spec.final_path, 270, 3);
  for (std::size_t i = 0; i < pixels.size(); ++i) {
    INFO("pixel " << i);
    REQUIRE(result.valid[i] == (pixels[i] == 255 ? 0 : 1));
    if (pixels[i] != 255) REQUIRE(result.values[i] == static_cast<double>(pixels[i]));
  }
}

TEST_CASE("An output keeps its georeferencing, nodata, band descriptions, units and metadata", "[raster][io]") {
  TempFolder folder;
  const habcast::RasterGrid grid = utm_grid(20, 10);
  OutputSpec spec;
  spec.final_path = folder.file("prediction.tif");
  spec.bands = {{"suitability", "probability"}, {"standard error of the linear predictor", "logit"}};
  spec.nodata = -9999.0;
  spec.metadata = {{"HABCAST_MODEL", "heath-2024.toml"}, {"HABCAST_LINK", "logit"}};
  {
    OutputRaster output(spec, grid);
    const std::vector<float> pixels(200, 0.25f);
    output.write(1, Window{0, 0, 20, 10}, pixels.data());
    output.write(2, Window{0, 0, 20, 10}, pixels.data());
    output.commit();
  }
  // Reference: GDAL itself reading the file back.
  auto dataset = open_with_gdal(spec.final_path);
  std::array<double, 6> transform{};
  REQUIRE(dataset->GetGeoTransform(transform.data()) == CE_None);
  CHECK(transform == grid.geotransform);
  OGRSpatialReference expected;
  expected.importFromEPSG(32630);
  REQUIRE(dataset->GetSpatialRef() != nullptr);
  CHECK(dataset->GetSpatialRef()->IsSame(&expected));
  REQUIRE(dataset->GetRasterCount() == 2);
  for (int band = 1; band <= 2; ++band) {
    int has_nodata = 0;
    CHECK(dataset->GetRasterBand(band)->GetNoDataValue(&has_nodata) == -9999.0);
    CHECK(has_nodata == 1);
    CHECK(dataset->GetRasterBand(band)->GetRasterDataType() == GDT_Float32);
  }
  CHECK(std::string(dataset->GetRasterBand(1)->GetDescription()) == "suitability");
  CHECK(std::string(dataset->GetRasterBand(2)->GetDescription()) == "standard error of the linear predictor");
  CHECK(std::string(dataset->GetRasterBand(1)->GetUnitType()) == "probability");
  CHECK(std::string(dataset->GetRasterBand(2)->GetUnitType()) == "logit");
  CHECK(std::string(dataset->GetMetadataItem("HABCAST_MODEL")) == "heath-2024.toml");
  CHECK(std::string(dataset->GetMetadataItem("HABCAST_LINK")) == "logit");
}

TEST_CASE("A UInt8 output keeps its colour table and category names", "[raster][io]") {
  TempFolder folder;
  OutputSpec spec;
  spec.final_path = folder.file("classes.tif");
  spec.type = OutputType::uint8;
  spec.bands = {{"extrapolation", ""}};
  spec.nodata = 255;
  spec.colours = {{0, 200, 200, 200, 255, "inside training range"},
                  {1, 230, 120, 20, 255, "outside range"},
                  {3, 150, 0, 150, 128, "novel combination"}};
  {
    OutputRaster output(spec, utm_grid(4, 1));
    const std::vector<std::uint8_t> pixels = {0, 1, 3, 255};
    output.write(1, Window{0, 0, 4, 1}, pixels.data());
    output.commit();
  }
  // Reference: GDAL itself reading the file back. GDAL 3.6's GeoTIFF driver loads category names
  // (kept in the .aux.xml sidecar) only after a dataset-level query, so the geotransform is read first.
  auto dataset = open_with_gdal(spec.final_path);
  std::array<double, 6> transform{};
  dataset->GetGeoTransform(transform.data());
  GDALRasterBand* band = dataset->GetRasterBand(1);
  const GDALColorTable* table = band->GetColorTable();
  REQUIRE(table != nullptr);
  const GDALColorEntry* entry = table->GetColorEntry(3);
  REQUIRE(entry != nullptr);
  CHECK(entry->c1 == 150);
  CHECK(entry->c2 == 0);
  CHECK(entry->c3 == 150);
  // The alpha of 128 is not kept: a TIFF ColorMap holds red, green and blue only (TIFF 6.0,
  // section 5), so GDAL reads every GeoTIFF palette entry back as opaque.
  CHECK(entry->c4 == 255);
  CHECK(table->GetColorEntry(1)->c1 == 230);
  char** names = band->GetCategoryNames();
  REQUIRE(names != nullptr);
  REQUIRE(CSLCount(names) == 4);
  CHECK(std::string(names[0]) == "inside training range");
  CHECK(std::string(names[1]) == "outside range");
  CHECK(std::string(names[2]).empty());  // a gap in the values keeps the indices right
  CHECK(std::string(names[3]) == "novel combination");
}

TEST_CASE("An output uses habcast's creation defaults", "[raster][io]") {
  TempFolder folder;
  const std::string path = folder.file("defaults.tif");
  write_committed(float_spec(path), utm_grid(300, 300), std::vector<float>(300 * 300, 0.5f));
  // Reference: GDAL itself reporting how the file is stored.
  CHECK(image_structure(path, "COMPRESSION") == "DEFLATE");
  CHECK(image_structure(path, "PREDICTOR") == "3");
  int block_width = 0;
  int block_height = 0;
  open_with_gdal(path)->GetRasterBand(1)->GetBlockSize(&block_width, &block_height);
  CHECK(block_width == 256);
  CHECK(block_height == 256);
}

TEST_CASE("Creation options override the defaults with the same key, whatever its case", "[raster][io]") {
  TempFolder folder;
  OutputSpec spec = float_spec(folder.file("zstd.tif"));
  spec.creation_options = {"compress=ZSTD", "BLOCKXSIZE=128", "BlockYSize=64"};
  write_committed(spec, utm_grid(300, 300), std::vector<float>(300 * 300, 0.5f));
  CHECK(image_structure(spec.final_path, "COMPRESSION") == "ZSTD");
  int block_width = 0;
  int block_height = 0;
  open_with_gdal(spec.final_path)->GetRasterBand(1)->GetBlockSize(&block_width, &block_height);
  CHECK(block_width == 128);
  CHECK(block_height == 64);
}

TEST_CASE("Choosing a compression without a predictor drops the default predictor", "[raster][io]") {
  TempFolder folder;
  OutputSpec spec = float_spec(folder.file("uncompressed.tif"));
  spec.creation_options = {"COMPRESS=NONE"};
  write_committed(spec, utm_grid(10, 10), std::vector<float>(100, 0.5f));
  CHECK(image_structure(spec.final_path, "COMPRESSION").empty());
  CHECK(image_structure(spec.final_path, "PREDICTOR").empty());
}

TEST_CASE("A malformed creation option is a usage error naming the option", "[raster][io]") {
  TempFolder folder;
  const auto bad = GENERATE(as<std::string>{}, "COMPRESS", "=ZSTD", "COMPRESS=", "COMP RESS=ZSTD");
  OutputSpec spec = float_spec(folder.file("bad.tif"));
  spec.creation_options = {bad};
  CHECK_THROWS_AS(OutputRaster(spec, utm_grid(4, 4)), habcast::UsageError);
  CHECK_THROWS_WITH(OutputRaster(spec, utm_grid(4, 4)), Contains("\"" + bad + "\"") && Contains("KEY=VALUE"));
  CHECK(folder.names().empty());
}

TEST_CASE("A creation option GDAL's GeoTIFF driver rejects is a usage error", "[raster][io]") {
  TempFolder folder;
  OutputSpec spec = float_spec(folder.file("bad.tif"));
  spec.creation_options = {"COMPRESS=SQUEEZE"};
  CHECK_THROWS_AS(OutputRaster(spec, utm_grid(4, 4)), habcast::UsageError);
  CHECK_THROWS_WITH(OutputRaster(spec, utm_grid(4, 4)), Contains("SQUEEZE") && Contains(spec.final_path));
  CHECK(folder.names().empty());
}

TEST_CASE("A nodata value that a UInt8 output cannot hold is a usage error", "[raster][io]") {
  TempFolder folder;
  OutputSpec spec;
  spec.final_path = folder.file("flags.tif");
  spec.type = OutputType::uint8;
  spec.bands = {{"flags", ""}};
  spec.nodata = -9999.0;
  CHECK_THROWS_AS(OutputRaster(spec, utm_grid(4, 4)), habcast::UsageError);
}

TEST_CASE("Overviews are built down to a smaller side of 256 pixels", "[raster][io]") {
  TempFolder folder;
  const std::string path = folder.file("overviews.tif");
  {
    OutputRaster output(float_spec(path), utm_grid(1100, 1030));
    const std::vector<float> pixels(1100 * 1030, 0.5f);
    output.write(1, Window{0, 0, 1100, 1030}, pixels.data());
    output.build_overviews();
    output.commit();
  }
  // 1030 / 2 = 515 and 1030 / 4 = 257 qualify; 1030 / 8 = 128 does not.
  auto dataset = open_with_gdal(path);
  GDALRasterBand* band = dataset->GetRasterBand(1);
  REQUIRE(band->GetOverviewCount() == 2);
  CHECK(band->GetOverview(0)->GetXSize() == 550);
  CHECK(band->GetOverview(1)->GetYSize() == 258);  // GDAL rounds the overview size up
  // AVERAGE of equal pixels is that value.
  float value = 0.0f;
  REQUIRE(band->GetOverview(1)->RasterIO(GF_Read, 3, 3, 1, 1, &value, 1, 1, GDT_Float32, 0, 0, nullptr) == CE_None);
  CHECK(value == 0.5f);
}

TEST_CASE("A small output gets no overviews", "[raster][io]") {
  TempFolder folder;
  const std::string path = folder.file("small.tif");
  {
    OutputRaster output(float_spec(path), utm_grid(511, 2000));
    const std::vector<float> pixels(511 * 2000, 0.5f);
    output.write(1, Window{0, 0, 511, 2000}, pixels.data());
    output.build_overviews();
    output.commit();
  }
  CHECK(open_with_gdal(path)->GetRasterBand(1)->GetOverviewCount() == 0);
}
