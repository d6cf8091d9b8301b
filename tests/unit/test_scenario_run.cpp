// `habcast predict --scenarios` end to end on rasters whose values are known functions of row and
// column, so the change, its standard error and its class have closed forms. The model is a
// gaussian identity fit, mu = b0 + bt t + btt t^2 + bp p, so d mu / d beta = (1, t, t^2, p) and a
// scenario shifting t by d changes mu by bt d + btt (2 t d + d^2), with gradient difference
// (0, d, 2 t d + d^2, 0): se = sqrt of that vector's quadratic form in V.
#include <catch2/catch.hpp>
#include <cmath>
#include <filesystem>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "raster_test_support.hpp"
#include "render/change_class_figure.hpp"
#include "test_support.hpp"

namespace {

using Catch::Matchers::Contains;
using habcast::test::GridSpec;
using habcast::test::TempDir;

constexpr int kWidth = 48, kHeight = 32;
constexpr double kShift = 0.5;
const double kBeta[4] = {0.2, 0.15, -0.05, 0.1};
const double kV[4][4] = {{1e-4, 2e-5, -1e-5, 1e-5},
                         {2e-5, 4e-5, 5e-6, -5e-6},
                         {-1e-5, 5e-6, 2e-5, 0.0},
                         {1e-5, -5e-6, 0.0, 3e-5}};

double t_of(int col) { return col / 8.0 - 2.0; }  // -2 .. 3.875
double p_of(int row) { return row / 16.0; }        // 0 .. 1.9375

std::string model_text(bool with_covariance) {
  std::string s =
      "habcast_model = 1\n[model]\nfamily = \"gaussian\"\nlink = \"identity\"\nresponse = \"index\"\n"
      "[training]\nsamples = \"train.csv\"\n"
      "[covariates.t]\nraster = \"t.tif\"\n[covariates.p]\nraster = \"p.tif\"\n"
      "[coefficients]\nterms = [\"(Intercept)\", \"t\", \"t^2\", \"p\"]\nestimates = [0.2, 0.15, -0.05, 0.1]\n";
  if (with_covariance) {
    char buf[64];
    s += "covariance = [\n";
    for (const auto& row : kV) {
      s += "  [";
      for (int j = 0; j < 4; ++j) {
        std::snprintf(buf, sizeof buf, "%s%.17g", j ? ", " : "", row[j]);
        s += buf;
      }
      s += "],\n";
    }
    s += "]\n";
  }
  return s;
}

// Training ranges: t in [-1, 3], p in [0.25, 1.75].
const char* kTraining = "t,p\n-1,0.25\n3,1.75\n1,1\n0,0.5\n2,1.5\n";

struct Scene {
  TempDir dir{"scenarios"};
  std::string model = dir.file("model.toml");
  std::string out = dir.file("out");
  explicit Scene(bool with_covariance = true) {
    const GridSpec grid{kWidth, kHeight};
    habcast::test::write_raster(dir.file("t.tif"), grid, "Float32", [](int, int c) { return t_of(c); });
    habcast::test::write_raster(dir.file("t_warm.tif"), grid, "Float32", [](int, int c) { return t_of(c) + kShift; });
    habcast::test::write_raster(dir.file("t_copy.tif"), grid, "Float32", [](int, int c) { return t_of(c); });
    // Pixel (3, 4) of p is nodata: no change there.
    habcast::test::write_raster(dir.file("p.tif"), grid, "Float32",
                                [](int r, int c) { return (r == 3 && c == 4) ? -9999.0 : p_of(r); }, true, -9999.0);
    habcast::test::write_text(model, model_text(with_covariance));
    habcast::test::write_text(dir.file("train.csv"), kTraining);
    habcast::test::write_text(dir.file("futures.toml"),
                              "habcast_scenarios = 1\n"
                              "[[scenario]]\nname = \"warm\"\ndescription = \"t + 0.5\"\n"
                              "[scenario.covariates]\nt = \"t_warm.tif\"\n"
                              "[[scenario]]\nname = \"same\"\n[scenario.covariates]\nt = \"t_copy.tif\"\n");
  }
  int run(std::vector<std::string> extra, std::string* err = nullptr, const std::string& folder = "") const {
    std::vector<std::string> args{"predict", model, "--scenarios", dir.file("futures.toml"), "-o", folder.empty() ? out : folder,
                                  "-q", "--checks", "range"};
    args.insert(args.end(), extra.begin(), extra.end());
    std::string o;
    return habcast::test::run_cli(args, &o, err);
  }
};

double mu_of(double t, double p) { return kBeta[0] + kBeta[1] * t + kBeta[2] * t * t + kBeta[3] * p; }

double change_se(double t) {
  const double d[4] = {0.0, kShift, 2 * t * kShift + kShift * kShift, 0.0};
  double s = 0.0;
  for (int i = 0; i < 4; ++i)
    for (int j = 0; j < 4; ++j) s += d[i] * kV[i][j] * d[j];
  return std::sqrt(s);
}

bool inside(double t, double p) { return t >= -1.0 && t <= 3.0 && p >= 0.25 && p <= 1.75; }

}  // namespace

TEST_CASE("a scenario shifting one covariate by a constant gives the closed-form change, SE and class",
          "[scenarios][analytic]") {
  Scene scene;
  REQUIRE(scene.run({"--threshold", "0.3", "--threads", "2"}) == 0);
  const std::string change = scene.out + "/warm/change.tif";
  const std::string classes = scene.out + "/warm/change_class.tif";
  const double z = 1.959963984540054;  // qnorm(0.975), R 4.2.2
  std::vector<std::vector<double>> bands;
  for (int b = 1; b <= 5; ++b) bands.push_back(habcast::test::read_band(change, b));
  const std::vector<double> class_band = habcast::test::read_band(classes, 1);
  // The side of the threshold is read from the stored maps, as a user reads them.
  const std::vector<double> stored_b = habcast::test::read_band(scene.out + "/baseline/suitability.tif");
  const std::vector<double> stored_s = habcast::test::read_band(scene.out + "/warm/suitability.tif");
  auto at = [](const std::vector<double>& band, int row, int col) { return band[static_cast<std::size_t>(row * kWidth + col)]; };
  int checked_gain = 0, checked_loss = 0, checked_stable = 0;
  for (int row = 0; row < kHeight; ++row) {
    for (int col = 0; col < kWidth; ++col) {
      if (row == 3 && col == 4) continue;
      INFO("pixel row " << row << " col " << col);
      const double t = t_of(col), p = p_of(row);
      const double dmu = mu_of(t + kShift, p) - mu_of(t, p);
      const double se = change_se(t);
      CHECK_THAT(at(bands[0], row, col), Catch::Matchers::WithinAbs(dmu, 1e-7));
      CHECK_THAT(at(bands[1], row, col), Catch::Matchers::WithinRel(se, 1e-6));
      CHECK_THAT(at(bands[2], row, col), Catch::Matchers::WithinAbs(dmu - z * se, 1e-6));
      CHECK_THAT(at(bands[3], row, col), Catch::Matchers::WithinAbs(dmu + z * se, 1e-6));
      CHECK_THAT(at(bands[4], row, col),
                 Catch::Matchers::WithinAbs(0.5 * std::erfc(dmu / se / std::sqrt(2.0)), 1e-6));
      // The class at 0.3, marked where the baseline (t) or the scenario (t + 0.5) is outside the
      // training ranges.
      const double b = at(stored_b, row, col), s = at(stored_s, row, col);
      CHECK_THAT(b, Catch::Matchers::WithinAbs(mu_of(t, p), 1e-7));
      CHECK_THAT(s, Catch::Matchers::WithinAbs(mu_of(t + kShift, p), 1e-7));
      int expected = 0;
      if ((b >= 0.3) == (s >= 0.3)) {
        expected = b >= 0.3 ? 2 : 1;
        ++checked_stable;
      } else if (dmu - z * se <= 0.0 && dmu + z * se >= 0.0) {
        expected = 5;
      } else {
        expected = s >= 0.3 ? 3 : 4;
        (expected == 3 ? checked_gain : checked_loss)++;
      }
      expected |= (inside(t, p) ? 0 : 16) | (inside(t + kShift, p) ? 0 : 32);
      CHECK(at(class_band, row, col) == expected);
    }
  }
  // The scene is built so that every kind of pixel occurs.
  CHECK(checked_gain > 0);
  CHECK(checked_loss > 0);
  CHECK(checked_stable > 0);
  CHECK(habcast::test::read_pixel(change, 1, 3, 4) == -9999.0);
  CHECK(habcast::test::read_pixel(classes, 1, 3, 4) == 255.0);

  const auto report = nlohmann::json::parse(habcast::test::read_text(scene.out + "/scenarios.json"));
  const auto& warm = report["scenarios"][0];
  CHECK(warm["name"] == "warm");
  CHECK(warm["compared_pixels"] == kWidth * kHeight - 1);
  long long total = 0;
  for (const auto& [key, value] : warm["classes"].items()) {
    (void)key;
    total += value["pixels"].get<long long>();
  }
  CHECK(total == kWidth * kHeight - 1);
  // t + 0.5 leaves the range [-1, 3] at 4 more columns above and enters it at 4 below: equal
  // counts, so the scenario's outside-range share equals the baseline's here.
  CHECK(warm["extrapolation"]["causes"]["outside_range"]["pixels"] ==
        report["baseline"]["extrapolation"]["causes"]["outside_range"]["pixels"]);
  const std::string csv = habcast::test::read_text(scene.out + "/scenarios.csv");
  CHECK_THAT(csv, Contains("warm,gain,"));
  CHECK_THAT(csv, Contains("warm,extrapolated:outside_range,"));
}

TEST_CASE("a scenario equal to the baseline gives zero change, SE 0 and a stable class everywhere",
          "[scenarios][analytic]") {
  Scene scene;
  REQUIRE(scene.run({"--threshold", "0.3"}) == 0);
  const std::vector<double> change = habcast::test::read_band(scene.out + "/same/change.tif", 1);
  const std::vector<double> se = habcast::test::read_band(scene.out + "/same/change.tif", 2);
  const std::vector<double> p_decline = habcast::test::read_band(scene.out + "/same/change.tif", 5);
  const std::vector<double> classes = habcast::test::read_band(scene.out + "/same/change_class.tif", 1);
  int nodata = 0;
  for (std::size_t i = 0; i < change.size(); ++i) {
    if (change[i] == -9999.0) {
      ++nodata;
      continue;
    }
    CHECK(change[i] == 0.0);
    CHECK(se[i] == 0.0);
    CHECK(p_decline[i] == 0.0);
    const int cls = static_cast<int>(classes[i]) & 15;
    const int mark = static_cast<int>(classes[i]) & 48;
    CHECK((cls == 1 || cls == 2));
    CHECK((mark == 0 || mark == 48));  // the same pixel on both sides: extrapolated on both or neither
  }
  CHECK(nodata == 1);
  // Its suitability equals the baseline's, byte for byte.
  CHECK(habcast::test::read_band(scene.out + "/same/suitability.tif") ==
        habcast::test::read_band(scene.out + "/baseline/suitability.tif"));
}

TEST_CASE("scenario outputs are bit-identical for any number of threads", "[scenarios][determinism]") {
  Scene scene;
  const std::string one = scene.dir.file("one"), three = scene.dir.file("three");
  REQUIRE(scene.run({"--threshold", "0.3", "--threads", "1", "--block-size", "16"}, nullptr, one) == 0);
  REQUIRE(scene.run({"--threshold", "0.3", "--threads", "3", "--block-size", "16"}, nullptr, three) == 0);
  for (const std::string f : {"warm/change.tif", "warm/change_class.tif", "warm/suitability.tif", "baseline/uncertainty.tif"}) {
    INFO(f);
    CHECK(habcast::test::read_text(one + "/" + f) == habcast::test::read_text(three + "/" + f));
  }
}

TEST_CASE("scenario runs refuse unclear or unusable input and leave nothing behind", "[scenarios][errors]") {
  SECTION("a scenario naming a covariate the model lacks: the file and line are named") {
    Scene scene;
    habcast::test::write_text(scene.dir.file("futures.toml"),
                              "habcast_scenarios = 1\n[[scenario]]\nname = \"x\"\n[scenario.covariates]\ntemp = \"t.tif\"\n");
    std::string err;
    CHECK(scene.run({}, &err) == 3);
    CHECK_THAT(err, Contains("futures.toml:2"));
    CHECK_THAT(err, Contains("\"temp\""));
    CHECK_FALSE(std::filesystem::exists(scene.out + "/baseline/suitability.tif"));
  }
  SECTION("a model without a covariance matrix: the change would have no uncertainty") {
    Scene scene(false);
    std::string err;
    CHECK(scene.run({}, &err) == 3);
    CHECK_THAT(err, Contains("covariance"));
  }
  SECTION("two different thresholds, from the file and --threshold: both readings are named") {
    Scene scene;
    habcast::test::write_text(scene.dir.file("futures.toml"),
                              "habcast_scenarios = 1\nthreshold = 0.4\n[[scenario]]\nname = \"w\"\n"
                              "[scenario.covariates]\nt = \"t_warm.tif\"\n");
    std::string err;
    CHECK(scene.run({"--threshold", "0.3"}, &err) == 2);
    CHECK_THAT(err, Contains("0.3"));
    CHECK_THAT(err, Contains("0.4"));
  }
  SECTION("a scenario called baseline would share the baseline's folder") {
    Scene scene;
    habcast::test::write_text(scene.dir.file("futures.toml"),
                              "habcast_scenarios = 1\n[[scenario]]\nname = \"baseline\"\n[scenario.covariates]\nt = \"t.tif\"\n");
    std::string err;
    CHECK(scene.run({}, &err) == 3);
    CHECK_THAT(err, Contains("baseline"));
  }
  SECTION("--threshold without scenarios") {
    Scene scene;
    std::string out, err;
    CHECK(habcast::test::run_cli({"predict", scene.model, "-o", scene.out, "-q", "--threshold", "0.3"}, &out, &err) == 2);
    CHECK_THAT(err, Contains("--scenarios"));
  }
  SECTION("scenarios in the file and on the command line at once") {
    Scene scene;
    std::string err;
    CHECK(scene.run({"--scenario", "hot:t=t_warm.tif"}, &err) == 2);
    CHECK_THAT(err, Contains("twice"));
  }
  SECTION("finished outputs are kept unless --overwrite") {
    Scene scene;
    REQUIRE(scene.run({}) == 0);
    std::string err;
    CHECK(scene.run({}, &err) != 0);
    CHECK(scene.run({"--overwrite"}) == 0);
  }
}

TEST_CASE("scenarios given on the command line equal the same scenarios from a file", "[scenarios]") {
  Scene file, inline_args;
  REQUIRE(file.run({"--threshold", "0.3"}) == 0);
  std::string o, e;
  REQUIRE(habcast::test::run_cli({"predict", inline_args.model, "-o", inline_args.out, "-q", "--checks", "range",
                                  "--threshold", "0.3", "--scenario", "warm:t=" + inline_args.dir.file("t_warm.tif")},
                                 &o, &e) == 0);
  CHECK(habcast::test::read_band(file.out + "/warm/change.tif", 2) ==
        habcast::test::read_band(inline_args.out + "/warm/change.tif", 2));
  CHECK(habcast::test::read_band(file.out + "/warm/change_class.tif", 1) ==
        habcast::test::read_band(inline_args.out + "/warm/change_class.tif", 1));
}

TEST_CASE("the classes' threshold can come from what evaluate recorded", "[scenarios][threshold]") {
  Scene scene;
  SECTION("evaluate's JSON with a binary map: that map's threshold") {
    habcast::test::write_text(scene.dir.file("eval.json"),
                              R"({"max_tss": {"threshold": 0.31}, "binary_map": {"threshold": 0.3, "file": "b.tif"}})");
    REQUIRE(scene.run({"--threshold-from", scene.dir.file("eval.json")}) == 0);
    const auto report = nlohmann::json::parse(habcast::test::read_text(scene.out + "/scenarios.json"));
    CHECK(report["threshold"]["value"] == 0.3);
    CHECK_THAT(report["threshold"]["source"].get<std::string>(), Contains("binary map"));
  }
  SECTION("evaluate's JSON with only the max-TSS threshold") {
    habcast::test::write_text(scene.dir.file("eval.json"), R"({"max_tss": {"threshold": 0.25}})");
    REQUIRE(scene.run({"--threshold-from", scene.dir.file("eval.json")}) == 0);
    const auto report = nlohmann::json::parse(habcast::test::read_text(scene.out + "/scenarios.json"));
    CHECK(report["threshold"]["value"] == 0.25);
  }
  SECTION("a report with two different thresholds and no map is ambiguous: both are named") {
    habcast::test::write_text(scene.dir.file("eval.json"),
                              R"({"max_tss": {"threshold": 0.25}, "at_threshold": {"threshold": 0.4}})");
    std::string err;
    CHECK(scene.run({"--threshold-from", scene.dir.file("eval.json")}, &err) == 2);
    CHECK_THAT(err, Contains("0.25"));
    CHECK_THAT(err, Contains("0.4"));
  }
  SECTION("a binary map written by evaluate: HABCAST_THRESHOLD of its metadata") {
    // Tagged with GDAL itself, as evaluate's binary map is.
    const std::vector<std::uint8_t> ones(static_cast<std::size_t>(kWidth * kHeight), 1);
    habcast::test::write_geotiff(scene.dir.file("binary.tif"), habcast::test::utm_grid(kWidth, kHeight), GDT_Byte, ones,
                                 [](GDALDataset& ds) { ds.SetMetadataItem("HABCAST_THRESHOLD", "0.3"); });
    REQUIRE(scene.run({"--threshold-from", scene.dir.file("binary.tif")}) == 0);
    const auto report = nlohmann::json::parse(habcast::test::read_text(scene.out + "/scenarios.json"));
    CHECK(report["threshold"]["value"] == 0.3);
  }
}

TEST_CASE("the change-class picture shows every class of change_class.tif and hatches the marked pixels",
          "[scenarios][quicklook]") {
  Scene scene;
  REQUIRE(scene.run({"--threshold", "0.3", "--change-quicklook", "svg"}) == 0);
  CHECK(std::filesystem::exists(scene.out + "/warm/change_class.svg"));
  const std::string tif = scene.out + "/warm/change_class.tif";
  const habcast::Figure fig = habcast::change_class_figure(tif, "warm", "at 0.3");
  // The raster is smaller than the picture: one image cell per pixel (repeated k x k).
  const std::vector<double> codes = habcast::test::read_band(tif, 1);
  std::size_t marked = 0;
  for (double v : codes) marked += (v != 255.0 && (static_cast<int>(v) & 48) != 0) ? 1 : 0;
  const habcast::IndexedImage* image = nullptr;
  std::size_t hatched = 0;
  for (const habcast::Mark& m : fig.marks()) {
    if (m.role == "map") image = &std::get<habcast::ImageMark>(m.shape).image;
    if (m.role == "extrapolated")
      for (std::uint8_t on : std::get<habcast::HatchMaskMark>(m.shape).mask.on) hatched += on;
  }
  REQUIRE(image != nullptr);
  const std::size_t k = static_cast<std::size_t>(image->width / kWidth);
  REQUIRE(k >= 1);
  CHECK(hatched == marked * k * k);
  // Each cell's palette index is its class (1..5), 6 for no data.
  for (int row = 0; row < kHeight; ++row)
    for (int col = 0; col < kWidth; ++col) {
      const double v = codes[static_cast<std::size_t>(row * kWidth + col)];
      const std::uint8_t expected = v == 255.0 ? 6 : static_cast<std::uint8_t>(static_cast<int>(v) & 15);
      CHECK(image->index[static_cast<std::size_t>(row) * k * static_cast<std::size_t>(image->width) + static_cast<std::size_t>(col) * k] ==
            expected);
    }
}
