// `habcast fit` (and `evaluate --model` after it) as a practitioner runs it: class codes are never
// fitted as a number by accident, projected coordinates read as degrees are named, every dropped
// point is identified, classes without training points are named, the sampling rule travels with
// the model, and evaluating on the training sites is warned about.
#include <catch2/catch.hpp>
#include <gdal.h>

#include <cmath>
#include <filesystem>
#include <nlohmann/json.hpp>

#include "core/model/model_file.hpp"
#include "evaluate/score_source.hpp"
#include "test_support.hpp"

using namespace habcast;
namespace fs = std::filesystem;

namespace {

// A 20 x 20 UTM grid (x 383000..385000, y 5105000..5107000, 100 m pixels): "elev" = 100 + column +
// 3 row (pixel (0, 0) nodata), and a Byte land-cover raster with codes 1 (columns 0-4), 2 (5-9),
// 3 (10-14) and 5 (15-19, a quarter of the grid) named heath, bog, woodland, urban.
struct PracticeScene {
  test::TempDir dir{"fit-practice"};
  std::string elev = dir.file("elev.tif");
  std::string landcover = dir.file("landcover.tif");
  std::string model = dir.file("m.toml");
  std::string csv = dir.file("p.csv");
  PracticeScene() {
    test::GridSpec g;
    g.width = 20;
    g.height = 20;
    g.origin_x = 383000.0;
    g.origin_y = 5107000.0;
    g.epsg = 32630;
    test::write_raster(elev, g, "Float32", [](int row, int col) { return row == 0 && col == 0 ? -9999.0 : 100.0 + col + 3.0 * row; },
                       true, -9999.0);
    test::write_raster(landcover, g, "Byte", [](int, int col) { return col < 5 ? 1 : col < 10 ? 2 : col < 15 ? 3 : 5; }, true, 255);
    GDALDatasetH ds = GDALOpen(landcover.c_str(), GA_Update);
    REQUIRE(ds != nullptr);
    const char* names[] = {"", "heath", "bog", "woodland", "", "urban", nullptr};
    GDALSetRasterCategoryNames(GDALGetRasterBand(ds, 1), const_cast<char**>(names));
    GDALClose(ds);
  }
  // Points at pixel centres of columns 2-14 (never in the urban class), rows 1-6, with a response
  // that no covariate separates.
  static std::string points(const std::string& extra = "") {
    std::string text = "x,y,obs\n";
    for (int c = 2; c <= 14; ++c)
      for (int r = 1; r <= 6; ++r) text += row(c, r, (c * 7 + r * 13) % 5 < 2 ? "1" : "0");
    return text + extra;
  }
  static std::string row(int c, int r, const std::string& y) {
    return std::to_string(383050 + 100 * c) + "," + std::to_string(5106950 - 100 * r) + "," + y + "\n";
  }
  int fit(const std::string& text, std::vector<std::string> extra, std::string* out, std::string* err) {
    test::write_text(csv, text);
    std::vector<std::string> args{"fit", csv, "-c", "elev=" + elev, "-c", "lc=" + landcover, "-o", model, "--overwrite"};
    args.insert(args.end(), extra.begin(), extra.end());
    return test::run_cli(args, out, err);
  }
};

}  // namespace

TEST_CASE("fit refuses a raster with a category table that is not declared categorical", "[fit]") {
  PracticeScene s;
  std::string out, err;
  CHECK(s.fit(PracticeScene::points(), {"--crs", "EPSG:32630", "-f", "obs ~ elev + lc"}, &out, &err) == 3);
  INFO(err);
  CHECK(err.find(s.landcover) != std::string::npos);
  CHECK(err.find("category table (1 = heath, 2 = bog, 3 = woodland, 5 = urban)") != std::string::npos);
  CHECK(err.find("--categorical lc") != std::string::npos);
  CHECK_FALSE(fs::exists(s.model));
  // Declared continuous on purpose, it is fitted as a number.
  CHECK(s.fit(PracticeScene::points(), {"--crs", "EPSG:32630", "-f", "obs ~ elev + lc", "--continuous", "lc"}, &out, &err) == 0);
  CHECK(fs::exists(s.model));
  // Both declarations at once cannot both be meant.
  CHECK(s.fit(PracticeScene::points(), {"--crs", "EPSG:32630", "-f", "obs ~ elev + lc", "--continuous", "lc", "--categorical", "lc"},
              &out, &err) == 2);
}

TEST_CASE("fit warns when an integer raster with few values is fitted as a number", "[fit]") {
  PracticeScene s;
  const std::string codes = s.dir.file("codes.tif");
  test::GridSpec g;
  g.width = 20;
  g.height = 20;
  g.origin_x = 383000.0;
  g.origin_y = 5107000.0;
  test::write_raster(codes, g, "Int16", [](int, int col) { return col % 3 + 1; });
  std::string out, err;
  test::write_text(s.csv, PracticeScene::points());
  REQUIRE(test::run_cli({"fit", s.csv, "--crs", "EPSG:32630", "-c", "elev=" + s.elev, "-c", "soil=" + codes, "-f", "obs ~ elev + soil",
                         "-o", s.model},
                        &out, &err) == 0);
  INFO(err);
  CHECK(err.find("covariate \"soil\"") != std::string::npos);
  CHECK(err.find("takes only 3 distinct whole values at the points (1, 2, 3)") != std::string::npos);
  CHECK(err.find("--categorical soil") != std::string::npos);
}

TEST_CASE("fit names classes of a categorical raster that have no training point, with their share", "[fit]") {
  PracticeScene s;
  std::string out, err;
  REQUIRE(s.fit(PracticeScene::points(), {"--crs", "EPSG:32630", "-f", "obs ~ elev + lc", "--categorical", "lc", "--json"}, &out,
                &err) == 0);
  INFO(err);
  // Urban (code 5) covers columns 15-19: 100 of the 400 pixels.
  CHECK(err.find("urban (code 5) 25 %") != std::string::npos);
  CHECK(err.find("predict gives their pixels no prediction (nodata)") != std::string::npos);
  const auto j = nlohmann::json::parse(out);
  REQUIRE(j["untrained_classes"].size() == 1);
  CHECK(j["untrained_classes"][0]["code"] == 5);
  CHECK(j["untrained_classes"][0]["pixels"] == 100);
  CHECK(j["untrained_classes"][0]["share"].get<double>() == 0.25);
}

TEST_CASE("Projected coordinates read as longitude/latitude are named, with the option that sets the CRS", "[fit]") {
  PracticeScene s;
  std::string out, err;
  // No --crs: a CSV is read as EPSG:4326, and these are UTM metres.
  CHECK(s.fit(PracticeScene::points(), {"-f", "obs ~ elev"}, &out, &err) == 3);
  INFO(err);
  CHECK(err.find("They look projected") != std::string::npos);
  CHECK(err.find("--crs") != std::string::npos);
  CHECK(err.find("the default for a CSV without --crs") != std::string::npos);
  CHECK(err.find("inf") == std::string::npos);
  // One impossible line among longitudes and latitudes is named by its line.
  CHECK(s.fit("x,y,obs\n-3.1,46.1,1\n383050,5106950,0\n-3.2,46.2,0\n", {"-f", "obs ~ elev"}, &out, &err) == 3);
  CHECK(err.find("p.csv:3: x 383050, y 5106950 lies outside any longitude/latitude") != std::string::npos);
  // The evaluation side says the same.
  CHECK(test::run_cli({"evaluate", s.csv, "--prediction", s.elev, "--response", "obs"}, &out, &err) == 3);
  CHECK(err.find("--crs") != std::string::npos);
}

TEST_CASE("fit identifies every point it drops, with the reason, and the separation error names the line", "[fit]") {
  PracticeScene s;
  const std::string extra = PracticeScene::row(0, 0, "1") + "390000,5106000,0\n" + PracticeScene::row(3, 3, "");
  std::string out, err;
  REQUIRE(s.fit(PracticeScene::points(extra), {"--crs", "EPSG:32630", "-f", "obs ~ elev"}, &out, &err) == 0);
  INFO(out);
  // Header + 78 points: the extra lines are 80, 81 and 82.
  CHECK(out.find("Not used: " + s.csv + ":80 (nodata in covariate \"elev\"); " + s.csv + ":81 (outside the raster grid); " + s.csv +
                 ":82 (no value in the response column \"obs\").") != std::string::npos);
  REQUIRE(s.fit(PracticeScene::points(extra), {"--crs", "EPSG:32630", "-f", "obs ~ elev", "--json"}, &out, &err) == 0);
  const auto j = nlohmann::json::parse(out);
  REQUIRE(j["points"]["dropped"].size() == 3);
  CHECK(j["points"]["dropped"][1]["where"] == s.csv + ":81");
  CHECK(j["points"]["dropped"][1]["reason"] == "outside the raster grid");
  // Separated data: the message names the first point at the boundary by file and line.
  std::string text = "x,y,obs\n";
  for (int k = 0; k < 10; ++k) text += PracticeScene::row(k + 2, 4, k < 5 ? "0" : "1");
  CHECK(s.fit(text, {"--crs", "EPSG:32630", "-f", "obs ~ elev"}, &out, &err) == 3);
  CHECK(err.find("separated") != std::string::npos);
  CHECK(err.find("(first: " + s.csv + ":") != std::string::npos);
}

TEST_CASE("The sampling rule is recorded in the model file and evaluate --model samples the same way", "[fit][evaluate]") {
  PracticeScene s;
  std::string out, err;
  REQUIRE(s.fit(PracticeScene::points(), {"--crs", "EPSG:32630", "-f", "obs ~ elev", "--bilinear"}, &out, &err) == 0);
  CHECK(test::read_text(s.model).find("sampling = \"bilinear\"") != std::string::npos);
  const ModelSpec spec = read_model_file(s.model);
  REQUIRE(spec.sampling == PointSampling::bilinear);
  // A point a quarter pixel right of and below the centre of pixel (column 5, row 5): elev is
  // linear, so bilinear interpolation gives 100 + 5.25 + 3 x 5.25 = 121, the pixel 120.
  const auto source = ScoreSource::from_model(s.model, {});
  const std::vector<double> x{383000.0 + 100.0 * 5.75}, y{5107000.0 - 100.0 * 5.75};
  const std::vector<double> p = source->at_points(x, y, {1}, nullptr);
  const auto predicted = [&](double elev) {
    const double z = (elev - spec.covariates[0].center) / spec.covariates[0].scale;
    return 1.0 / (1.0 + std::exp(-(spec.estimates[0] + spec.estimates[1] * z)));
  };
  CHECK(p[0] == Approx(predicted(121.0)).epsilon(1e-6));
  CHECK(std::fabs(p[0] - predicted(120.0)) > 1e-4);
  // Without --bilinear the file says "pixel", and so do exporters' files that lack the key.
  REQUIRE(s.fit(PracticeScene::points(), {"--crs", "EPSG:32630", "-f", "obs ~ elev"}, &out, &err) == 0);
  CHECK(read_model_file(s.model).sampling == PointSampling::pixel);
  // A value other than pixel or bilinear is refused with its line.
  std::string text = test::read_text(s.model);
  text.replace(text.find("sampling = \"pixel\""), 18, "sampling = \"nearest\"");
  test::write_text(s.model, text);
  CHECK_THROWS_WITH(read_model_file(s.model), Catch::Contains("m.toml:") && Catch::Contains("\"pixel\"") &&
                                                  Catch::Contains("\"bilinear\""));
}

TEST_CASE("evaluate warns when its points fall on the model's training sites, with the share and the rule", "[evaluate]") {
  PracticeScene s;
  std::string out, err;
  REQUIRE(s.fit(PracticeScene::points(), {"--crs", "EPSG:32630", "-f", "obs ~ elev"}, &out, &err) == 0);
  REQUIRE(test::run_cli({"evaluate", s.csv, "--model", s.model, "--crs", "EPSG:32630", "--response", "obs", "--json"}, &out, &err) == 0);
  INFO(err);
  CHECK(err.find("78 of 78 evaluation points (100 %") != std::string::npos);
  CHECK(err.find("same pixel as a training site") != std::string::npos);
  const auto j = nlohmann::json::parse(out);
  CHECK(j["training_overlap"]["points"] == 78);
  CHECK(j["training_overlap"]["share"].get<double>() == 1.0);
  CHECK(j["training_overlap"]["rule"].get<std::string>().find("same pixel") != std::string::npos);
  // A prediction raster names its model file in its metadata: the check follows it.
  const std::string maps = s.dir.file("maps");
  REQUIRE(test::run_cli({"predict", s.model, "-o", maps}, &out, &err) == 0);
  REQUIRE(test::run_cli({"evaluate", s.csv, "--prediction", maps + "/suitability.tif", "--crs", "EPSG:32630", "--response", "obs",
                         "--json"},
                        &out, &err) == 0);
  CHECK(nlohmann::json::parse(out)["training_overlap"]["points"] == 78);
  CHECK(err.find("same pixel as a training site") != std::string::npos);
  // Independent points elsewhere on the grid raise no such warning.
  const std::string other = s.dir.file("other.csv");
  std::string text = "x,y,obs\n";
  for (int c = 2; c <= 14; ++c) text += PracticeScene::row(c, 12, c % 2 ? "1" : "0");
  test::write_text(other, text);
  REQUIRE(test::run_cli({"evaluate", other, "--model", s.model, "--crs", "EPSG:32630", "--response", "obs", "--json"}, &out, &err) == 0);
  CHECK(err.find("training site") == std::string::npos);
  CHECK(nlohmann::json::parse(out)["training_overlap"]["points"] == 0);
}

TEST_CASE("fit follows R's default glm() convention unless --tight asks for the tighter fit", "[fit]") {
  PracticeScene s;
  std::string out, err;
  REQUIRE(s.fit(PracticeScene::points(), {"--crs", "EPSG:32630", "-f", "obs ~ elev", "--json"}, &out, &err) == 0);
  const auto r = nlohmann::json::parse(out);
  CHECK(r["model"]["stopping_rule"] == "|dev - dev_old| / (|dev| + 0.1) < 1e-08");
  CHECK(r["model"]["covariance"].get<std::string>().find("last iteration") != std::string::npos);
  REQUIRE(s.fit(PracticeScene::points(), {"--crs", "EPSG:32630", "-f", "obs ~ elev", "--tight"}, &out, &err) == 0);
  CHECK(out.find("tight fit: stopped at a relative deviance change below 1e-10, standard errors at the estimate") != std::string::npos);
}
