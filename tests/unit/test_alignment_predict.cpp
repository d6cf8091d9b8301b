// predict with covariates on three grids (UTM 100 m, geographic ~500 m, UTM 50 m classes): every
// output pixel is the model applied to what GDAL's own warper (GDALWarp(), as gdalwarp) makes of
// each covariate on the target grid; outputs are byte-identical at any thread count; the report
// and the outputs' metadata say how each covariate was aligned; virtual paths (VRT, /vsizip/) work.
#include <cpl_vsi.h>
#include <gdal_utils.h>

#include <catch2/catch.hpp>
#include <cmath>
#include <cstring>
#include <filesystem>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "raster/gdal_session.hpp"
#include "test_support.hpp"

namespace {

using Catch::Matchers::Contains;
using habcast::test::GridSpec;
using habcast::test::TempDir;

const char* kModel =
    "habcast_model = 1\n[model]\nfamily = \"gaussian\"\n"
    "[covariates.elev]\nraster = \"elev.tif\"\n"
    "[covariates.temp]\nraster = \"temp.tif\"\n"
    "[covariates.cover]\ntype = \"categorical\"\nlevels = [{code = 1, name = \"open\"}, {code = 2, name = \"forest\"}]\n"
    "raster = \"cover.tif\"\n"
    "[coefficients]\nterms = [\"(Intercept)\", \"elev\", \"temp\", \"cover[forest]\"]\n"
    "estimates = [1.0, 0.01, 0.5, 0.25]\n";

struct MixedScene {
  TempDir dir{"align-predict"};
  std::string model = dir.file("model.toml");
  GridSpec target{64, 48};  // UTM 30N, 100 m, origin 500000 E 4000000 N (about 3 W, 36.1 N)
  MixedScene() {
    habcast::test::write_raster(dir.file("elev.tif"), target, "Float32", [](int r, int c) { return 300.0 + r * 7 + c * 3; });
    GridSpec geo{40, 40};
    geo.origin_x = -3.05;
    geo.origin_y = 36.2;
    geo.pixel = 0.005;
    geo.epsg = 4326;
    habcast::test::write_raster(dir.file("temp.tif"), geo, "Float32",
                                [](int r, int c) { return 12.0 + std::sin(c * 0.4) * 3 + std::cos(r * 0.3) * 2; });
    GridSpec fine{128, 96};
    fine.pixel = 50.0;
    habcast::test::write_raster(dir.file("cover.tif"), fine, "Byte", [](int r, int c) { return ((r / 3 + c / 5) % 3 == 0) ? 2.0 : 1.0; },
                                true, 0.0);
    habcast::test::write_text(model, kModel);
  }
};

/// GDALWarp() onto the scene's target grid: 64 x 48 pixels of 100 m in EPSG:32630.
std::vector<double> warped_like_gdalwarp(const std::string& path, const char* method) {
  habcast::ensure_gdal();
  std::vector<std::string> args{"-of", "MEM", "-t_srs", "EPSG:32630", "-te", "500000", "3995200", "506400", "4000000",
                                "-ts", "64", "48", "-r", method, "-ot", "Float64", "-dstnodata", "nan", "-et", "0"};
  std::vector<char*> argv;
  for (std::string& a : args) argv.push_back(a.data());
  argv.push_back(nullptr);
  GDALWarpAppOptions* options = GDALWarpAppOptionsNew(argv.data(), nullptr);
  GDALDatasetH source = GDALOpen(path.c_str(), GA_ReadOnly);
  REQUIRE(source != nullptr);
  GDALDatasetH out = GDALWarp("", nullptr, 1, &source, options, nullptr);
  GDALWarpAppOptionsFree(options);
  REQUIRE(out != nullptr);
  std::vector<double> values(64 * 48);
  REQUIRE(GDALRasterIO(GDALGetRasterBand(out, 1), GF_Read, 0, 0, 64, 48, values.data(), 64, 48, GDT_Float64, 0, 0) == CE_None);
  GDALClose(out);
  GDALClose(source);
  return values;
}

std::string metadata_item(const std::string& path, const char* key) {
  GDALDatasetH ds = GDALOpen(path.c_str(), GA_ReadOnly);
  REQUIRE(ds != nullptr);
  const char* value = GDALGetMetadataItem(ds, key, nullptr);
  std::string text = value ? value : "";
  GDALClose(ds);
  return text;
}

}  // namespace

TEST_CASE("predict aligns covariates on other grids exactly as gdalwarp would, at any thread count", "[predict][align]") {
  MixedScene s;
  std::vector<std::string> first_bytes;
  for (const char* threads : {"1", "2", "3"}) {
    const std::string out = s.dir.file(std::string("out") + threads);
    std::string err;
    REQUIRE(habcast::test::run_cli({"predict", s.model, "-o", out, "--threads", threads, "--block-size", "16", "-q"}, nullptr, &err) == 0);
    // The caution that resampling a coarse covariate adds no detail (temp: about 450 m onto 100 m).
    CHECK_THAT(err, Contains("covariate temp") && Contains("times as wide as the target grid's") && Contains("adds no detail"));
    const std::string bytes = habcast::test::read_text(out + "/suitability.tif");
    if (first_bytes.empty()) first_bytes.push_back(bytes);
    INFO("threads " << threads);
    CHECK(bytes == first_bytes.front());
  }
  const std::string out = s.dir.file("out1");
  const std::vector<double> elev = habcast::test::read_band(s.dir.file("elev.tif"));
  const std::vector<double> temp = warped_like_gdalwarp(s.dir.file("temp.tif"), "bilinear");
  const std::vector<double> cover = warped_like_gdalwarp(s.dir.file("cover.tif"), "mode");
  const std::vector<double> suitability = habcast::test::read_band(out + "/suitability.tif");
  std::size_t checked = 0;
  for (std::size_t i = 0; i < suitability.size(); ++i) {
    REQUIRE(!std::isnan(temp[i]));
    const double expected = 1.0 + 0.01 * elev[i] + 0.5 * temp[i] + (cover[i] == 2.0 ? 0.25 : 0.0);
    // Float32 output of values near 15: half an ulp is below 1e-6.
    CHECK(suitability[i] == Approx(expected).margin(2e-6));
    ++checked;
  }
  CHECK(checked == 64 * 48);

  const auto report = nlohmann::json::parse(habcast::test::read_text(out + "/report.json"));
  const auto& alignment = report["alignment"];
  CHECK_THAT(alignment["target_grid"]["rule"].get<std::string>(), Contains("covariate elev") && Contains("first"));
  CHECK(alignment["covariates"][0]["resampling"].is_null());
  CHECK(alignment["covariates"][1]["resampling"] == "bilinear");
  CHECK(alignment["covariates"][1]["crs"] == "WGS 84");
  CHECK(alignment["covariates"][2]["resampling"] == "mode");  // 50 m classes onto 100 m: coarsening by 2
  CHECK(alignment["covariates"][2]["pixel_ratio"].get<double>() == Approx(2.0));
  CHECK(alignment["covariates"][1]["share_without_value"] == 0.0);
  CHECK_THAT(metadata_item(out + "/suitability.tif", "HABCAST_COVARIATE_TEMP"),
             Contains("temp.tif") && Contains("bilinear") && Contains("WGS 84") && Contains("0 % of target pixels"));
  CHECK_THAT(metadata_item(out + "/suitability.tif", "HABCAST_TARGET_GRID"), Contains("64 x 48 pixels"));
}

TEST_CASE("a covariate covering part of the target is a warning with its share, and its gaps are nodata", "[predict][align]") {
  MixedScene s;
  GridSpec half{64, 24};  // the northern half of the target only
  habcast::test::write_raster(s.dir.file("elev_half.tif"), half, "Float32", [](int r, int c) { return 300.0 + r * 7 + c * 3; });
  std::string err;
  std::string out_text;
  REQUIRE(habcast::test::run_cli({"predict", s.model, "-o", s.dir.file("out"), "--grid-like", s.dir.file("cover.tif"), "-c",
                                  "elev=" + s.dir.file("elev_half.tif"), "--log-format", "json"},
                                 &out_text, &err) == 0);
  CHECK_THAT(err, Contains("covariate elev") && Contains("covers only part of the target grid") && Contains("50 %"));
  const auto report = nlohmann::json::parse(habcast::test::read_text(s.dir.file("out") + "/report.json"));
  CHECK(report["alignment"]["covariates"][0]["coverage"] == "partial");
  CHECK(report["alignment"]["covariates"][0]["share_without_value"].get<double>() == Approx(0.5));
  CHECK(report["pixels"]["predicted"] == 128 * 48);
}

TEST_CASE("covariates read through a VRT and /vsizip/ give the same prediction as the files", "[predict][align]") {
  MixedScene s;
  REQUIRE(habcast::test::run_cli({"predict", s.model, "-o", s.dir.file("plain"), "-q"}) == 0);
  // A VRT of temp.tif, made by GDAL itself, and cover.tif inside a zip written through GDAL's /vsizip/.
  {
    const char* vrt_args[] = {"-of", "VRT", nullptr};
    GDALTranslateOptions* options = GDALTranslateOptionsNew(const_cast<char**>(vrt_args), nullptr);
    GDALDatasetH source = GDALOpen(s.dir.file("temp.tif").c_str(), GA_ReadOnly);
    GDALDatasetH vrt = GDALTranslate(s.dir.file("temp.vrt").c_str(), source, options, nullptr);
    GDALTranslateOptionsFree(options);
    REQUIRE(vrt != nullptr);
    GDALClose(vrt);
    GDALClose(source);
    const std::string bytes = habcast::test::read_text(s.dir.file("cover.tif"));
    VSILFILE* zip = VSIFOpenL(("/vsizip/" + s.dir.file("cover.zip") + "/layers/cover.tif").c_str(), "wb");
    REQUIRE(zip != nullptr);
    REQUIRE(VSIFWriteL(bytes.data(), 1, bytes.size(), zip) == bytes.size());
    VSIFCloseL(zip);
  }
  REQUIRE(habcast::test::run_cli({"predict", s.model, "-o", s.dir.file("virtual"), "-q", "-c", "temp=" + s.dir.file("temp.vrt"), "-c",
                                  "cover=/vsizip/" + s.dir.file("cover.zip") + "/layers/cover.tif"}) == 0);
  const std::vector<double> plain = habcast::test::read_band(s.dir.file("plain") + "/suitability.tif");
  const std::vector<double> virtual_paths = habcast::test::read_band(s.dir.file("virtual") + "/suitability.tif");
  REQUIRE(plain.size() == virtual_paths.size());
  CHECK(std::memcmp(plain.data(), virtual_paths.data(), plain.size() * sizeof(double)) == 0);
}

TEST_CASE("alignment errors in predict leave no output", "[predict][align]") {
  MixedScene s;
  std::string err;
  const std::string out = s.dir.file("out");
  SECTION("bounds that are not a whole number of pixels") {
    CHECK(habcast::test::run_cli({"predict", s.model, "-o", out, "-q", "--grid-crs", "EPSG:32630", "--grid-resolution", "30",
                                  "--grid-bounds", "500000,3995200,506400,4000000"},
                                 nullptr, &err) == 2);
    CHECK_THAT(err, Contains("not a whole number"));
  }
  SECTION("a CRS GDAL does not know") {
    CHECK(habcast::test::run_cli({"predict", s.model, "-o", out, "-q", "--grid-crs", "EPSG:999999", "--grid-resolution", "100",
                                  "--grid-bounds", "500000,3995200,506400,4000000"},
                                 nullptr, &err) == 2);
    CHECK_THAT(err, Contains("EPSG:999999"));
  }
  SECTION("resampling named wrongly in the model file") {
    std::string text = kModel;
    text.replace(text.find("raster = \"temp.tif\""), 19, "raster = \"temp.tif\"\nresampling = \"smooth\"");
    habcast::test::write_text(s.model, text);
    CHECK(habcast::test::run_cli({"predict", s.model, "-o", out, "-q"}, nullptr, &err) == 3);
    CHECK_THAT(err, Contains("model.toml:") && Contains("resampling of \"temp\"") && Contains("smooth"));
  }
  CHECK(habcast::test::list_dir(out).empty());
}

TEST_CASE("scenarios and model sets align covariates on other grids as a single predict does", "[alignment][scenarios]") {
  MixedScene scene;
  // The scenario and the model set need the covariance matrix; the second model of the set is the
  // first under another name, so the set's average is that model's prediction exactly.
  std::string text = std::string(kModel) + "covariance = [[0.04, 0, 0, 0], [0, 1e-6, 0, 0], [0, 0, 0.01, 0], [0, 0, 0, 0.02]]\n";
  text.insert(text.find("[covariates"), "aic = 10\n");  // the last key of [model]
  habcast::test::write_text(scene.model, text);
  const std::string twin = scene.dir.file("twin.toml");
  habcast::test::write_text(twin, habcast::test::read_text(scene.model));
  GridSpec geo{40, 40};
  geo.origin_x = -3.05;
  geo.origin_y = 36.2;
  geo.pixel = 0.005;
  geo.epsg = 4326;
  habcast::test::write_raster(scene.dir.file("temp_warm.tif"), geo, "Float32",
                              [](int r, int c) { return 14.0 + std::sin(c * 0.4) * 3 + std::cos(r * 0.3) * 2; });
  for (const std::vector<std::string>& grid_args : {std::vector<std::string>{}, std::vector<std::string>{"--grid-of", "cover"}}) {
    INFO("grid options: " << (grid_args.empty() ? "default" : grid_args[1]));
    auto run = [&](std::vector<std::string> args, const std::string& out) {
      args.insert(args.end(), {"-o", scene.dir.file(out), "-q", "--overwrite"});
      args.insert(args.end(), grid_args.begin(), grid_args.end());
      std::string o, e;
      const int code = habcast::test::run_cli(args, &o, &e);
      INFO(e);
      REQUIRE(code == 0);
    };
    run({"predict", scene.model}, "single");
    run({"predict", scene.model, "-c", "temp=" + scene.dir.file("temp_warm.tif")}, "single-warm");
    run({"predict", scene.model, "--scenario", "warm:temp=" + scene.dir.file("temp_warm.tif")}, "scenarios");
    run({"predict", scene.model, twin}, "set");
    for (const char* name : {"suitability.tif", "uncertainty.tif"}) {
      INFO(name);
      CHECK(habcast::test::read_band(scene.dir.file("scenarios/baseline/") + name) ==
            habcast::test::read_band(scene.dir.file("single/") + name));
      CHECK(habcast::test::read_band(scene.dir.file("scenarios/warm/") + name) ==
            habcast::test::read_band(scene.dir.file("single-warm/") + name));
    }
    CHECK(habcast::test::read_band(scene.dir.file("set/suitability.tif")) ==
          habcast::test::read_band(scene.dir.file("single/suitability.tif")));
    // The reports say how each raster was aligned: the scenario's temp raster among them.
    const auto report = nlohmann::json::parse(habcast::test::read_text(scene.dir.file("scenarios/scenarios.json")));
    bool warm_listed = false;
    for (const auto& c : report.at("alignment").at("covariates"))
      warm_listed = warm_listed || c.at("source").get<std::string>().find("temp_warm.tif") != std::string::npos;
    CHECK(warm_listed);
    const auto folder = nlohmann::json::parse(habcast::test::read_text(scene.dir.file("scenarios/warm/report.json")));
    CHECK(folder.at("alignment").at("covariates").size() == 3);
  }
}
