// Per-unit summaries of predict --units (docs/units.md): exact cell coverage against GDAL/GEOS,
// the unit's mean and expected area with delta-method standard errors against R, and the unit
// that covers the whole map or one pixel against predict's own outputs.
#include <catch2/catch.hpp>
#include <gdal_priv.h>
#include <ogrsf_frmts.h>

#include <algorithm>
#include <cmath>
#include <fstream>
#include <map>
#include <nlohmann/json.hpp>
#include <sstream>
#include <string>
#include <tuple>
#include <vector>

#include "core/base/error.hpp"
#include "core/numeric/cell_coverage.hpp"
#include "core/prediction/unit_sums.hpp"
#include "raster/gdal_session.hpp"
#include "raster/unit_layer.hpp"
#include "render/figure_file.hpp"
#include "render/unit_map.hpp"
#include "batch_test_scene.hpp"
#include "test_support.hpp"

namespace {

using habcast::test::GridSpec;
using habcast::test::TempDir;

std::vector<std::vector<std::string>> read_csv_rows(const std::string& path) {
  std::istringstream in(habcast::test::read_text(path));
  std::string line;
  std::vector<std::vector<std::string>> rows;
  bool header = false;
  while (std::getline(in, line)) {
    if (line.empty() || line[0] == '#') continue;
    if (!header) {
      header = true;
      continue;
    }
    std::vector<std::string> fields;
    std::istringstream f(line);
    std::string cell;
    while (std::getline(f, cell, ',')) fields.push_back(cell);
    rows.push_back(fields);
  }
  return rows;
}

habcast::RasterGrid reference_grid() {
  OGRSpatialReference srs;
  srs.importFromEPSG(32630);
  char* wkt = nullptr;
  srs.exportToWkt(&wkt);
  habcast::RasterGrid g;
  g.width = 9;
  g.height = 7;
  g.geotransform = {500000.0, 10.0, 0.0, 4600000.0, 0.0, -10.0};
  g.has_geotransform = true;
  g.crs_wkt = wkt;
  g.crs_name = "WGS 84 / UTM zone 30N";
  CPLFree(wkt);
  return g;
}

/// Writes polygons given as WKT in the grid's CRS (EPSG:32630) to a GeoPackage layer "units".
void write_units(const std::string& path, const std::vector<std::pair<std::string, std::string>>& named_wkt,
                 int epsg = 32630, const std::string& layer_name = "units") {
  habcast::ensure_gdal();
  GDALDriver* driver = GetGDALDriverManager()->GetDriverByName("GPKG");
  GDALDatasetUniquePtr ds(GDALDataset::Open(path.c_str(), GDAL_OF_VECTOR | GDAL_OF_UPDATE));
  if (!ds) ds.reset(driver->Create(path.c_str(), 0, 0, 0, GDT_Unknown, nullptr));
  REQUIRE(ds);
  OGRSpatialReference srs;
  if (epsg) srs.importFromEPSG(epsg);
  OGRLayer* layer = ds->CreateLayer(layer_name.c_str(), epsg ? &srs : nullptr, wkbMultiPolygon, nullptr);
  REQUIRE(layer);
  OGRFieldDefn name("name", OFTString);
  REQUIRE(layer->CreateField(&name) == OGRERR_NONE);
  for (const auto& [n, wkt] : named_wkt) {
    OGRGeometry* g = nullptr;
    REQUIRE(OGRGeometryFactory::createFromWkt(wkt.c_str(), nullptr, &g) == OGRERR_NONE);
    OGRFeature f(layer->GetLayerDefn());
    f.SetField("name", n.c_str());
    f.SetGeometryDirectly(g);
    REQUIRE(layer->CreateFeature(&f) == OGRERR_NONE);
  }
}

std::string rect_wkt(double x0, double y0, double x1, double y1) {
  std::ostringstream s;
  s.precision(17);
  s << "POLYGON((" << x0 << " " << y0 << "," << x1 << " " << y0 << "," << x1 << " " << y1 << "," << x0 << " " << y1 << ","
    << x0 << " " << y0 << "))";
  return s.str();
}

double reference_value(const std::string& path, const std::string& quantity) {
  for (const auto& row : read_csv_rows(path))
    if (row.size() == 2 && row[0] == quantity) return std::stod(row[1]);
  FAIL("no " << quantity << " in " << path);
  return 0.0;
}

nlohmann::json unit_row(const nlohmann::json& units, const std::string& id) {
  for (const auto& row : units["rows"])
    if (row["unit_id"] == id) return row;
  FAIL("no unit " << id);
  return {};
}

}  // namespace

TEST_CASE("Each cell's covered share equals the intersection area GDAL/GEOS compute", "[units]") {
  // Reference: tests/reference/units_coverage.py, osgeo.ogr Intersection/GetArea (GEOS) of every
  // cell with each polygon: triangles, a concave polygon, a hole, a multipolygon, a sliver, edges on
  // cell lines, a polygon inside one cell and one reaching past the grid.
  const habcast::RasterGrid grid = reference_grid();
  const habcast::ManagementUnits units = habcast::read_units(
      {habcast::test::source_path("tests/reference/units/coverage_polygons.geojson"), "", "name"}, grid);
  std::map<std::string, std::map<std::pair<int, int>, double>> expected;
  for (const auto& row : read_csv_rows(habcast::test::source_path("tests/reference/units/coverage_fractions.csv")))
    expected[row[0]][{std::stoi(row[1]), std::stoi(row[2])}] = std::stod(row[3]);
  REQUIRE(units.size() == 8);
  for (std::size_t u = 0; u < units.size(); ++u) {
    INFO("polygon " << units.ids[u]);
    std::map<std::pair<int, int>, double> got;
    habcast::visit_cell_coverage(units.polygons[u], 0, grid.height, 0, grid.width,
                                 [&](int r, int c, double f) { got[{r, c}] = f; });
    const auto& want = expected.at(units.ids[u]);
    for (const auto& [cell, share] : want) {
      INFO("cell row " << cell.first << ", column " << cell.second);
      const double mine = got.count(cell) ? got.at(cell) : 0.0;
      CHECK(std::fabs(mine - share) <= 1e-9);
    }
    for (const auto& [cell, share] : got) {
      INFO("cell row " << cell.first << ", column " << cell.second << " is covered by " << share << " here only");
      CHECK((want.count(cell) > 0 || share <= 1e-9));
    }
  }
}

TEST_CASE("Cell shares of a polygon add up to its area, and a cell inside counts whole", "[units]") {
  // Closed form: a rectangle from (0.5, 0.25) to (2.75, 3.5) in cell units covers 2.25 x 3.25 cells.
  const habcast::CoveragePolygon p =
      habcast::coverage_polygon({{{0.5, 0.25}, {2.75, 0.25}, {2.75, 3.5}, {0.5, 3.5}}}, {{}});
  double total = 0.0;
  std::map<std::pair<int, int>, double> got;
  habcast::visit_cell_coverage(p, 0, 10, 0, 10, [&](int r, int c, double f) {
    total += f;
    got[{r, c}] = f;
  });
  CHECK(total == Approx(2.25 * 3.25).epsilon(1e-15));
  CHECK(got.at({1, 1}) == 1.0);
  CHECK(got.at({0, 0}) == Approx(0.5 * 0.75).epsilon(1e-15));
  CHECK(got.at({3, 2}) == Approx(0.75 * 0.5).epsilon(1e-15));
  CHECK(got.size() == 12);
}

TEST_CASE("A unit's mean, expected area and their standard errors equal R's delta method", "[units][reference]") {
  // Reference: tests/reference/units_mite_se.R, R 4.2.2 stats::glm + model.matrix + vcov on the
  // mite data of Debian's r-cran-vegan: the first 12 cores as 4 rows x 3 columns of 1 ha cells and
  // a rectangle covering them by known shares. Same model as tests/reference/mite/model.toml.
  TempDir dir("units-r");
  const auto training = read_csv_rows(habcast::test::source_path("tests/reference/mite/training.csv"));
  REQUIRE(training.size() >= 12);
  GridSpec g{3, 4, 0.0, 400.0, 100.0, 32630, 0};
  auto core = [&](int r, int c, int column) { return std::stod(training[static_cast<std::size_t>(r * 3 + c)][static_cast<std::size_t>(column)]); };
  habcast::test::write_raster(dir.file("watr.tif"), g, "Float64", [&](int r, int c) { return core(r, c, 0); });
  habcast::test::write_raster(dir.file("subs.tif"), g, "Float64", [&](int r, int c) { return core(r, c, 1); });
  habcast::test::write_raster(dir.file("topo.tif"), g, "Byte", [&](int r, int c) { return core(r, c, 2); });
  // Cell units (0.5, 0.25)-(2.75, 3.5) in world coordinates: x = 100 col, y = 400 - 100 row.
  write_units(dir.file("units.gpkg"), {{"plot", rect_wkt(50.0, 375.0, 275.0, 50.0)}});
  std::string err;
  const int code = habcast::test::run_cli(
      {"predict", habcast::test::source_path("tests/reference/mite/model.toml"), "-o", dir.file("out"), "-c",
       "WatrCont=" + dir.file("watr.tif"), "-c", "SubsDens=" + dir.file("subs.tif"), "-c", "Topo=" + dir.file("topo.tif"),
       "--units", dir.file("units.gpkg"), "--units-id", "name", "-q"},
      nullptr, &err);
  INFO(err);
  REQUIRE(code == 0);
  const nlohmann::json units = nlohmann::json::parse(habcast::test::read_text(dir.file("out/units.json")));
  const nlohmann::json row = unit_row(units, "plot");
  const std::string ref = habcast::test::source_path("tests/reference/units/mite_unit.csv");
  CHECK(row["area_ha"].get<double>() == Approx(reference_value(ref, "area_ha")).epsilon(1e-12));
  CHECK(row["mean"].get<double>() == Approx(reference_value(ref, "mean")).epsilon(1e-6));
  CHECK(row["mean_se"].get<double>() == Approx(reference_value(ref, "mean_se")).epsilon(1e-6));
  CHECK(row["expected_ha"].get<double>() == Approx(reference_value(ref, "expected_ha")).epsilon(1e-6));
  CHECK(row["expected_se_ha"].get<double>() == Approx(reference_value(ref, "expected_se_ha")).epsilon(1e-6));
  // The interval is formed on the logit scale of the mean, so it is not symmetric but contains it.
  CHECK(row["mean_lower"].get<double>() < row["mean"].get<double>());
  CHECK(row["mean_upper"].get<double>() > row["mean"].get<double>());
  const double z = 1.959963984540054;
  const double logit = std::log(row["mean"].get<double>() / (1 - row["mean"].get<double>()));
  const double m = row["mean"].get<double>();
  const double half = z * row["mean_se"].get<double>() / (m * (1 - m));
  CHECK(row["mean_lower"].get<double>() == Approx(1 / (1 + std::exp(-(logit - half)))).epsilon(1e-12));
  // Averaging the pixels' own standard errors would have given a very different (here larger) figure.
  CHECK(reference_value(ref, "naive_mean_of_pixel_se") > 1.5 * row["mean_se"].get<double>());
}

namespace {

struct MapScene {
  TempDir dir{"units-map"};
  std::string model = dir.file("model.toml");
  MapScene() {
    const GridSpec grid{40, 30, 500000.0, 4000000.0, 100.0, 32630, 16};
    habcast::test::write_raster(dir.file("tmin.tif"), grid, "Float32", [](int r, int c) { return -4.0 + 0.25 * c + 0.05 * r; });
    habcast::test::write_raster(dir.file("precip.tif"), grid, "Float32", [](int r, int c) {
      return (r == 3 && c == 5) ? -1.0 : 800.0 + 20.0 * r - 3.0 * c;
    }, true, -1.0);
    habcast::test::write_text(dir.file("training.csv"), "tmin,precip\n-2,900\n2,900\n0,1300\n-1,1100\n1,1000\n0,950\n");
    habcast::test::write_text(model, R"toml(habcast_model = 1
[model]
name = "units scene"
response = "presence"
family = "binomial"
link = "logit"
[training]
samples = "training.csv"
[covariates.tmin]
type = "continuous"
raster = "tmin.tif"
[covariates.precip]
type = "continuous"
raster = "precip.tif"
center = 1000.0
scale = 200.0
[coefficients]
terms = ["(Intercept)", "tmin", "tmin^2", "precip", "tmin:precip"]
estimates = [0.3, 0.8, -0.4, 0.6, 0.2]
covariance = [
  [0.04, 0.001, -0.002, 0.003, 0.0],
  [0.001, 0.02, 0.001, 0.0, 0.001],
  [-0.002, 0.001, 0.01, 0.0, 0.0],
  [0.003, 0.0, 0.0, 0.03, 0.002],
  [0.0, 0.001, 0.0, 0.002, 0.015],
]
)toml");
  }
  int predict(const std::string& out, const std::vector<std::string>& extra, std::string* err = nullptr) {
    std::vector<std::string> args{"predict", model, "-o", dir.file(out), "-q"};
    args.insert(args.end(), extra.begin(), extra.end());
    return habcast::test::run_cli(args, nullptr, err);
  }
};

}  // namespace

TEST_CASE("A unit over the whole raster equals the report's whole-map numbers", "[units]") {
  MapScene s;
  // The whole grid (4000 x 3000 m), one pixel (row 7, column 11), and a unit off the grid.
  write_units(s.dir.file("u.gpkg"), {{"all", rect_wkt(500000, 4000000, 504000, 3997000)},
                                     {"pixel", rect_wkt(501100, 3999300, 501200, 3999200)},
                                     {"away", rect_wkt(600000, 4000000, 601000, 3999000)}});
  std::string err;
  REQUIRE(s.predict("out", {"--units", s.dir.file("u.gpkg"), "--units-id", "name", "--units-threshold", "0.5"}, &err) == 0);
  const nlohmann::json report = nlohmann::json::parse(habcast::test::read_text(s.dir.file("out/report.json")));
  const nlohmann::json units = nlohmann::json::parse(habcast::test::read_text(s.dir.file("out/units.json")));
  const nlohmann::json all = unit_row(units, "all");
  CHECK(all["area_ha"].get<double>() == Approx(1200.0).epsilon(1e-12));
  CHECK(all["data_area_ha"].get<double>() == Approx(report["pixels"]["predicted"].get<double>()).epsilon(1e-12));
  CHECK(all["nodata_area_ha"].get<double>() == Approx(1.0).epsilon(1e-9));
  CHECK(all["mean"].get<double>() == Approx(report["response"]["mean"].get<double>()).epsilon(1e-9));
  CHECK(all["extrapolated_share"].get<double>() ==
        Approx(report["extrapolation"]["flagged_share"].get<double>()).epsilon(1e-9));
  // Area above the threshold: the pixels of suitability.tif at or above 0.5.
  const std::vector<double> suit = habcast::test::read_band(s.dir.file("out/suitability.tif"));
  double above = 0;
  for (double v : suit) above += (v != -9999.0 && v >= 0.5) ? 1.0 : 0.0;
  CHECK(all["above_threshold_ha"].get<double>() == Approx(above).margin(1.0));

  const nlohmann::json pixel = unit_row(units, "pixel");
  CHECK(pixel["area_ha"].get<double>() == Approx(1.0).epsilon(1e-12));
  CHECK(pixel["mean"].get<double>() == Approx(habcast::test::read_pixel(s.dir.file("out/suitability.tif"), 1, 7, 11)).epsilon(1e-6));
  CHECK(pixel["mean_se"].get<double>() == Approx(habcast::test::read_pixel(s.dir.file("out/uncertainty.tif"), 1, 7, 11)).epsilon(1e-6));
  CHECK(pixel["mean_lower"].get<double>() == Approx(habcast::test::read_pixel(s.dir.file("out/uncertainty.tif"), 2, 7, 11)).epsilon(1e-6));
  CHECK(pixel["mean_upper"].get<double>() == Approx(habcast::test::read_pixel(s.dir.file("out/uncertainty.tif"), 3, 7, 11)).epsilon(1e-6));

  const nlohmann::json away = unit_row(units, "away");
  CHECK(away["status"] == "outside the raster");
  CHECK(away["area_ha"].get<double>() == 0.0);
  CHECK(away["mean"].is_null());
  CHECK(err.find("1 unit has no pixels") != std::string::npos);

  // The GeoPackage layer carries the same numbers and the units' geometry.
  GDALDatasetUniquePtr gpkg(GDALDataset::Open(s.dir.file("out/units.gpkg").c_str(), GDAL_OF_VECTOR));
  REQUIRE(gpkg);
  OGRLayer* layer = gpkg->GetLayerByName("units");
  REQUIRE(layer);
  CHECK(layer->GetFeatureCount() == 3);
  for (auto& f : *layer) {
    CHECK(f->GetGeometryRef() != nullptr);
    if (std::string(f->GetFieldAsString("unit_id")) == "all")
      CHECK(f->GetFieldAsDouble("mean") == Approx(all["mean"].get<double>()).epsilon(1e-15));
  }
}

TEST_CASE("Unit sums are the same for any block size and thread count", "[units]") {
  MapScene s;
  write_units(s.dir.file("u.gpkg"), {{"a", "POLYGON((500130 3999870,503310 3999410,502250 3997170,500130 3999870))"},
                                     {"b", "POLYGON((500000 4000000,501950 4000000,501950 3998050,500000 3998050),"
                                           "(500400 3999600,501000 3999500,500800 3998800,500400 3999600))"}});
  REQUIRE(s.predict("one", {"--units", s.dir.file("u.gpkg"), "--units-id", "name", "--threads", "1", "--block-size", "16"}) == 0);
  REQUIRE(s.predict("three", {"--units", s.dir.file("u.gpkg"), "--units-id", "name", "--threads", "3", "--block-size", "32"}) == 0);
  const nlohmann::json one = nlohmann::json::parse(habcast::test::read_text(s.dir.file("one/units.json")));
  const nlohmann::json three = nlohmann::json::parse(habcast::test::read_text(s.dir.file("three/units.json")));
  for (const char* id : {"a", "b"}) {
    INFO("unit " << id);
    // Different windows add the pixels in a different order: equal to the last few bits.
    for (const char* key : {"area_ha", "data_area_ha", "mean", "mean_se", "expected_ha", "extrapolated_share"})
      CHECK(unit_row(one, id)[key].get<double>() == Approx(unit_row(three, id)[key].get<double>()).epsilon(1e-12));
  }
  // Same windows, other thread counts: sums merged in window order, identical to the bit.
  REQUIRE(s.predict("five", {"--units", s.dir.file("u.gpkg"), "--units-id", "name", "--threads", "5", "--block-size", "16"}) == 0);
  CHECK(habcast::test::read_text(s.dir.file("one/units.csv")) == habcast::test::read_text(s.dir.file("five/units.csv")));
}

TEST_CASE("Units the tool cannot place without guessing are refused with the reason", "[units]") {
  MapScene s;
  std::string err;
  SECTION("several layers and none named") {
    write_units(s.dir.file("u.gpkg"), {{"a", rect_wkt(500000, 4000000, 501000, 3999000)}}, 32630, "reserves");
    write_units(s.dir.file("u.gpkg"), {{"b", rect_wkt(500000, 4000000, 501000, 3999000)}}, 32630, "parcels");
    CHECK(s.predict("out", {"--units", s.dir.file("u.gpkg")}, &err) == 3);
    CHECK(err.find("several layers") != std::string::npos);
    CHECK(err.find("--units-layer") != std::string::npos);
    CHECK(s.predict("out", {"--units", s.dir.file("u.gpkg"), "--units-layer", "parcels"}) == 0);
  }
  SECTION("a duplicated id names both features") {
    write_units(s.dir.file("u.gpkg"), {{"same", rect_wkt(500000, 4000000, 501000, 3999000)},
                                       {"same", rect_wkt(501000, 4000000, 502000, 3999000)}});
    CHECK(s.predict("out", {"--units", s.dir.file("u.gpkg"), "--units-id", "name"}, &err) == 3);
    CHECK(err.find("feature 1") != std::string::npos);
    CHECK(err.find("feature 2") != std::string::npos);
    CHECK_FALSE(std::filesystem::exists(s.dir.file("out/suitability.tif")));
  }
  SECTION("units without a CRS on a grid with one") {
    write_units(s.dir.file("u.gpkg"), {{"a", rect_wkt(500000, 4000000, 501000, 3999000)}}, 0);
    CHECK(s.predict("out", {"--units", s.dir.file("u.gpkg")}, &err) == 3);
    INFO(err);
    CHECK(err.find("no CRS") != std::string::npos);
  }
  SECTION("a threshold outside (0, 1) for a probability") {
    write_units(s.dir.file("u.gpkg"), {{"a", rect_wkt(500000, 4000000, 501000, 3999000)}});
    CHECK(s.predict("out", {"--units", s.dir.file("u.gpkg"), "--units-threshold", "1.5"}, &err) == 2);
  }
}

TEST_CASE("Units in another CRS are transformed to the grid's before coverage", "[units]") {
  MapScene s;
  // The whole grid's outline in geographic coordinates (WGS 84), densified so its edges follow the
  // UTM grid lines closely: the covered area then matches the grid's 1200 ha to within 0.01 %.
  OGRSpatialReference utm, wgs;
  utm.importFromEPSG(32630);
  wgs.importFromEPSG(4326);
  utm.SetAxisMappingStrategy(OAMS_TRADITIONAL_GIS_ORDER);
  wgs.SetAxisMappingStrategy(OAMS_TRADITIONAL_GIS_ORDER);
  std::unique_ptr<OGRCoordinateTransformation> ct(OGRCreateCoordinateTransformation(&utm, &wgs));
  OGRGeometry* g = nullptr;
  const std::string wkt = rect_wkt(500000, 4000000, 504000, 3997000);
  REQUIRE(OGRGeometryFactory::createFromWkt(wkt.c_str(), nullptr, &g) == OGRERR_NONE);
  g->segmentize(10.0);
  REQUIRE(g->transform(ct.get()) == OGRERR_NONE);
  char* geo_wkt = nullptr;
  g->exportToWkt(&geo_wkt, wkbVariantIso);
  const std::string geo(geo_wkt);
  CPLFree(geo_wkt);
  OGRGeometryFactory::destroyGeometry(g);
  write_units(s.dir.file("u.gpkg"), {{"all", geo}}, 4326);
  REQUIRE(s.predict("out", {"--units", s.dir.file("u.gpkg"), "--units-id", "name"}) == 0);
  const nlohmann::json units = nlohmann::json::parse(habcast::test::read_text(s.dir.file("out/units.json")));
  CHECK(units["transformed_to_grid_crs"] == true);
  CHECK(unit_row(units, "all")["area_ha"].get<double>() == Approx(1200.0).epsilon(1e-4));
}

TEST_CASE("Cell areas on a geographic grid follow the ellipsoid", "[units]") {
  // One cell spanning the globe: the surface area of the WGS 84 ellipsoid, 510,065,621.724 km^2
  // (from memory; it follows from a = 6378137 m, 1/f = 298.257223563).
  habcast::RasterGrid g;
  g.width = 1;
  g.height = 1;
  g.geotransform = {-180.0, 360.0, 0.0, 90.0, 0.0, -180.0};
  g.has_geotransform = true;
  OGRSpatialReference srs;
  srs.importFromEPSG(4326);
  char* wkt = nullptr;
  srs.exportToWkt(&wkt);
  g.crs_wkt = wkt;
  CPLFree(wkt);
  const std::vector<double> a = habcast::cell_area_ha_by_row(g, "test");
  CHECK(a.at(0) == Approx(510065621.724 * 100.0).epsilon(1e-10));
  // Two rows split at the equator: each half.
  g.height = 2;
  g.geotransform = {-180.0, 360.0, 0.0, 90.0, 0.0, -90.0};
  const std::vector<double> halves = habcast::cell_area_ha_by_row(g, "test");
  CHECK(halves.at(0) == Approx(halves.at(1)).epsilon(1e-14));
}

TEST_CASE("A unit spanning batch tiles gets the numbers of one raster", "[units][batch]") {
  habcast::test::BatchScene scene(2, 2, 20, 16);
  // A triangle across all four tiles and a small square inside one, in the scene's UTM grid
  // (origin 500000, 4000000; 100 m pixels; the whole grid is 43 x 35 pixels).
  write_units(scene.file("units.gpkg"),
              {{"across", "POLYGON((500310 3999870,504120 3999150,501900 3996620,500310 3999870))"},
               {"inside", rect_wkt(500250, 3999750, 500875, 3999320)}});
  scene.write_manifest("[units]\npath = \"units.gpkg\"\nid = \"name\"\nthreshold = 2.5\n");
  std::string err;
  REQUIRE(scene.run({"-q"}, nullptr, &err) == 0);
  INFO(err);
  REQUIRE(habcast::test::run_cli({"predict", scene.model(), "-c", "elev=" + scene.file("elev.tif"), "-c",
                                  "cover=" + scene.file("cover.tif"), "-o", scene.file("whole"), "--units",
                                  scene.file("units.gpkg"), "--units-id", "name", "--units-threshold", "2.5", "-q"}) == 0);
  const nlohmann::json region = nlohmann::json::parse(habcast::test::read_text(scene.out() + "/units.json"));
  const nlohmann::json whole = nlohmann::json::parse(habcast::test::read_text(scene.file("whole/units.json")));
  CHECK(region["merged_from_tiles"] == 4);
  for (const char* id : {"across", "inside"}) {
    INFO("unit " << id);
    for (const char* key : {"area_ha", "data_area_ha", "mean", "mean_se", "mean_lower", "above_threshold_ha",
                            "extrapolated_share", "share_range"})
      CHECK(unit_row(region, id)[key].get<double>() == Approx(unit_row(whole, id)[key].get<double>()).epsilon(1e-12));
  }
  // Poisson: no expected occupied area.
  CHECK_FALSE(unit_row(region, "across").contains("expected_ha"));
  const nlohmann::json report = nlohmann::json::parse(habcast::test::read_text(scene.out() + "/batch-report.json"));
  CHECK(report["units"]["units"] == 2);
}

TEST_CASE("The units map draws every unit, hatches mostly extrapolated ones and is a valid picture", "[units]") {
  habcast::UnitMapInput in;
  in.title = "test";
  in.value_label = "Mean suitability (probability)";
  in.grid.width = 10;
  in.grid.height = 8;
  habcast::UnitMapUnit a, b, c;
  a.rings = {{{0, 0}, {5, 0}, {5, 8}, {0, 8}}};
  a.mean = 0.2;
  b.rings = {{{5, 0}, {10, 0}, {10, 8}, {5, 8}}, {{6, 2}, {6, 3}, {7, 3}, {7, 2}}};  // a hole (clockwise)
  b.mean = 0.9;
  b.mostly_extrapolated = true;
  c.rings = {{{2, 2}, {3, 2}, {3, 3}}};  // no prediction
  in.units = {a, b, c};
  const habcast::Figure fig = habcast::unit_map_figure(in);
  CHECK(fig.marks_with_role("unit").size() == 3);
  CHECK(fig.marks_with_role("unit-hole").size() == 1);
  int hatched = 0;
  for (const habcast::Mark* m : fig.marks_with_role("unit"))
    hatched += std::get<habcast::PathMark>(m->shape).hatch.has_value() ? 1 : 0;
  CHECK(hatched == 1);
  const std::string png = habcast::encode_figure(fig, "map.png");
  REQUIRE(png.size() > 8);
  CHECK(png.substr(1, 3) == "PNG");
  const std::string svg = habcast::encode_figure(fig, "map.svg");
  CHECK(svg.find("<svg") != std::string::npos);

  MapScene s;
  write_units(s.dir.file("u.gpkg"), {{"all", rect_wkt(500000, 4000000, 504000, 3997000)}});
  CHECK(s.predict("out", {"--units-map", s.dir.file("map.pdf")}) == 2);  // no --units
  REQUIRE(s.predict("out", {"--units", s.dir.file("u.gpkg"), "--units-map", s.dir.file("map.pdf")}) == 0);
  CHECK(habcast::test::read_text(s.dir.file("map.pdf")).substr(0, 5) == "%PDF-");
}

TEST_CASE("A block's unit cover is sorted by pixel, then unit, as a comparison sort orders it", "[units]") {
  // Entries as cover_window adds them: unit by unit, in increasing unit order, each pixel of a
  // unit once, pixels within a unit in any order.
  habcast::BlockUnitCover cover;
  std::vector<std::tuple<std::uint32_t, std::uint32_t, double>> want;
  std::uint32_t state = 12345;
  auto next = [&] { return state = state * 1103515245u + 12345u; };
  for (std::uint32_t u = 0; u < 40; ++u) {
    std::vector<std::uint32_t> pixels;
    for (std::uint32_t k = 0; k < 30; ++k) pixels.push_back((next() >> 8) % 500);
    std::sort(pixels.begin(), pixels.end());
    pixels.erase(std::unique(pixels.begin(), pixels.end()), pixels.end());
    std::reverse(pixels.begin(), pixels.end());
    for (const std::uint32_t p : pixels) {
      const double area = 0.001 * static_cast<double>(next() % 1000);
      cover.pixel.push_back(p);
      cover.unit.push_back(u);
      cover.area_ha.push_back(area);
      want.emplace_back(p, u, area);
    }
  }
  std::sort(want.begin(), want.end(), [](const auto& a, const auto& b) {
    return std::get<0>(a) != std::get<0>(b) ? std::get<0>(a) < std::get<0>(b) : std::get<1>(a) < std::get<1>(b);
  });
  for (int round = 0; round < 2; ++round) {  // the scratch buffers are reused
    cover.sort();
    REQUIRE(cover.size() == want.size());
    for (std::size_t i = 0; i < want.size(); ++i) {
      INFO("entry " << i);
      CHECK(cover.pixel[i] == std::get<0>(want[i]));
      CHECK(cover.unit[i] == std::get<1>(want[i]));
      CHECK(cover.area_ha[i] == std::get<2>(want[i]));
    }
  }
}
