// Points onto the grid: PROJ transformations against published and independently computed numbers,
// axis order, containing-pixel and bilinear sampling, and the messages for points that miss.
#include <catch2/catch.hpp>
#include <cmath>

#include <ogrsf_frmts.h>

#include "core/base/error.hpp"
#include "raster/point_sampler.hpp"
#include "raster/point_source.hpp"
#include "raster/point_transform.hpp"
#include "raster/raster_grid.hpp"
#include "raster_test_support.hpp"
#include "test_support.hpp"

using namespace habcast;

namespace {

std::string wkt_of(const std::string& user_input) {
  OGRSpatialReference srs;
  REQUIRE(srs.SetFromUserInput(user_input.c_str()) == OGRERR_NONE);
  char* wkt = nullptr;
  srs.exportToWkt(&wkt);
  std::string s = wkt;
  CPLFree(wkt);
  return s;
}

// 20 x 20 pixels of 100 m in UTM 30N covering x 383000..385000, y 5105000..5107000, value
// 100 * column + row, so a sampled value says which pixel was read.
test::GridSpec utm_grid() {
  test::GridSpec g;
  g.width = 20;
  g.height = 20;
  g.origin_x = 383000.0;
  g.origin_y = 5107000.0;
  g.pixel = 100.0;
  g.epsg = 32630;
  g.block = 16;
  return g;
}

}  // namespace

TEST_CASE("WGS 84 longitude/latitude to UTM zone 30N agrees with gdaltransform to 1 mm", "[fit]") {
  // Reference: GDAL 3.6.2's gdaltransform (Debian gdal-bin), run as
  //   echo "-4.5 46.1" | gdaltransform -s_srs EPSG:4326 -t_srs EPSG:32630 -output_xy
  // which prints 384061.436027494 5106251.93033849. Tolerance 1 mm.
  const PointTransformer t("EPSG:4326", wkt_of("EPSG:32630"), "test");
  std::vector<double> x{-4.5}, y{46.1};
  std::vector<std::uint8_t> ok;
  REQUIRE(t.transform(x, y, ok) == 0);
  CHECK(std::fabs(x[0] - 384061.436027494) < 1e-3);
  CHECK(std::fabs(y[0] - 5106251.93033849) < 1e-3);
}

TEST_CASE("Transverse Mercator reproduces Snyder's worked example", "[fit]") {
  // Snyder (1987), Map Projections - A Working Manual, USGS Professional Paper 1395, numerical
  // example of the ellipsoidal Transverse Mercator (from memory): Clarke 1866, phi 40 deg 30' N,
  // lambda 73 deg 30' W, central meridian 75 deg W, k0 0.9996 -> x = 127,106.5 m,
  // y = 4,484,124.4 m. Tolerance: the printed 0.1 m.
  const PointTransformer t("+proj=longlat +ellps=clrk66 +no_defs",
                           wkt_of("+proj=tmerc +ellps=clrk66 +lat_0=0 +lon_0=-75 +k=0.9996 +x_0=0 +y_0=0 +units=m +no_defs"),
                           "test");
  std::vector<double> x{-73.5}, y{40.5};
  std::vector<std::uint8_t> ok;
  t.transform(x, y, ok);
  CHECK(std::fabs(x[0] - 127106.5) <= 0.05 + 1e-9);
  CHECK(std::fabs(y[0] - 4484124.4) <= 0.05 + 1e-9);
}

TEST_CASE("EPSG:4326 points are read longitude in x, latitude in y, despite the CRS's own axis order", "[fit]") {
  // EPSG:4326 defines latitude first; points files write longitude in x. Traditional GIS order
  // must apply, or this point would be taken as latitude -4.5, longitude 46.1 (Somalia).
  test::TempDir dir("fit-axis");
  const std::string raster = dir.file("cells.tif");
  test::write_raster(raster, utm_grid(), "Float32", [](int row, int col) { return 100.0 * col + row; });
  const RasterGrid grid = read_grid(raster);
  const PointTransformer t("EPSG:4326", grid.crs_wkt, "points.csv");
  std::vector<double> x{-4.5, 46.1}, y{46.1, -4.5};  // the second point has its axes swapped
  std::vector<std::uint8_t> ok;
  t.transform(x, y, ok);
  const SampledPoints s = sample_points(grid, {{"cells", raster, 1, false}}, x, y, ok, false);
  // 384061.44 -> column 10; 5106251.93 -> row 7 (both from the gdaltransform reference above).
  CHECK(s.status[0] == PointStatus::ok);
  CHECK(s.raw(0, 0) == 1007.0);
  CHECK(s.status[1] != PointStatus::ok);
}

TEST_CASE("Bilinear sampling interpolates between pixel centres and falls back at nodata", "[fit]") {
  test::TempDir dir("fit-bilinear");
  const std::string raster = dir.file("ramp.tif");
  // Value = column + 10 * row; pixel (row 2, column 3) is nodata.
  test::write_raster(
      raster, utm_grid(), "Float32", [](int row, int col) { return row == 2 && col == 3 ? -9999.0 : col + 10.0 * row; }, true,
      -9999.0);
  const RasterGrid grid = read_grid(raster);
  // Halfway between the centres of columns 5 and 6, a quarter of the way from row 8's centre to
  // row 9's: bilinear value 5.5 + 10 * 8.25 = 88.0 (a plane is reproduced exactly).
  std::vector<double> x{383000.0 + 600.0, 383000.0 + 300.0, 383000.0 + 350.0}, y{5107000.0 - 875.0, 5107000.0 - 250.0,
                                                                                   5107000.0 - 150.0};
  const std::vector<std::uint8_t> ok(3, 1);
  const SampledPoints near = sample_points(grid, {{"ramp", raster, 1, false}}, x, y, ok, false);
  const SampledPoints bil = sample_points(grid, {{"ramp", raster, 1, false}}, x, y, ok, true);
  CHECK(near.raw(0, 0) == 6.0 + 10.0 * 8.0);  // containing pixel: column 6, row 8
  CHECK(bil.raw(0, 0) == Approx(88.0).epsilon(1e-12));
  // Second point sits in the nodata pixel itself: dropped either way.
  CHECK(near.status[1] == PointStatus::nodata);
  CHECK(bil.status[1] == PointStatus::nodata);
  // Third: in pixel (row 1, column 3), whose bilinear neighbourhood includes the nodata pixel:
  // it keeps its own pixel's value and is counted as a fallback.
  CHECK(bil.status[2] == PointStatus::ok);
  CHECK(bil.raw(2, 0) == 3.0 + 10.0);
  CHECK(bil.bilinear_fallbacks == 1);
}

TEST_CASE("Points come from a GeoPackage through OGR with the layer's CRS", "[fit]") {
  test::TempDir dir("fit-gpkg");
  const std::string gpkg = dir.file("sites.gpkg");
  ensure_gdal();  // a test run on its own has not registered the drivers yet
  {
    GDALDriver* driver = GetGDALDriverManager()->GetDriverByName("GPKG");
    REQUIRE(driver != nullptr);
    GDALDatasetUniquePtr ds(driver->Create(gpkg.c_str(), 0, 0, 0, GDT_Unknown, nullptr));
    OGRSpatialReference srs;
    srs.importFromEPSG(4326);
    OGRLayer* layer = ds->CreateLayer("sites", &srs, wkbPoint, nullptr);
    OGRFieldDefn field("presence", OFTInteger);
    layer->CreateField(&field);
    for (int k = 0; k < 2; ++k) {
      OGRFeatureUniquePtr f(OGRFeature::CreateFeature(layer->GetLayerDefn()));
      f->SetField("presence", k);
      OGRPoint p(-4.5 + 0.001 * k, 46.1);  // GDAL's OGRPoint takes (x, y) = (longitude, latitude)
      f->SetGeometry(&p);
      REQUIRE(layer->CreateFeature(f.get()) == OGRERR_NONE);
    }
  }
  PointSourceOptions o;
  o.path = gpkg;
  o.columns = {"presence"};
  const Points p = read_points(o);
  REQUIRE(p.size() == 2);
  CHECK(p.values[0][1] == 1.0);
  CHECK(p.where[0].find("feature 1") != std::string::npos);
  OGRSpatialReference declared;
  declared.importFromWkt(p.crs_wkt.c_str());
  OGRSpatialReference wgs84;
  wgs84.importFromEPSG(4326);
  CHECK(declared.IsSame(&wgs84));
  o.columns = {"occupancy"};
  CHECK_THROWS_WITH(read_points(o), Catch::Contains("no field \"occupancy\"") && Catch::Contains("presence"));
}

TEST_CASE("A CSV without the coordinate columns or with a text coordinate names the file and line", "[fit]") {
  test::TempDir dir("fit-csv");
  const std::string csv = dir.file("p.csv");
  test::write_text(csv, "# survey 2026\nlon,lat,presence\n-4.5,46.1,1\n-4.4,north,0\n");
  PointSourceOptions o;
  o.path = csv;
  CHECK_THROWS_WITH(read_points(o), Catch::Contains("p.csv:2") && Catch::Contains("no column named \"x\"") &&
                                        Catch::Contains("--x") && Catch::Contains("lon, lat, presence"));
  o.x_column = "lon";
  o.y_column = "lat";
  CHECK_THROWS_WITH(read_points(o), Catch::Contains("p.csv:4") && Catch::Contains("\"north\""));
}
