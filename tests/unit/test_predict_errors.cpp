// Bad input to predict: each mistake gives its own clear message and exit code, and leaves no
// output (not even a temporary file) behind; earlier results are never clobbered.
#include <catch2/catch.hpp>
#include <csignal>
#include <filesystem>
#include <sstream>
#include <string>

#include "core/base/error.hpp"
#include "pipeline/stop_signal.hpp"
#include "predict/predict_run.hpp"
#include "test_support.hpp"

namespace {

using Catch::Matchers::Contains;
using habcast::test::GridSpec;
using habcast::test::TempDir;

const char* kModel =
    "habcast_model = 1\n[model]\nfamily = \"poisson\"\n"
    "[training]\nsamples = \"train.csv\"\n"
    "[covariates.elev]\nunits = \"m\"\ncenter = 500\nscale = 100\nraster = \"elev.tif\"\n"
    "[covariates.cover]\ntype = \"categorical\"\nlevels = [{code = 1, name = \"open\"}, {code = 2, name = \"forest\"}]\n"
    "raster = \"cover.tif\"\n"
    "[coefficients]\nterms = [\"(Intercept)\", \"elev\", \"elev^2\", \"cover[forest]\"]\n"
    "estimates = [1.0, 0.2, -0.3, 0.5]\n";

struct ErrorScene {
  TempDir dir{"errors"};
  std::string model = dir.file("model.toml");
  std::string out = dir.file("out");
  GridSpec grid{40, 30};
  ErrorScene() {
    habcast::test::write_raster(dir.file("elev.tif"), grid, "Float32", [](int r, int c) { return 300.0 + r * 10 + c; });
    // Code 3 (column 39) is not a level of the model.
    habcast::test::write_raster(dir.file("cover.tif"), grid, "Byte", [](int, int c) { return c < 20 ? 1.0 : (c == 39 ? 3.0 : 2.0); },
                                true, 0.0);
    habcast::test::write_text(model, kModel);
    habcast::test::write_text(dir.file("train.csv"), "elev,cover\n320,open\n600,forest\n450,forest\n");
  }
  int run(std::vector<std::string> extra, std::string* err = nullptr) {
    std::vector<std::string> args{"predict", model, "-o", out, "-q"};
    args.insert(args.end(), extra.begin(), extra.end());
    return habcast::test::run_cli(args, nullptr, err);
  }
  bool out_empty() const { return habcast::test::list_dir(out).empty(); }
};

}  // namespace

TEST_CASE("a valid poisson model with unknown category codes predicts and flags", "[predict][errors]") {
  ErrorScene s;
  std::string err;
  REQUIRE(s.run({}, &err) == 0);
  // No covariance in the model: no uncertainty raster, and the tool says so.
  CHECK_THAT(err, Contains("no covariance matrix"));
  CHECK(habcast::test::list_dir(s.out) ==
        std::vector<std::string>{"extrapolation.tif", "extrapolation.tif.aux.xml", "least_similar.tif", "least_similar.tif.aux.xml",
                                 "novelty.tif", "report.json", "suitability.tif"});
  // Column 39 has code 3: flagged as an unseen level, no prediction.
  CHECK(habcast::test::read_pixel(s.out + "/extrapolation.tif", 1, 0, 39) == 4.0);
  CHECK(habcast::test::read_pixel(s.out + "/suitability.tif", 1, 0, 39) == -9999.0);
  // Elsewhere exp(eta) (closed form of the log link).
  const double e = (300.0 + 10 * 2 + 25 - 500) / 100;
  CHECK_THAT(habcast::test::read_pixel(s.out + "/suitability.tif", 1, 2, 25),
             Catch::Matchers::WithinRel(std::exp(1.0 + 0.2 * e - 0.3 * e * e + 0.5), 1e-6));
  CHECK_THAT(err, Contains("code 3 (not a level of the model)"));
}

TEST_CASE("inputs that do not line up are refused before any output exists", "[predict][errors]") {
  ErrorScene s;
  std::string err;
  // Covariates on other grids are aligned (docs/alignment.md); what cannot be aligned is refused.
  SECTION("a CRS far from the target: no overlap, both extents named") {
    GridSpec g = s.grid;
    g.epsg = 32631;  // the same numbers in zone 31N lie 6 degrees east
    habcast::test::write_raster(s.dir.file("cover.tif"), g, "Byte", [](int, int) { return 1.0; });
    CHECK(s.run({}, &err) == 3);
    CHECK_THAT(err, Contains("cover.tif") && Contains("does not cover the target grid") && Contains("UTM zone 31N") &&
                        Contains("UTM zone 30N"));
  }
  SECTION("a categorical covariate asked to interpolate") {
    CHECK(s.run({"--resampling", "cover=bilinear"}, &err) == 2);
    CHECK_THAT(err, Contains("cover") && Contains("categorical"));
  }
  SECTION("a target grid of zero size") {
    CHECK(s.run({"--grid-crs", "EPSG:32630", "--grid-resolution", "100", "--grid-bounds", "500000,3997000,500000,4000000"},
                &err) == 2);
    CHECK_THAT(err, Contains("zero size"));
  }
  SECTION("missing raster") {
    CHECK(s.run({"-c", "elev=" + s.dir.file("nowhere.tif")}, &err) == 3);
    CHECK_THAT(err, Contains("nowhere.tif"));
  }
  SECTION("truncated GeoTIFF") {
    // A larger tiled file, cut in half: the header opens, the tiles do not.
    GridSpec g{400, 300};
    g.block = 64;
    for (const char* name : {"elev.tif", "cover.tif"})
      habcast::test::write_raster(s.dir.file(name), g, "Float32", [](int r, int c) { return 300.0 + std::sin(r * 0.37 + c * 0.11) * 50 + (r * c) % 7; });
    const auto full = std::filesystem::file_size(s.dir.file("elev.tif"));
    std::filesystem::resize_file(s.dir.file("elev.tif"), full / 2);
    const int code = s.run({}, &err);
    CHECK((code == 3 || code == 4));
    CHECK_THAT(err, Contains("elev.tif"));
  }
  SECTION("covariate unknown to the model") {
    CHECK(s.run({"-c", "slope=" + s.dir.file("elev.tif")}, &err) == 2);
    CHECK_THAT(err, Contains("no covariate \"slope\"") && Contains("elev, cover"));
  }
  SECTION("bad model file") {
    habcast::test::write_text(s.model, std::string(kModel) + "covariance = [[1]]\n");
    CHECK(s.run({}, &err) == 3);
    CHECK_THAT(err, Contains("model.toml:18:") && Contains("covariance has 1 rows"));
  }
  SECTION("missing training table") {
    std::filesystem::remove(s.dir.file("train.csv"));
    CHECK(s.run({}, &err) == 3);
    CHECK_THAT(err, Contains("model.toml:5:") && Contains("train.csv"));
  }
  SECTION("training table without a covariate's column, or with a bad value") {
    habcast::test::write_text(s.dir.file("train.csv"), "elevation,cover\n1,1\n");
    CHECK(s.run({}, &err) == 3);
    CHECK_THAT(err, Contains("train.csv:1:") && Contains("no column named \"elev\""));
    habcast::test::write_text(s.dir.file("train.csv"), "elev,cover\n300,1\nhigh,2\n");
    CHECK(s.run({}, &err) == 3);
    CHECK_THAT(err, Contains("train.csv:3:") && Contains("\"high\""));
    habcast::test::write_text(s.dir.file("train.csv"), "elev,cover\n300,1\n400,7\n");
    CHECK(s.run({}, &err) == 3);
    CHECK_THAT(err, Contains("train.csv:3:") && Contains("level code 7"));
  }
  SECTION("bad options") {
    CHECK(s.run({"--level", "1.5"}, &err) == 2);
    CHECK(s.run({"-c", "elev"}, &err) == 2);
    CHECK_THAT(err, Contains("NAME=FILE"));
    CHECK(s.run({"--co", "COMPRESS"}, &err) == 2);
  }
  CHECK(s.out_empty());
}

TEST_CASE("existing outputs are kept unless --overwrite is given", "[predict][errors]") {
  ErrorScene s;
  REQUIRE(s.run({}) == 0);
  const std::string before = habcast::test::read_text(s.out + "/suitability.tif");
  std::string err;
  CHECK(s.run({}, &err) == 2);
  CHECK_THAT(err, Contains("already exists") && Contains("--overwrite"));
  CHECK(habcast::test::read_text(s.out + "/suitability.tif") == before);
  // A failing run with --overwrite does not clobber either: the error comes before any output.
  std::filesystem::remove(s.dir.file("cover.tif"));
  CHECK(s.run({"--overwrite"}, &err) == 3);
  CHECK(habcast::test::read_text(s.out + "/suitability.tif") == before);
  CHECK(habcast::test::list_dir(s.out).size() == 7);
}

TEST_CASE("a maximum extrapolated share (--max-extrapolated) turns too much extrapolation into exit code 5", "[predict][errors]") {
  ErrorScene s;
  std::string err;
  // elev 300..629 vs training 320..600: some columns/rows are outside.
  CHECK(s.run({"--max-extrapolated", "1"}, &err) == 5);
  CHECK_THAT(err, Contains("more than --max-extrapolated"));
  CHECK(std::filesystem::exists(s.out + "/suitability.tif"));  // outputs are still written
  CHECK(s.run({"--max-extrapolated", "100", "--overwrite"}) == 0);
}

namespace {
/// Progress that delivers SIGINT (as the handler would record it) after the first block.
class InterruptingProgress final : public habcast::Progress {
 public:
  void start(const std::string&, std::int64_t) override {}
  void advance(std::int64_t) override { habcast::raise_stop_for_testing(SIGINT); }
  void finish() override {}
  void message(const std::string&, const std::string&) override {}
};
}  // namespace

TEST_CASE("an interrupted run leaves no output and no temporary file", "[predict][errors]") {
  ErrorScene s;
  habcast::PredictOptions options;
  options.model_path = s.model;
  options.output_dir = s.out;
  options.block_size = 16;
  options.threads = 2;
  InterruptingProgress progress;
  habcast::StopSignalGuard guard;
  try {
    habcast::run_predict(options, progress, "test");
    FAIL("expected Interrupted");
  } catch (const habcast::Interrupted& e) {
    CHECK(e.signal_number() == SIGINT);
    CHECK(static_cast<int>(e.code()) == 130);
  }
  habcast::raise_stop_for_testing(0);
  CHECK(s.out_empty());
}
