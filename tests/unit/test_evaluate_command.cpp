// `habcast evaluate` end to end: metrics from a prediction raster equal the hand-worked numbers,
// the background draw is reproducible, the binary map records its rule, the SVG is written.
#include <catch2/catch.hpp>
#include <filesystem>
#include <nlohmann/json.hpp>

#include "core/base/csv_table.hpp"
#include "raster_test_support.hpp"
#include "test_support.hpp"

using namespace habcast;
namespace fs = std::filesystem;

namespace {

// A 10 x 10 UTM grid whose pixel (row r, column c) holds (r * 10 + c) / 100 as the "prediction";
// pixel (9, 9) is nodata.
struct EvaluateScene {
  test::TempDir dir{"evaluate"};
  std::string prediction = dir.file("suitability.tif");
  EvaluateScene() {
    test::GridSpec g;
    g.width = 10;
    g.height = 10;
    g.origin_x = 383000.0;
    g.origin_y = 5107000.0;
    g.epsg = 32630;
    g.block = 16;
    test::write_raster(prediction, g, "Float64", [](int r, int c) { return r == 9 && c == 9 ? -9999.0 : (r * 10 + c) / 100.0; },
                       true, -9999.0);
  }
  // The centre of the pixel whose value is v (v = 0.00 .. 0.98).
  static std::string at(double v, int observed) {
    const int k = static_cast<int>(std::lround(v * 100));
    return std::to_string(383050 + 100 * (k % 10)) + "," + std::to_string(5106950 - 100 * (k / 10)) + "," +
           std::to_string(observed) + "\n";
  }
};

}  // namespace

TEST_CASE("evaluate reproduces the hand-worked AUC and TSS from a prediction raster", "[evaluate]") {
  // The example of test_evaluate_metrics.cpp on pixels: presences 0.9, 0.8, 0.5, 0.4; absences
  // 0.7, 0.5, 0.3, 0.2, 0.1. By hand: AUC 16.5 / 20 = 0.825; best TSS 0.6 at threshold 0.4.
  EvaluateScene s;
  const std::string csv = s.dir.file("points.csv");
  test::write_text(csv, "x,y,seen\n" + EvaluateScene::at(0.9, 1) + EvaluateScene::at(0.8, 1) + EvaluateScene::at(0.5, 1) + EvaluateScene::at(0.4, 1) +
                            EvaluateScene::at(0.7, 0) + EvaluateScene::at(0.5, 0) + EvaluateScene::at(0.3, 0) + EvaluateScene::at(0.2, 0) + EvaluateScene::at(0.1, 0) +
                            "390000,5106000,1\n");
  std::string out, err;
  REQUIRE(test::run_cli({"evaluate", csv, "--prediction", s.prediction, "--crs", "EPSG:32630", "--response", "seen",
                         "--threshold", "0.5", "--json", "--bins", "2"},
                        &out, &err) == 0);
  const auto r = nlohmann::json::parse(out);
  CHECK(r["presences"] == 4);
  CHECK(r["absences"] == 5);
  CHECK(r["points"]["outside_grid"] == 1);
  CHECK(r["auc"]["value"].get<double>() == Approx(0.825));
  CHECK(r["max_tss"]["threshold"].get<double>() == Approx(0.4));
  CHECK(r["max_tss"]["tss"].get<double>() == Approx(0.6));
  CHECK(r["at_threshold"]["sensitivity"].get<double>() == Approx(0.75));
  CHECK(r["at_threshold"]["specificity"].get<double>() == Approx(0.6));
  // Bins [0, 0.5) and [0.5, 1]: below, 0.4 (1), 0.3, 0.2, 0.1 (0): 1 of 4; above, 3 of 5.
  CHECK(r["calibration"][0]["count"] == 4);
  CHECK(r["calibration"][0]["presences"] == 1);
  CHECK(r["calibration"][1]["count"] == 5);
  CHECK(r["calibration"][1]["presences"] == 3);
}

TEST_CASE("evaluate's binary map thresholds every pixel and records the rule in its metadata", "[evaluate]") {
  EvaluateScene s;
  const std::string csv = s.dir.file("points.csv");
  test::write_text(csv, "x,y,seen\n" + EvaluateScene::at(0.9, 1) + EvaluateScene::at(0.8, 1) + EvaluateScene::at(0.1, 0) + EvaluateScene::at(0.2, 0));
  const std::string binary = s.dir.file("range.tif");
  const std::string svg = s.dir.file("eval.svg");
  std::string out, err;
  REQUIRE(test::run_cli({"evaluate", csv, "--prediction", s.prediction, "--crs", "EPSG:32630", "--response", "seen",
                         "--write-binary", binary, "--svg", svg},
                        &out, &err) == 0);
  // Max TSS: the lowest threshold that keeps both presences and no absence is 0.8.
  const std::vector<double> v = test::read_band(binary);
  REQUIRE(v.size() == 100);
  CHECK(v[79] == 0.0);   // 0.79
  CHECK(v[80] == 1.0);   // 0.80
  CHECK(v[98] == 1.0);
  CHECK(v[99] == 255.0);  // nodata stays nodata
  const DatasetPtr ds = test::open_with_gdal(binary);
  const char* rule = ds->GetMetadataItem("HABCAST_THRESHOLD_RULE");
  REQUIRE(rule != nullptr);
  CHECK(std::string(rule).find("maximising TSS") != std::string::npos);
  CHECK(std::string(ds->GetMetadataItem("HABCAST_THRESHOLD")) == "0.80000000000000004");
  const std::string text = test::read_text(svg);
  CHECK(text.rfind("<svg", 0) == 0);
  CHECK(text.find("ROC curve, AUC 1.00") != std::string::npos);
  // Existing outputs are kept unless --overwrite.
  CHECK(test::run_cli({"evaluate", csv, "--prediction", s.prediction, "--crs", "EPSG:32630", "--response", "seen",
                       "--write-binary", binary},
                      &out, &err) == 2);
}

TEST_CASE("Presence-only evaluation draws the same background for the same seed", "[evaluate]") {
  EvaluateScene s;
  const std::string csv = s.dir.file("presences.csv");
  test::write_text(csv, "x,y,seen\n" + EvaluateScene::at(0.95, 1) + EvaluateScene::at(0.85, 1) + EvaluateScene::at(0.9, 1) + EvaluateScene::at(0.6, 1));
  auto run = [&](const std::string& seed) {
    std::string out, err;
    REQUIRE(test::run_cli({"evaluate", csv, "--prediction", s.prediction, "--crs", "EPSG:32630", "--presence-only",
                           "--background", "500", "--seed", seed, "--json"},
                          &out, &err) == 0);
    return nlohmann::json::parse(out);
  };
  const auto a = run("42");
  const auto b = run("42");
  const auto c = run("43");
  CHECK(a["background"]["drawn"] == 500);
  CHECK(a["auc"] == b["auc"]);
  CHECK(a["boyce"] == b["boyce"]);
  CHECK(a["auc"]["value"] != c["auc"]["value"]);
  // Presences sit in the top tenth of a uniform surface: the AUC against background is high and
  // the Boyce curve rises.
  CHECK(a["auc"]["value"].get<double>() > 0.8);
  CHECK(a["boyce"]["index"].get<double>() > 0.5);
}

TEST_CASE("evaluate explains missing inputs and points that all miss the grid", "[evaluate]") {
  EvaluateScene s;
  const std::string csv = s.dir.file("points.csv");
  test::write_text(csv, "x,y,seen\n-4.5,46.1,1\n-4.49,46.1,0\n");
  std::string out, err;
  CHECK(test::run_cli({"evaluate", csv, "--prediction", s.prediction, "--response", "seen", "--crs", "EPSG:32630"}, &out, &err) == 3);
  CHECK(err.find("none of the 2 points has a prediction") != std::string::npos);
  CHECK(test::run_cli({"evaluate", csv, "--prediction", s.prediction}, &out, &err) == 2);
  CHECK(err.find("--presence-only") != std::string::npos);
  test::write_text(csv, "x,y,seen\n" + EvaluateScene::at(0.9, 1) + EvaluateScene::at(0.8, 1));
  CHECK(test::run_cli({"evaluate", csv, "--prediction", s.prediction, "--response", "seen", "--crs", "EPSG:32630"}, &out, &err) == 3);
  CHECK(err.find("2 presences and 0 absences") != std::string::npos);
  test::write_text(csv, "x,y,seen\n" + EvaluateScene::at(0.9, 2));
  CHECK(test::run_cli({"evaluate", csv, "--prediction", s.prediction, "--response", "seen", "--crs", "EPSG:32630"}, &out, &err) == 3);
  CHECK(err.find("points.csv:2: observed value 2") != std::string::npos);
}

namespace {

/// SplitMix64 written out from its definition (Steele, Lea & Flood 2014, OOPSLA, and the public
/// domain reference code by Vigna), independently of habcast's copy: the documented draw is
/// reproducible from the docs alone.
std::uint64_t splitmix64(std::uint64_t& state) {
  std::uint64_t z = (state += 0x9E3779B97F4A7C15ULL);
  z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ULL;
  z = (z ^ (z >> 27)) * 0x94D049BB133111EBULL;
  return z ^ (z >> 31);
}

}  // namespace

TEST_CASE("The background draw follows its documented rule and is written with the Boyce curve on request", "[evaluate]") {
  // From memory: SplitMix64 from state 0 first returns 0xE220A8397B1DCDAF.
  std::uint64_t zero = 0;
  REQUIRE(splitmix64(zero) == 0xE220A8397B1DCDAFULL);

  EvaluateScene s;
  const std::string csv = s.dir.file("presences.csv");
  test::write_text(csv, "x,y,seen\n" + EvaluateScene::at(0.95, 1) + EvaluateScene::at(0.85, 1) + EvaluateScene::at(0.9, 1) +
                            EvaluateScene::at(0.6, 1));
  const std::string background = s.dir.file("background.csv");
  std::string out, err;
  REQUIRE(test::run_cli({"evaluate", csv, "--prediction", s.prediction, "--crs", "EPSG:32630", "--presence-only", "--background",
                         "300", "--seed", "7", "--write-background", background, "--write-binary", s.dir.file("range.tif"), "--json"},
                        &out, &err) == 0);
  const auto r = nlohmann::json::parse(out);
  // The docs' rule: draw k takes the k-th output p from the seed, pixel p mod 100 of the 10 x 10
  // grid (row p / 10, column p % 10); pixel 99 is nodata, so those draws are skipped.
  std::uint64_t state = 7;
  std::vector<std::int64_t> draws, pixels;
  for (std::int64_t k = 1; static_cast<int>(draws.size()) < 300; ++k) {
    const std::uint64_t p = splitmix64(state) % 100;
    if (p == 99) continue;
    draws.push_back(k);
    pixels.push_back(static_cast<std::int64_t>(p));
  }
  CHECK(r["background"]["drawn"] == 300);
  CHECK(r["background"]["draws"] == draws.back());
  CHECK(draws.back() > 300);  // some draws hit the nodata pixel (with 300 draws, almost surely)
  const CsvTable table = read_csv_table(background);
  REQUIRE(table.rows.size() == 300);
  for (std::size_t k = 0; k < 300; ++k) {
    INFO("background point " << k);
    CHECK(table.number(k, 0) == static_cast<double>(draws[k]));
    CHECK(table.number(k, 1) * 10 + table.number(k, 2) == static_cast<double>(pixels[k]));
    CHECK(table.number(k, 5) == Approx(static_cast<double>(pixels[k]) / 100.0).epsilon(1e-15));  // the pixel's value
    CHECK(table.number(k, 3) == 383050.0 + 100.0 * table.number(k, 2));                        // centre x
  }
  // The Boyce curve and its range, over presences and background together.
  REQUIRE(r["boyce"]["curve"].size() == r["boyce"]["windows_used"].get<std::size_t>());
  CHECK(r["boyce"]["range"]["lowest"].get<double>() <= 0.6);
  CHECK(r["boyce"]["range"]["highest"].get<double>() == Approx(0.98));
  CHECK(r["boyce"]["curve"][0]["ratio"].get<double>() >= 0.0);
  // The threshold rule counts presences and background points, not "evaluation points".
  CHECK(r["binary_map"]["rule"].get<std::string>().find("over 4 presences and 300 background points") != std::string::npos);
}

TEST_CASE("evaluate refuses a probability threshold outside (0, 1) and lists each dropped point", "[evaluate]") {
  EvaluateScene s;
  const std::string csv = s.dir.file("points.csv");
  test::write_text(csv, "x,y,seen\n" + EvaluateScene::at(0.9, 1) + EvaluateScene::at(0.2, 0) + "390000,5106000,1\n" +
                            EvaluateScene::at(0.99, 1) /* pixel (9, 9): nodata */ + EvaluateScene::at(0.3, 0));
  std::string out, err;
  for (const char* t : {"1.5", "0", "1", "-0.2"}) {
    INFO("threshold " << t);
    CHECK(test::run_cli({"evaluate", csv, "--prediction", s.prediction, "--crs", "EPSG:32630", "--response", "seen", "--threshold", t},
                        &out, &err) == 2);
    CHECK(err.find("strictly between 0 and 1") != std::string::npos);
  }
  REQUIRE(test::run_cli({"evaluate", csv, "--prediction", s.prediction, "--crs", "EPSG:32630", "--response", "seen", "--json"}, &out,
                        &err) == 0);
  const auto r = nlohmann::json::parse(out);
  REQUIRE(r["points"]["dropped"].size() == 2);
  CHECK(r["points"]["dropped"][0]["where"] == csv + ":4");
  CHECK(r["points"]["dropped"][0]["reason"] == "outside the grid");
  CHECK(r["points"]["dropped"][1]["where"] == csv + ":5");
  CHECK(r["points"]["dropped"][1]["reason"] == "no prediction (nodata) there");
  // A raster without a readable model behind it cannot be checked for training sites; it says so.
  CHECK(r["training_overlap"]["checked"] == false);
  REQUIRE(test::run_cli({"evaluate", csv, "--prediction", s.prediction, "--crs", "EPSG:32630", "--response", "seen"}, &out, &err) == 0);
  CHECK(out.find("Not used: " + csv + ":4 (outside the grid); " + csv + ":5 (no prediction (nodata) there).") != std::string::npos);
}
