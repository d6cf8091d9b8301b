#include <ogr_spatialref.h>

#include <catch2/catch.hpp>
#include <string>
#include <vector>

#include "core/base/error.hpp"
#include "raster/raster_grid.hpp"
#include "raster_test_support.hpp"

using Catch::Matchers::Contains;
using habcast::check_same_grid;
using habcast::InputError;
using habcast::RasterGrid;
using habcast::read_grid;
using habcast::test::epsg_wkt;
using habcast::test::utm_grid;

namespace {

std::string wkt_from_user_input(const char* definition) {
  OGRSpatialReference srs;
  REQUIRE(srs.SetFromUserInput(definition) == OGRERR_NONE);
  char* wkt = nullptr;
  srs.exportToWkt(&wkt);
  std::string text = wkt;
  CPLFree(wkt);
  return text;
}

std::string grid_error(const RasterGrid& reference, const RasterGrid& other) {
  try {
    check_same_grid("tmin.tif", reference, "precip.tif", other);
  } catch (const InputError& error) {
    return error.what();
  }
  FAIL("check_same_grid accepted grids that differ");
  return {};
}

}  // namespace

TEST_CASE("read_grid reports size, georeferencing, CRS, units and block size", "[raster][grid]") {
  const std::string path = "/vsimem/read_grid_utm.tif";
  const RasterGrid written = utm_grid(320, 240);
  habcast::test::write_geotiff(path, written, GDT_Float32, std::vector<float>(320 * 240, 1.0f), {},
                               {"TILED=YES", "BLOCKXSIZE=64", "BLOCKYSIZE=32"});
  const RasterGrid grid = read_grid(path);
  CHECK(grid.width == 320);
  CHECK(grid.height == 240);
  CHECK(grid.has_geotransform);
  CHECK(grid.geotransform == written.geotransform);
  CHECK(grid.crs_name == "WGS 84 / UTM zone 30N");
  CHECK(grid.linear_units == "metre");
  CHECK(grid.linear_units_to_metre == 1.0);
  CHECK(grid.block_width == 64);
  CHECK(grid.block_height == 32);
  CHECK(grid.pixel_area() == 900.0);
  VSIUnlink(path.c_str());
}

TEST_CASE("read_grid gives the metre length of US survey feet", "[raster][grid]") {
  // EPSG:2227 (NAD83 / California zone 3 (ftUS)); the US survey foot is defined as 1200/3937 m
  // (EPSG dataset, unit of measure 9003).
  const std::string path = "/vsimem/read_grid_feet.tif";
  RasterGrid written = utm_grid(4, 4);
  written.crs_wkt = epsg_wkt(2227);
  habcast::test::write_geotiff(path, written, GDT_Byte, std::vector<std::uint8_t>(16, 1));
  const RasterGrid grid = read_grid(path);
  CHECK(grid.linear_units_to_metre == Approx(1200.0 / 3937.0).epsilon(1e-12));
  VSIUnlink(path.c_str());
}

TEST_CASE("read_grid of a raster without georeferencing has no transform, CRS or units", "[raster][grid]") {
  const std::string path = "/vsimem/read_grid_plain.tif";
  habcast::test::write_geotiff(path, habcast::test::pixel_grid(5, 3), GDT_Byte, std::vector<std::uint8_t>(15, 1));
  const RasterGrid grid = read_grid(path);
  CHECK_FALSE(grid.has_geotransform);
  CHECK(grid.crs_wkt.empty());
  CHECK(grid.linear_units.empty());
  CHECK(grid.linear_units_to_metre == 0.0);
  CHECK(grid.pixel_area() == 0.0);
  VSIUnlink(path.c_str());
}

TEST_CASE("read_grid of a geographic raster has no linear units", "[raster][grid]") {
  const std::string path = "/vsimem/read_grid_geographic.tif";
  RasterGrid written = utm_grid(4, 4);
  written.geotransform = {-3.0, 0.001, 0.0, 42.0, 0.0, -0.001};
  written.crs_wkt = epsg_wkt(4326);
  habcast::test::write_geotiff(path, written, GDT_Byte, std::vector<std::uint8_t>(16, 1));
  const RasterGrid grid = read_grid(path);
  CHECK(grid.crs_name == "WGS 84");
  CHECK(grid.linear_units.empty());
  CHECK(grid.linear_units_to_metre == 0.0);
  VSIUnlink(path.c_str());
}

TEST_CASE("read_grid names the file it cannot open or whose band is missing", "[raster][grid]") {
  CHECK_THROWS_MATCHES(read_grid("/vsimem/no_such_raster.tif"), InputError,
                       Catch::Matchers::Predicate<InputError>([](const InputError& e) {
                         return std::string(e.what()).find("/vsimem/no_such_raster.tif") != std::string::npos;
                       }));
  const std::string path = "/vsimem/read_grid_one_band.tif";
  habcast::test::write_geotiff(path, utm_grid(2, 2), GDT_Byte, std::vector<std::uint8_t>(4, 1));
  CHECK_THROWS_WITH(read_grid(path, 2), Contains(path) && Contains("band 2 does not exist"));
  VSIUnlink(path.c_str());
}

TEST_CASE("Grids read from identical files are the same grid", "[raster][grid]") {
  const RasterGrid written = utm_grid(320, 240);
  habcast::test::write_geotiff("/vsimem/tmin.tif", written, GDT_Float32, std::vector<float>(320 * 240, 1.0f));
  habcast::test::write_geotiff("/vsimem/precip.tif", written, GDT_Int16, std::vector<std::int16_t>(320 * 240, 1));
  CHECK_NOTHROW(check_same_grid("/vsimem/tmin.tif", read_grid("/vsimem/tmin.tif"), "/vsimem/precip.tif",
                                read_grid("/vsimem/precip.tif")));
  VSIUnlink("/vsimem/tmin.tif");
  VSIUnlink("/vsimem/precip.tif");
}

TEST_CASE("Grids of different sizes differ, and the message says how to fix it", "[raster][grid]") {
  const std::string message = grid_error(utm_grid(320, 240), utm_grid(321, 240));
  CHECK_THAT(message, Contains("precip.tif is not on the same grid as tmin.tif: 321 x 240 pixels vs 320 x 240 "
                               "pixels."));
  // Extent of the reference: x from 500000 to 500000 + 320*30, y from 4650000 - 240*30 to 4650000.
  CHECK_THAT(message, Contains("gdalwarp -te 500000 4642800 509600 4650000 -tr 30 30 -t_srs EPSG:32630"));
}

TEST_CASE("An origin shifted by half a pixel is a different grid", "[raster][grid]") {
  RasterGrid shifted = utm_grid(320, 240);
  shifted.geotransform[0] += 15.0;
  const std::string message = grid_error(utm_grid(320, 240), shifted);
  CHECK_THAT(message, Contains("origin (500015, 4650000)") && Contains("0.5 pixels apart"));
}

TEST_CASE("An origin shift within the tolerance is the same grid", "[raster][grid]") {
  RasterGrid shifted = utm_grid(320, 240);
  shifted.geotransform[0] += 0.15;  // 0.005 pixel, half the default tolerance of 0.01 pixel
  shifted.geotransform[3] -= 0.15;
  CHECK_NOTHROW(check_same_grid("tmin.tif", utm_grid(320, 240), "precip.tif", shifted));
  shifted.geotransform[0] += 0.3;  // now 0.015 pixel
  CHECK_THROWS_AS(check_same_grid("tmin.tif", utm_grid(320, 240), "precip.tif", shifted), InputError);
}

TEST_CASE("A pixel size difference that drifts across the raster is a different grid", "[raster][grid]") {
  RasterGrid drifting = utm_grid(320, 240);
  drifting.geotransform[1] = 30.01;  // 0.01 m per pixel, 3.2 m = 0.107 pixel at the far edge
  CHECK_THAT(grid_error(utm_grid(320, 240), drifting), Contains("pixel size 30.01 x -30"));
  drifting.geotransform[1] = 30.0001;  // 0.032 m = 0.00107 pixel at the far edge
  CHECK_NOTHROW(check_same_grid("tmin.tif", utm_grid(320, 240), "precip.tif", drifting));
}

TEST_CASE("Grids in different CRSs differ, and the message names both", "[raster][grid]") {
  RasterGrid other = utm_grid(320, 240);
  other.crs_wkt = epsg_wkt(32631);
  other.crs_name = "WGS 84 / UTM zone 31N";
  CHECK_THAT(grid_error(utm_grid(320, 240), other),
             Contains("different CRS: \"WGS 84 / UTM zone 31N\" vs \"WGS 84 / UTM zone 30N\""));
  other.crs_wkt = epsg_wkt(25830);
  other.crs_name = "ETRS89 / UTM zone 30N";
  CHECK_THAT(grid_error(utm_grid(320, 240), other),
             Contains("different CRS: \"ETRS89 / UTM zone 30N\" vs \"WGS 84 / UTM zone 30N\""));
}

TEST_CASE("The same CRS written differently is the same grid", "[raster][grid]") {
  RasterGrid other = utm_grid(320, 240);
  other.crs_wkt = wkt_from_user_input("+proj=utm +zone=30 +datum=WGS84 +units=m +no_defs");
  other.crs_name = "unknown";
  CHECK_NOTHROW(check_same_grid("tmin.tif", utm_grid(320, 240), "precip.tif", other));
  // EPSG:32630 as WKT2 rather than the WKT1 of the reference.
  OGRSpatialReference srs;
  srs.importFromEPSG(32630);
  char* wkt2 = nullptr;
  const char* const options[] = {"FORMAT=WKT2_2019", nullptr};
  srs.exportToWkt(&wkt2, options);
  other.crs_wkt = wkt2;
  CPLFree(wkt2);
  CHECK_NOTHROW(check_same_grid("tmin.tif", utm_grid(320, 240), "precip.tif", other));
}

TEST_CASE("A grid without a CRS differs from one with a CRS", "[raster][grid]") {
  RasterGrid bare = utm_grid(320, 240);
  bare.crs_wkt.clear();
  bare.crs_name.clear();
  CHECK_THAT(grid_error(utm_grid(320, 240), bare),
             Contains("precip.tif has no CRS but tmin.tif has \"WGS 84 / UTM zone 30N\"") &&
                 Contains("gdal_edit.py -a_srs EPSG:32630 precip.tif"));
  CHECK_THAT(grid_error(bare, utm_grid(320, 240)), Contains("tmin.tif has no CRS but precip.tif has"));
}

TEST_CASE("A grid without georeferencing differs from a georeferenced one", "[raster][grid]") {
  CHECK_THAT(grid_error(utm_grid(320, 240), habcast::test::pixel_grid(320, 240)),
             Contains("precip.tif has no georeferencing"));
  CHECK_NOTHROW(
      check_same_grid("tmin.tif", habcast::test::pixel_grid(3, 2), "precip.tif", habcast::test::pixel_grid(3, 2)));
}
