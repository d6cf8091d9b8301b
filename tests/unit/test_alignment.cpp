// Covariates on other grids: every aligned value is checked against GDAL's own warper as gdalwarp
// runs it (the GDALWarp() C API of gdal_utils.h, with the same target grid, resampling and error
// threshold), across a CRS change (geographic -> UTM) and resolution changes both ways; plus the
// choices of docs/alignment.md and each way alignment must refuse.
#include <cpl_vsi.h>
#include <gdal_utils.h>
#include <ogr_spatialref.h>

#include <catch2/catch.hpp>
#include <algorithm>
#include <cmath>
#include <cstring>
#include <limits>
#include <string>
#include <vector>

#include "core/base/error.hpp"
#include "raster/alignment_plan.hpp"
#include "raster/warped_source.hpp"
#include "raster/window.hpp"
#include "raster_test_support.hpp"

using Catch::Matchers::Contains;
using habcast::AlignmentInput;
using habcast::AlignmentOptions;
using habcast::AlignmentPlan;
using habcast::InputError;
using habcast::RasterGrid;
using habcast::Resampling;
using habcast::UsageError;
using habcast::Window;
using habcast::test::epsg_wkt;
using habcast::test::TempFolder;

namespace {

std::size_t at(int row, int column, int width) { return static_cast<std::size_t>(row) * static_cast<std::size_t>(width) + static_cast<std::size_t>(column); }
std::size_t pixels(const RasterGrid& g) { return at(g.height, 0, g.width); }

/// A geographic (EPSG:4326) raster, 0.01 degree pixels over 3 to 1.5 degrees west, 42.5 to 41.5
/// north (about 830 m x 1110 m pixels), with a smooth field and a block of nodata.
RasterGrid geographic_grid() {
  RasterGrid g;
  g.width = 150;
  g.height = 100;
  g.geotransform = {-3.0, 0.01, 0.0, 42.5, 0.0, -0.01};
  g.has_geotransform = true;
  g.crs_wkt = epsg_wkt(4326);
  return g;
}

void write_continuous(const std::string& path, const RasterGrid& grid) {
  std::vector<float> values(pixels(grid));
  for (int r = 0; r < grid.height; ++r)
    for (int c = 0; c < grid.width; ++c)
      values[at(r, c, grid.width)] =
          static_cast<float>(std::sin(c / 7.0) * 50 + std::cos(r / 5.0) * 30 + c * 0.3);
  for (int r = 40; r < std::min(45, grid.height); ++r)
    for (int c = 60; c < std::min(70, grid.width); ++c) values[at(r, c, grid.width)] = -9999.0f;
  habcast::test::write_geotiff(path, grid, GDT_Float32, values,
                               [](GDALDataset& ds) { ds.GetRasterBand(1)->SetNoDataValue(-9999.0); },
                               {"TILED=YES", "BLOCKXSIZE=64", "BLOCKYSIZE=64"});
}

void write_classes(const std::string& path, const RasterGrid& grid) {
  std::vector<std::uint8_t> values(pixels(grid));
  for (int r = 0; r < grid.height; ++r)
    for (int c = 0; c < grid.width; ++c)
      values[at(r, c, grid.width)] = static_cast<std::uint8_t>(1 + ((c / 3) * 7 + (r / 4) * 3 + c * r % 5) % 6);
  habcast::test::write_geotiff(path, grid, GDT_Byte, values, [](GDALDataset& ds) { ds.GetRasterBand(1)->SetNoDataValue(0); });
}

/// A north-up target grid in `epsg` with `pixel` size.
RasterGrid target_grid(int epsg, double x0, double y0, double pixel, int width, int height) {
  RasterGrid g;
  g.width = width;
  g.height = height;
  g.geotransform = {x0, pixel, 0.0, y0, 0.0, -pixel};
  g.has_geotransform = true;
  OGRSpatialReference srs;
  srs.importFromEPSG(epsg);
  const char* const options[] = {"FORMAT=WKT2_2019", nullptr};
  char* wkt = nullptr;
  srs.exportToWkt(&wkt, options);
  g.crs_wkt = wkt;
  CPLFree(wkt);
  g.crs_name = srs.GetName();
  return g;
}

const char* gdal_name(Resampling m) {
  switch (m) {
    case Resampling::nearest: return "near";
    case Resampling::bilinear: return "bilinear";
    case Resampling::cubic: return "cubic";
    case Resampling::average: return "average";
    case Resampling::mode: return "mode";
  }
  return "near";
}

/// What gdalwarp makes of `path` on `target`: -t_srs, -te, -ts, -r, -ot Float64, -dstnodata nan,
/// -et 0.125 (its default, stated), read back as doubles (NaN = no value).
std::vector<double> gdalwarp(const std::string& path, const RasterGrid& target, Resampling method, double et = 0.0) {
  const auto& gt = target.geotransform;
  const std::vector<std::string> args = {"-of", "MEM", "-t_srs", target.crs_wkt, "-te", std::to_string(gt[0]),
                                         std::to_string(gt[3] + gt[5] * target.height), std::to_string(gt[0] + gt[1] * target.width),
                                         std::to_string(gt[3]), "-ts", std::to_string(target.width), std::to_string(target.height),
                                         "-r", gdal_name(method), "-ot", "Float64", "-dstnodata", "nan", "-et", std::to_string(et)};
  // -te in text loses digits; the tests use grids whose corners print exactly (whole metres).
  std::vector<char*> argv;
  for (const std::string& a : args) argv.push_back(const_cast<char*>(a.c_str()));
  argv.push_back(nullptr);
  GDALWarpAppOptions* options = GDALWarpAppOptionsNew(argv.data(), nullptr);
  REQUIRE(options != nullptr);
  GDALDatasetH source = GDALOpen(path.c_str(), GA_ReadOnly);
  REQUIRE(source != nullptr);
  int usage_error = 0;
  GDALDatasetH warped = GDALWarp("", nullptr, 1, &source, options, &usage_error);
  GDALWarpAppOptionsFree(options);
  REQUIRE(warped != nullptr);
  std::vector<double> values(pixels(target));
  REQUIRE(GDALRasterIO(GDALGetRasterBand(warped, 1), GF_Read, 0, 0, target.width, target.height, values.data(),
                       target.width, target.height, GDT_Float64, 0, 0) == CE_None);
  GDALClose(warped);
  GDALClose(source);
  return values;
}

/// What habcast's warped source delivers on `target`, read in windows of `edge` pixels.
std::vector<double> habcast_aligned(const std::string& path, const RasterGrid& target, Resampling method, int edge,
                                    std::int64_t* missing = nullptr, double et = 0.0) {
  habcast::WarpedCovariateSource source(path, 1, target, method, et);
  std::vector<double> values(pixels(target));
  std::int64_t without = 0;
  for (const Window& w : habcast::block_windows(target.width, target.height, edge, edge)) {
    std::vector<double> block(static_cast<std::size_t>(w.pixels()));
    std::vector<std::uint8_t> valid(block.size(), 1);
    without += source.read(w, block.data(), valid.data());
    for (int r = 0; r < w.height; ++r)
      for (int c = 0; c < w.width; ++c) {
        const std::size_t i = at(r, c, w.width);
        CHECK((valid[i] == 0) == std::isnan(block[i]));
        values[at(w.y + r, w.x + c, target.width)] = block[i];
      }
  }
  if (missing) *missing = without;
  return values;
}

/// Bit for bit: the same doubles, and NaN in the same pixels.
void check_identical(const std::vector<double>& ours, const std::vector<double>& gdal) {
  REQUIRE(ours.size() == gdal.size());
  std::size_t differing = 0;
  std::size_t valid = 0;
  double largest = 0.0;
  for (std::size_t i = 0; i < ours.size(); ++i) {
    const bool both_nan = std::isnan(ours[i]) && std::isnan(gdal[i]);
    if (!both_nan && std::memcmp(&ours[i], &gdal[i], sizeof(double)) != 0) {
      if (differing < 3) UNSCOPED_INFO("pixel " << i << ": ours " << ours[i] << ", gdalwarp " << gdal[i]);
      ++differing;
      largest = std::max(largest, std::isnan(ours[i]) != std::isnan(gdal[i]) ? INFINITY : std::abs(ours[i] - gdal[i]));
    }
    if (!std::isnan(gdal[i])) ++valid;
  }
  INFO("largest difference " << largest);
  CHECK(differing == 0);
  CHECK(valid > ours.size() / 4);  // the comparison covers real values, not only nodata
}

/// Within `tolerance`, NaN in the same pixels.
void check_close(const std::vector<double>& ours, const std::vector<double>& gdal, double tolerance) {
  REQUIRE(ours.size() == gdal.size());
  std::size_t differing = 0;
  for (std::size_t i = 0; i < ours.size(); ++i) {
    if (std::isnan(ours[i]) != std::isnan(gdal[i])) ++differing;
    else if (!std::isnan(ours[i]) && !(std::abs(ours[i] - gdal[i]) <= tolerance)) ++differing;
  }
  CHECK(differing == 0);
}

AlignmentInput input(const std::string& name, const std::string& path, bool categorical = false) {
  AlignmentInput in;
  in.name = name;
  in.path = path;
  in.categorical = categorical;
  return in;
}

std::string plan_error(const std::vector<AlignmentInput>& inputs, const AlignmentOptions& options) {
  try {
    (void)habcast::plan_alignment(inputs, options);
  } catch (const habcast::Error& e) {
    return e.what();
  }
  FAIL("plan_alignment accepted inputs it should refuse");
  return {};
}

}  // namespace

// Bit-identical, not merely close, with every pixel transformed exactly (-et 0, habcast's default):
// the warper computes each target pixel from the transformer and the source pixels around it, and
// habcast calls the same GDAL code with the same options as gdalwarp; only the chunking differs
// (our windows vs gdalwarp's memory-sized chunks), which does not change a bit for nearest, mode,
// average, and bilinear or cubic onto a target at least as fine as the source. Bilinear and cubic
// onto a coarser target widen their kernel by the ratio of target to source pixels, and GDAL 3.6
// takes that ratio from each chunk's source window (GDALWarpKernel::PerformWarp), so there the
// result depends on the chunking, gdalwarp's own too (-wm): compared within a tolerance below.
TEST_CASE("geographic to UTM, finer target: bilinear, cubic and nearest equal gdalwarp bit for bit", "[raster][align]") {
  TempFolder folder;
  const std::string path = folder.file("climate.tif");
  write_continuous(path, geographic_grid());
  // UTM zone 30N, 250 m pixels (about a quarter of the source's): 320 x 400 pixels.
  const RasterGrid target = target_grid(32630, 500000, 4700000, 250, 320, 400);
  for (Resampling m : {Resampling::bilinear, Resampling::cubic, Resampling::nearest}) {
    INFO(habcast::to_string(m));
    const std::vector<double> reference = gdalwarp(path, target, m);
    check_identical(habcast_aligned(path, target, m, 64), reference);
    check_identical(habcast_aligned(path, target, m, 37), reference);  // windows off any block grid
  }
}

TEST_CASE("geographic to UTM, coarser target: average and mode equal gdalwarp bit for bit", "[raster][align]") {
  TempFolder folder;
  const std::string climate = folder.file("climate.tif");
  const std::string classes = folder.file("classes.tif");
  write_continuous(climate, geographic_grid());
  write_classes(classes, geographic_grid());
  // 4 km pixels, about 4 source pixels across.
  const RasterGrid target = target_grid(32630, 500000, 4700000, 4000, 20, 25);
  check_identical(habcast_aligned(climate, target, Resampling::average, 8), gdalwarp(climate, target, Resampling::average));
  // Bilinear widened onto 4 km pixels: within 0.5 (0.25 % of the field's range of about 200),
  // observed up to 0.26 (chunk-dependent kernel scale, see above).
  check_close(habcast_aligned(climate, target, Resampling::bilinear, 8), gdalwarp(climate, target, Resampling::bilinear), 0.5);
  check_identical(habcast_aligned(classes, target, Resampling::mode, 8), gdalwarp(classes, target, Resampling::mode));
  check_identical(habcast_aligned(classes, target, Resampling::nearest, 8), gdalwarp(classes, target, Resampling::nearest));
}

TEST_CASE("same CRS, resolution changed both ways: every method equals gdalwarp bit for bit", "[raster][align]") {
  TempFolder folder;
  RasterGrid source = target_grid(32630, 500000, 4650000, 30, 200, 150);
  const std::string climate = folder.file("terrain.tif");
  const std::string classes = folder.file("cover.tif");
  write_continuous(climate, source);
  write_classes(classes, source);
  const RasterGrid finer = target_grid(32630, 500100, 4649900, 20, 250, 200);   // 20 m, shifted origin
  const RasterGrid coarser = target_grid(32630, 500000, 4650000, 90, 66, 50);  // 3 x 3 source pixels each
  for (Resampling m : {Resampling::bilinear, Resampling::cubic, Resampling::nearest, Resampling::average}) {
    INFO(habcast::to_string(m));
    check_identical(habcast_aligned(climate, finer, m, 64), gdalwarp(climate, finer, m));
  }
  for (Resampling m : {Resampling::nearest, Resampling::average})
    check_identical(habcast_aligned(climate, coarser, m, 16), gdalwarp(climate, coarser, m));
  // 3 x 3 source pixels per target pixel: GDAL's kernel scale is exactly 1/3 in every chunk (it
  // rounds a reciprocal within 0.05 of a whole number), so even the widened kernels agree.
  check_identical(habcast_aligned(climate, coarser, Resampling::bilinear, 16), gdalwarp(climate, coarser, Resampling::bilinear));
  check_identical(habcast_aligned(classes, coarser, Resampling::mode, 16), gdalwarp(classes, coarser, Resampling::mode));
}

TEST_CASE("pixels without a value are counted: outside the source and nodata under the kernel", "[raster][align]") {
  TempFolder folder;
  const std::string path = folder.file("climate.tif");
  write_continuous(path, geographic_grid());
  // Reaches west of the source's 3 degrees W edge (500,000 m E, zone 30N's central meridian).
  const RasterGrid target = target_grid(32630, 450000, 4700000, 1000, 150, 100);
  std::int64_t missing = 0;
  const std::vector<double> ours = habcast_aligned(path, target, Resampling::average, 32, &missing);
  const std::vector<double> reference = gdalwarp(path, target, Resampling::average);
  check_identical(ours, reference);
  std::int64_t nan_count = 0;
  for (double v : reference) nan_count += std::isnan(v) ? 1 : 0;
  CHECK(missing == nan_count);
  CHECK(missing > 0);
}

// Snyder, "Map Projections: A Working Manual" (USGS Professional Paper 1395, 1987), worked example
// of the ellipsoidal transverse Mercator: Clarke 1866, central meridian 75 W, k0 = 0.9996,
// 40 30' N 73 30' W gives x = 127,106.5 m, y = 4,484,124.4 m (values from memory). With UTM's false
// easting of 500,000 m this is NAD27 / UTM zone 18N (EPSG:26718) from NAD27 (EPSG:4267), one datum.
TEST_CASE("a reprojected coordinate matches Snyder's transverse Mercator worked example", "[raster][align]") {
  habcast::ensure_gdal();
  OGRSpatialReference geographic;
  OGRSpatialReference utm;
  geographic.importFromEPSG(4267);
  utm.importFromEPSG(26718);
  geographic.SetAxisMappingStrategy(OAMS_TRADITIONAL_GIS_ORDER);
  utm.SetAxisMappingStrategy(OAMS_TRADITIONAL_GIS_ORDER);
  std::unique_ptr<OGRCoordinateTransformation, habcast::TransformDeleter> t(OGRCreateCoordinateTransformation(&geographic, &utm));
  REQUIRE(t);
  double x = -73.5;
  double y = 40.5;
  REQUIRE(t->Transform(1, &x, &y));
  CHECK(x == Approx(627106.5).margin(0.1));  // Snyder prints 0.1 m
  CHECK(y == Approx(4484124.4).margin(0.1));

  // The same point through habcast's warper: a NAD27 geographic raster whose pixel (12, 7) is
  // centred on 40 30' N 73 30' W, and a one-pixel UTM 18N target centred on Snyder's coordinates,
  // read with nearest: the target pixel must take exactly that source pixel's value.
  TempFolder folder;
  RasterGrid source;
  source.width = 25;
  source.height = 15;
  const double step = 1e-4;  // about 8 x 11 m: Snyder's rounding (0.05 m) is far inside a pixel
  source.geotransform = {-73.5 - 12.5 * step, step, 0.0, 40.5 + 7.5 * step, 0.0, -step};
  source.has_geotransform = true;
  source.crs_wkt = epsg_wkt(4267);
  std::vector<float> codes(pixels(source));
  for (int r = 0; r < source.height; ++r)
    for (int c = 0; c < source.width; ++c) codes[at(r, c, source.width)] = static_cast<float>(c * 100 + r);
  const std::string path = folder.file("nad27.tif");
  habcast::test::write_geotiff(path, source, GDT_Float32, codes);
  const RasterGrid target = target_grid(26718, 627106.5 - 0.5, 4484124.4 + 0.5, 1.0, 1, 1);
  habcast::WarpedCovariateSource warped(path, 1, target, Resampling::nearest, 0.0);
  double value = 0.0;
  std::uint8_t valid = 1;
  warped.read(Window{0, 0, 1, 1}, &value, &valid);
  CHECK(valid == 1);
  CHECK(value == 1207.0);
}

TEST_CASE("the default target grid is the first covariate's, and aligned inputs are not warped", "[raster][align]") {
  TempFolder folder;
  const RasterGrid grid = target_grid(32630, 500000, 4650000, 30, 40, 30);
  write_continuous(folder.file("a.tif"), grid);
  write_classes(folder.file("b.tif"), grid);
  const AlignmentPlan plan =
      habcast::plan_alignment({input("a", folder.file("a.tif")), input("b", folder.file("b.tif"), true)}, {});
  CHECK_FALSE(plan.any_warped());
  CHECK(plan.target.width == 40);
  CHECK_THAT(plan.target_rule, Contains("covariate a") && Contains("first"));
  auto source = habcast::open_covariate_source(plan, 0);
  CHECK(dynamic_cast<habcast::DirectCovariateSource*>(source.get()) != nullptr);
}

TEST_CASE("default resampling: bilinear, average when much coarser, nearest or mode for classes", "[raster][align]") {
  TempFolder folder;
  const RasterGrid fine = target_grid(32630, 500000, 4650000, 30, 200, 150);
  const RasterGrid medium = target_grid(32630, 500000, 4650000, 45, 100, 100);
  const RasterGrid coarse = target_grid(32630, 500000, 4650000, 90, 66, 50);
  write_continuous(folder.file("fine.tif"), fine);
  write_classes(folder.file("fine_classes.tif"), fine);
  write_continuous(folder.file("medium.tif"), medium);
  write_continuous(folder.file("coarse.tif"), coarse);
  const std::vector<AlignmentInput> inputs = {input("target", folder.file("coarse.tif")), input("t", folder.file("fine.tif")),
                                              input("cover", folder.file("fine_classes.tif"), true)};
  const AlignmentPlan onto_coarse = habcast::plan_alignment(inputs, {});
  CHECK(onto_coarse.covariates[1].pixel_ratio == Approx(3.0));
  CHECK(onto_coarse.covariates[1].resampling == Resampling::average);
  CHECK(onto_coarse.covariates[2].resampling == Resampling::mode);
  AlignmentOptions medium_target;
  medium_target.target.template_path = folder.file("medium.tif");
  const AlignmentPlan onto_medium = habcast::plan_alignment(inputs, medium_target);  // 1.5 source pixels across
  CHECK(onto_medium.covariates[1].resampling == Resampling::bilinear);
  CHECK(onto_medium.covariates[2].resampling == Resampling::nearest);
  CHECK(onto_medium.covariates[0].resampling == Resampling::bilinear);  // 90 m onto 45 m: finer
  AlignmentOptions overrides;
  overrides.resampling["t"] = Resampling::cubic;
  CHECK(habcast::plan_alignment(inputs, overrides).covariates[1].resampling == Resampling::cubic);
  AlignmentInput model_key = inputs[1];
  model_key.resampling = Resampling::nearest;
  CHECK(habcast::plan_alignment({inputs[0], model_key}, {}).covariates[1].resampling == Resampling::nearest);
  CHECK(habcast::plan_alignment({inputs[0], model_key}, overrides).covariates[1].resampling == Resampling::cubic);
}

TEST_CASE("alignment refuses what it cannot do, naming the covariate", "[raster][align]") {
  TempFolder folder;
  const RasterGrid utm = target_grid(32630, 500000, 4650000, 30, 40, 30);
  write_continuous(folder.file("a.tif"), utm);
  write_classes(folder.file("cover.tif"), target_grid(32630, 500000, 4650000, 10, 120, 90));
  SECTION("interpolating a categorical covariate") {
    AlignmentOptions o;
    o.resampling["cover"] = Resampling::bilinear;
    const std::string message = plan_error({input("a", folder.file("a.tif")), input("cover", folder.file("cover.tif"), true)}, o);
    CHECK_THAT(message, Contains("cover") && Contains("categorical") && Contains("nearest or mode"));
  }
  SECTION("no overlap at all: both extents named") {
    write_continuous(folder.file("far.tif"), target_grid(32630, 700000, 4650000, 30, 40, 30));
    const std::string message = plan_error({input("a", folder.file("a.tif")), input("far", folder.file("far.tif"))}, {});
    CHECK_THAT(message, Contains("far") && Contains("does not cover the target grid") && Contains("700000") &&
                            Contains("500000"));
  }
  SECTION("a CRS PROJ cannot transform") {
    RasterGrid local = utm;
    local.crs_wkt = "LOCAL_CS[\"site grid\",LOCAL_DATUM[\"site\",32767],UNIT[\"metre\",1],AXIS[\"X\",EAST],AXIS[\"Y\",NORTH]]";
    local.geotransform[1] = 20.0;
    write_continuous(folder.file("local.tif"), local);
    const std::string message = plan_error({input("a", folder.file("a.tif")), input("site", folder.file("local.tif"))}, {});
    CHECK_THAT(message, Contains("site") && Contains("local.tif") && Contains("PROJ cannot transform"));
  }
  SECTION("a raster without CRS off the target grid") {
    RasterGrid plain = utm;
    plain.crs_wkt.clear();
    plain.geotransform[0] += 15.0;
    write_continuous(folder.file("plain.tif"), plain);
    const std::string message = plan_error({input("a", folder.file("a.tif")), input("p", folder.file("plain.tif"))}, {});
    CHECK_THAT(message, Contains("plain.tif") && Contains("no CRS"));
  }
  SECTION("a target grid of zero size") {
    AlignmentOptions o;
    o.target.crs = "EPSG:32630";
    o.target.resolution = {30};
    o.target.bounds = {500000, 4649100, 500000, 4650000};
    CHECK_THROWS_AS(habcast::plan_alignment({input("a", folder.file("a.tif"))}, o), UsageError);
    CHECK_THAT(plan_error({input("a", folder.file("a.tif"))}, o), Contains("zero size"));
  }
  SECTION("bounds that are not a whole number of pixels: two readings, refused") {
    AlignmentOptions o;
    o.target.crs = "EPSG:32630";
    o.target.resolution = {30};
    o.target.bounds = {500000, 4649100, 500100, 4650000};
    CHECK_THAT(plan_error({input("a", folder.file("a.tif"))}, o), Contains("not a whole number"));
  }
  SECTION("two ways of stating the target") {
    AlignmentOptions o;
    o.target.covariate = "a";
    o.target.template_path = folder.file("a.tif");
    CHECK_THAT(plan_error({input("a", folder.file("a.tif"))}, o), Contains("more than once"));
  }
  SECTION("a --grid-of that names no covariate") {
    AlignmentOptions o;
    o.target.covariate = "elevation";
    CHECK_THAT(plan_error({input("a", folder.file("a.tif"))}, o), Contains("elevation") && Contains("covariates are a"));
  }
}

TEST_CASE("a stated target grid (CRS, resolution, bounds) is built exactly", "[raster][align]") {
  TempFolder folder;
  write_continuous(folder.file("a.tif"), geographic_grid());
  AlignmentOptions o;
  o.target.crs = "EPSG:32630";
  o.target.resolution = {500, 250};
  o.target.bounds = {520000, 4600000, 570000, 4650000};
  const AlignmentPlan plan = habcast::plan_alignment({input("a", folder.file("a.tif"))}, o);
  CHECK(plan.target.width == 100);
  CHECK(plan.target.height == 200);
  CHECK(plan.target.geotransform == std::array<double, 6>{520000, 500, 0, 4650000, 0, -250});
  CHECK(plan.target.crs_name == "WGS 84 / UTM zone 30N");
  CHECK(plan.covariates[0].warped);
}

// With GDAL's approximate transformer (gdalwarp's default -et 0.125, habcast's --warp-error) a
// target pixel may be sampled up to 0.125 source pixels from where the exact transform puts it,
// and where exactly depends on the chunk: the values then differ from the exact ones by at most
// that shift times the field's slope (here under 16 per source pixel: 50/7 + 30/5 + 0.3 ~ 13.4).
TEST_CASE("with the approximate transformer bilinear values stay within 0.125 source pixels' slope", "[raster][align]") {
  TempFolder folder;
  const std::string path = folder.file("climate.tif");
  write_continuous(path, geographic_grid());
  const RasterGrid target = target_grid(32630, 500000, 4700000, 250, 320, 400);
  std::int64_t missing = 0;
  const std::vector<double> approximate = habcast_aligned(path, target, Resampling::bilinear, 64, &missing, 0.125);
  const std::vector<double> exact = gdalwarp(path, target, Resampling::bilinear, 0.0);
  std::size_t beyond = 0;
  std::size_t compared = 0;
  for (std::size_t i = 0; i < exact.size(); ++i) {
    if (std::isnan(exact[i]) || std::isnan(approximate[i])) continue;
    ++compared;
    if (!(std::abs(exact[i] - approximate[i]) <= 0.125 * 16.0)) ++beyond;
  }
  CHECK(compared > exact.size() / 2);
  CHECK(beyond == 0);
}

// A target 20 source pixels across: each window is warped in pieces of 51 target pixels (1024 / 20)
// so that no source read exceeds about 1024 x 1024 pixels; average and mode do not depend on the
// pieces, so the result is still gdalwarp's, bit for bit.
TEST_CASE("a much coarser target is warped in pieces with the same values as gdalwarp", "[raster][align]") {
  TempFolder folder;
  const RasterGrid source = target_grid(32630, 500000, 4650000, 30, 1200, 1100);
  const std::string climate = folder.file("fine.tif");
  const std::string classes = folder.file("fine_classes.tif");
  write_continuous(climate, source);
  write_classes(classes, source);
  const RasterGrid coarse = target_grid(32630, 500000, 4650000, 600, 60, 55);
  auto piecewise = [&](const std::string& path, Resampling m) {
    habcast::WarpedCovariateSource warped(path, 1, coarse, m, 0.0, 20.0);
    std::vector<double> values(pixels(coarse));
    std::vector<std::uint8_t> valid(values.size(), 1);
    warped.read(Window{0, 0, coarse.width, coarse.height}, values.data(), valid.data());
    return values;
  };
  check_identical(piecewise(climate, Resampling::average), gdalwarp(climate, coarse, Resampling::average));
  check_identical(piecewise(classes, Resampling::mode), gdalwarp(classes, coarse, Resampling::mode));
}
