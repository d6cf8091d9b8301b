#include <catch2/catch.hpp>
#include <algorithm>
#include <cmath>
#include <cstdint>
#include <filesystem>
#include <limits>
#include <string>
#include <vector>

#include "core/base/error.hpp"
#include "raster/covariate_reader.hpp"
#include "raster_test_support.hpp"

using Catch::Matchers::Contains;
using habcast::CovariateReader;
using habcast::InputError;
using habcast::Window;
using habcast::test::utm_grid;
using habcast::test::write_geotiff;

namespace {

struct Block {
  std::vector<double> values;
  std::vector<std::uint8_t> valid;
};

Block read_all(const std::string& path, int width, int height, int band = 1) {
  CovariateReader reader(path, band);
  Block block{std::vector<double>(static_cast<std::size_t>(width * height)),
              std::vector<std::uint8_t>(static_cast<std::size_t>(width * height), 1)};
  reader.read(Window{0, 0, width, height}, block.values.data(), block.valid.data());
  return block;
}

/// GDAL's own verdict, from the mask band it derives from nodata: the reference for our checks.
std::vector<std::uint8_t> gdal_nodata_mask(const std::string& path, int width, int height) {
  auto dataset = habcast::test::open_with_gdal(path);
  GDALRasterBand* band = dataset->GetRasterBand(1);
  std::vector<std::uint8_t> mask(static_cast<std::size_t>(width * height));
  REQUIRE(band->GetMaskBand()->RasterIO(GF_Read, 0, 0, width, height, mask.data(), width, height, GDT_Byte, 0, 0,
                                        nullptr) == CE_None);
  for (auto& m : mask) m = m != 0 ? 1 : 0;
  return mask;
}

auto set_nodata(double value) {
  return [value](GDALDataset& dataset) { dataset.GetRasterBand(1)->SetNoDataValue(value); };
}

}  // namespace

TEST_CASE("An Int16 covariate reads exactly, with its nodata pixels marked invalid", "[raster][reader]") {
  const std::string path = "/vsimem/reader_int16.tif";
  const std::vector<std::int16_t> pixels = {-32768, -9999, 0, 1, 32767, -9999};
  write_geotiff(path, utm_grid(3, 2), GDT_Int16, pixels, set_nodata(-9999));
  const Block block = read_all(path, 3, 2);
  CHECK(block.valid == std::vector<std::uint8_t>{1, 0, 1, 1, 1, 0});
  CHECK(block.valid == gdal_nodata_mask(path, 3, 2));  // same verdict as GDAL itself
  CHECK(block.values[0] == -32768.0);
  CHECK(block.values[4] == 32767.0);
  VSIUnlink(path.c_str());
}

TEST_CASE("An integer band's fractional nodata value is compared after rounding", "[raster][reader]") {
  const std::string path = "/vsimem/reader_int16_fraction.tif";
  write_geotiff(path, utm_grid(3, 1), GDT_Int16, std::vector<std::int16_t>{-9999, -10000, 5}, set_nodata(-9999.4));
  CHECK(read_all(path, 3, 1).valid == std::vector<std::uint8_t>{0, 1, 1});
  VSIUnlink(path.c_str());
}

TEST_CASE("A UInt8 covariate marks its nodata pixels invalid", "[raster][reader]") {
  const std::string path = "/vsimem/reader_uint8.tif";
  write_geotiff(path, utm_grid(4, 1), GDT_Byte, std::vector<std::uint8_t>{0, 255, 7, 0}, set_nodata(0));
  const Block block = read_all(path, 4, 1);
  CHECK(block.valid == std::vector<std::uint8_t>{0, 1, 1, 0});
  CHECK(block.valid == gdal_nodata_mask(path, 4, 1));  // same verdict as GDAL itself
  CHECK(block.values[1] == 255.0);
  VSIUnlink(path.c_str());
}

TEST_CASE("A UInt8 nodata value no pixel can hold marks nothing invalid", "[raster][reader]") {
  const std::string path = "/vsimem/reader_uint8_out_of_range.tif";
  write_geotiff(path, utm_grid(3, 1), GDT_Byte, std::vector<std::uint8_t>{0, 241, 255}, set_nodata(-9999));
  const Block block = read_all(path, 3, 1);
  CHECK(block.valid == std::vector<std::uint8_t>{1, 1, 1});
  CHECK(block.valid == gdal_nodata_mask(path, 3, 1));  // same verdict as GDAL itself
  VSIUnlink(path.c_str());
}

TEST_CASE("A Float32 nodata value is compared in single precision", "[raster][reader]") {
  // GeoTIFF stores a Float32 band's nodata already rounded to float, so the double 0.1 is put in a
  // VRT, which keeps it as written. Pixels hold float(0.1) = 0.100000001490116..., which differs
  // from the double 0.1: only a comparison in the band's own type finds them.
  const std::string tiff = "/vsimem/reader_float32_base.tif";
  const std::string vrt = "/vsimem/reader_float32.vrt";
  write_geotiff(tiff, utm_grid(3, 1), GDT_Float32, std::vector<float>{0.1f, 0.2f, 0.1f});
  {
    auto source = habcast::test::open_with_gdal(tiff);
    habcast::DatasetPtr copy(GetGDALDriverManager()->GetDriverByName("VRT")->CreateCopy(
        vrt.c_str(), source.get(), FALSE, nullptr, nullptr, nullptr));
    REQUIRE(copy);
    copy->GetRasterBand(1)->SetNoDataValue(0.1);
  }
  REQUIRE(habcast::test::open_with_gdal(vrt)->GetRasterBand(1)->GetNoDataValue() == 0.1);
  const Block block = read_all(vrt, 3, 1);
  CHECK(block.valid == std::vector<std::uint8_t>{0, 1, 0});
  CHECK(block.values[1] == static_cast<double>(0.2f));
  VSIUnlink(vrt.c_str());
  VSIUnlink(tiff.c_str());
}

TEST_CASE("A NaN nodata value marks NaN pixels invalid", "[raster][reader]") {
  const std::string path = "/vsimem/reader_float32_nan.tif";
  const float nan = std::numeric_limits<float>::quiet_NaN();
  write_geotiff(path, utm_grid(4, 1), GDT_Float32, std::vector<float>{nan, 1.5f, -0.0f, nan},
                set_nodata(std::numeric_limits<double>::quiet_NaN()));
  const Block block = read_all(path, 4, 1);
  CHECK(block.valid == std::vector<std::uint8_t>{0, 1, 1, 0});
  CHECK(block.valid == gdal_nodata_mask(path, 4, 1));  // same verdict as GDAL itself
  VSIUnlink(path.c_str());
}

TEST_CASE("Non-finite pixels are invalid even without a nodata value", "[raster][reader]") {
  const std::string path = "/vsimem/reader_float32_inf.tif";
  const float inf = std::numeric_limits<float>::infinity();
  write_geotiff(path, utm_grid(4, 1), GDT_Float32,
                std::vector<float>{inf, -inf, std::numeric_limits<float>::quiet_NaN(), 3.0f});
  CHECK(read_all(path, 4, 1).valid == std::vector<std::uint8_t>{0, 0, 0, 1});
  VSIUnlink(path.c_str());
}

TEST_CASE("A long row is marked pixel by pixel and its missing pixels counted", "[raster][reader]") {
  // 45 pixels: the vectorised validity pass's body and its remainder both meet nodata, NaN and
  // infinities, next to pixels another covariate already marked invalid.
  const std::string path = "/vsimem/reader_long_row.tif";
  std::vector<float> pixels(45);
  for (std::size_t i = 0; i < pixels.size(); ++i) pixels[i] = 0.25f * static_cast<float>(i);
  const std::vector<std::size_t> nodata_at = {0, 7, 31, 44}, nan_at = {12, 40};
  const std::vector<std::size_t> inf_at = {3, 34};  // +inf and -inf
  for (std::size_t i : nodata_at) pixels[i] = -9999.0f;
  for (std::size_t i : nan_at) pixels[i] = std::numeric_limits<float>::quiet_NaN();
  for (std::size_t i : inf_at) pixels[i] = (i % 2 ? 1.0f : -1.0f) * std::numeric_limits<float>::infinity();
  write_geotiff(path, utm_grid(45, 1), GDT_Float32, pixels, set_nodata(-9999.0));
  CovariateReader reader(path, 1);
  std::vector<double> values(45);
  std::vector<std::uint8_t> valid(45, 1);
  valid[20] = valid[41] = 0;  // from another covariate
  CHECK(reader.read(Window{0, 0, 45, 1}, values.data(), valid.data()) == 8);
  for (std::size_t i = 0; i < 45; ++i) {
    INFO("pixel " << i);
    const auto in = [i](const std::vector<std::size_t>& at) { return std::find(at.begin(), at.end(), i) != at.end(); };
    const bool missing = in(nodata_at) || in(nan_at) || in(inf_at);
    CHECK(valid[i] == (missing || i == 20 || i == 41 ? 0 : 1));
    if (missing) CHECK(std::isnan(values[i]));
    else CHECK(values[i] == 0.25 * static_cast<double>(i));
  }
  VSIUnlink(path.c_str());
}

TEST_CASE("Scale and offset are applied to valid pixels", "[raster][reader]") {
  // Temperatures stored as hundredths of a degree above -40: value = raw * 0.01 - 40.
  const std::string path = "/vsimem/reader_scaled.tif";
  write_geotiff(path, utm_grid(3, 1), GDT_Int16, std::vector<std::int16_t>{2500, -32768, 6123},
                [](GDALDataset& dataset) {
                  dataset.GetRasterBand(1)->SetScale(0.01);
                  dataset.GetRasterBand(1)->SetOffset(-40.0);
                  dataset.GetRasterBand(1)->SetNoDataValue(-32768);
                });
  const Block block = read_all(path, 3, 1);
  CHECK(block.valid == std::vector<std::uint8_t>{1, 0, 1});
  // 25.00 - 40 = -15 and 61.23 - 40 = 21.23, to within rounding of the products (tolerance 1e-12).
  CHECK(block.values[0] == Approx(-15.0).margin(1e-12));
  CHECK(block.values[2] == Approx(21.23).margin(1e-12));
  VSIUnlink(path.c_str());
}

TEST_CASE("A mask band marks the pixels it masks out invalid", "[raster][reader]") {
  const std::string path = "/vsimem/reader_masked.tif";
  write_geotiff(path, utm_grid(4, 1), GDT_Float32, std::vector<float>{1, 2, 3, 4}, [](GDALDataset& dataset) {
    REQUIRE(dataset.CreateMaskBand(GMF_PER_DATASET) == CE_None);
    std::vector<std::uint8_t> mask = {255, 0, 255, 0};
    REQUIRE(dataset.GetRasterBand(1)->GetMaskBand()->RasterIO(GF_Write, 0, 0, 4, 1, mask.data(), 4, 1, GDT_Byte, 0, 0,
                                                              nullptr) == CE_None);
  });
  CHECK(read_all(path, 4, 1).valid == std::vector<std::uint8_t>{1, 0, 1, 0});
  VSIUnlink(path.c_str());
}

TEST_CASE("An alpha band marks transparent pixels invalid", "[raster][reader]") {
  const std::string path = "/vsimem/reader_alpha.tif";
  write_geotiff(
      path, utm_grid(3, 1), GDT_Byte, std::vector<std::uint8_t>{10, 20, 30},
      [](GDALDataset& dataset) {
        GDALRasterBand* alpha = dataset.GetRasterBand(2);
        alpha->SetColorInterpretation(GCI_AlphaBand);
        std::vector<std::uint8_t> opacity = {0, 255, 128};
        REQUIRE(alpha->RasterIO(GF_Write, 0, 0, 3, 1, opacity.data(), 3, 1, GDT_Byte, 0, 0, nullptr) == CE_None);
      },
      {"ALPHA=YES"}, 2);
  CHECK(read_all(path, 3, 1).valid == std::vector<std::uint8_t>{0, 1, 1});
  VSIUnlink(path.c_str());
}

TEST_CASE("Reading leaves valid flags of other covariates alone and reads inner windows", "[raster][reader]") {
  const std::string path = "/vsimem/reader_window.tif";
  std::vector<float> pixels(6 * 5);
  for (std::size_t i = 0; i < pixels.size(); ++i) pixels[i] = static_cast<float>(i);
  pixels[2 * 6 + 3] = -1.0f;
  write_geotiff(path, utm_grid(6, 5), GDT_Float32, pixels, set_nodata(-1.0));
  CovariateReader reader(path, 1);
  std::vector<double> values(4);
  std::vector<std::uint8_t> valid = {0, 1, 1, 1};  // pixel 0 already invalid from another covariate
  // rows 1-2, columns 2-3: pixels 8, 9, 14 and (nodata at) 15; one pixel of this band is missing
  CHECK(reader.read(Window{2, 1, 2, 2}, values.data(), valid.data()) == 1);
  CHECK(valid == std::vector<std::uint8_t>{0, 1, 1, 0});
  CHECK(values[0] == 8.0);  // invalid from another covariate, but this band has its value
  CHECK(std::isnan(values[3]));
  CHECK(values[1] == 9.0);
  CHECK(values[2] == 14.0);
  CovariateReader moved(std::move(reader));
  CHECK(moved.path() == path);
  VSIUnlink(path.c_str());
}

TEST_CASE("Opening a covariate names the file when it is missing, lacks the band or is complex", "[raster][reader]") {
  CHECK_THROWS_WITH(CovariateReader("/vsimem/reader_missing.tif", 1), Contains("/vsimem/reader_missing.tif"));
  const std::string path = "/vsimem/reader_complex.tif";
  write_geotiff(path, utm_grid(2, 1), GDT_CFloat32, std::vector<float>{1, 0, 2, 0});
  CHECK_THROWS_AS(CovariateReader(path, 1), InputError);
  CHECK_THROWS_WITH(CovariateReader(path, 1), Contains(path) && Contains("complex"));
  CHECK_THROWS_WITH(CovariateReader(path, 3), Contains(path) && Contains("band 3 does not exist"));
  VSIUnlink(path.c_str());
}

TEST_CASE("A truncated GeoTIFF fails with the file's name", "[raster][reader]") {
  habcast::test::TempFolder folder;
  const std::string path = folder.file("truncated.tif");
  const int size = 512;
  // Values from a simple linear congruential sequence do not compress away, so the tiles fill the
  // file and cutting it in half removes real tile data.
  std::vector<float> pixels(static_cast<std::size_t>(size * size));
  std::uint32_t state = 12345u;
  for (auto& pixel : pixels) {
    state = state * 1664525u + 1013904223u;
    pixel = static_cast<float>(state >> 8);
  }
  write_geotiff(path, utm_grid(size, size), GDT_Float32, pixels, {},
                {"TILED=YES", "BLOCKXSIZE=128", "BLOCKYSIZE=128", "COMPRESS=DEFLATE"});
  std::filesystem::resize_file(path, std::filesystem::file_size(path) / 2);
  try {
    CovariateReader reader(path, 1);
    std::vector<double> values(static_cast<std::size_t>(size * size));
    std::vector<std::uint8_t> valid(values.size(), 1);
    reader.read(Window{0, 0, size, size}, values.data(), valid.data());
    FAIL("reading a truncated file succeeded");
  } catch (const habcast::IoError& error) {
    CHECK_THAT(error.what(), Contains(path) && Contains("window at column 0, row 0"));
  } catch (const habcast::InputError& error) {
    CHECK_THAT(error.what(), Contains(path));
  }
}
