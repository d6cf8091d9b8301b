// A covariate used only by the offset (effort, area, exposure) scales the prediction but is not
// part of the niche: the joint checks leave it out, its range is checked and reported on its own,
// and describe holds it like any other covariate (docs/extrapolation-flags.md). The numbers are
// hand-worked: training x = 0..4 with effort = x + 1, so (x, effort) lie on one line.
#include <catch2/catch.hpp>
#include <nlohmann/json.hpp>
#include <cmath>
#include <limits>

#include "core/base/error.hpp"
#include "core/domain/extrapolation_flags.hpp"
#include "core/domain/novelty_model.hpp"
#include "core/domain/training_domain.hpp"
#include "core/model/model_file.hpp"
#include "core/model/term_plan.hpp"
#include "test_support.hpp"

using Catch::Matchers::Contains;

namespace {

const std::string kModel =
    "habcast_model = 1\n"
    "[model]\nfamily = \"poisson\"\n"
    "[training]\nsamples = \"train.csv\"\n"
    "[covariates.x]\n"
    "[covariates.effort]\nunits = \"hours\"\n"
    "[coefficients]\nterms = [\"(Intercept)\", \"x\", \"x^2\"]\nestimates = [0.5, 0.4, -0.2]\n"
    "covariance = [[0.01, 0.0, 0.0], [0.0, 0.01, 0.0], [0.0, 0.0, 0.01]]\n"
    "offset = \"log(effort)\"\n";
const std::string kTraining = "x,effort\n0,1\n1,2\n2,3\n3,4\n4,5\n";

/// The first number stored under `key` anywhere in `j` (NaN when absent).
double find_number(const nlohmann::json& j, const std::string& key) {
  if (j.is_object()) {
    if (j.contains(key) && j[key].is_number()) return j[key].get<double>();
    for (const auto& [k, v] : j.items()) {
      (void)k;
      const double found = find_number(v, key);
      if (found == found) return found;
    }
  }
  return std::numeric_limits<double>::quiet_NaN();
}

}  // namespace

TEST_CASE("an offset-only covariate is left out of the joint checks and its range sets no flag", "[domain]") {
  const habcast::ModelSpec spec = habcast::parse_model_text(kModel, "m.toml");
  const habcast::TermPlan plan(spec);
  CHECK(plan.offset_only(1));
  CHECK_FALSE(plan.offset_only(0));
  const habcast::TrainingSamples samples = habcast::parse_training_samples(kTraining, "train.csv", spec);
  const habcast::TrainingDomain domain(spec, samples);
  const habcast::NoveltyModel novelty(spec, plan, samples, habcast::NoveltyOptions{});
  CHECK(novelty.covariates() == std::vector<int>{0});
  // (1, 3) is within both ranges but off the training line: outside a joint hull of (x, effort).
  // (1, 50) is beyond effort's range. Neither is flagged; the second is counted for effort.
  Eigen::ArrayXXd raw(2, 2);
  raw << 1, 3, 1, 50;
  std::vector<std::uint8_t> valid{1, 1}, flags{0, 0};
  habcast::DomainTally tally(2);
  domain.flag(raw, 2, valid.data(), flags.data(), tally);
  habcast::NoveltyBlock out;
  novelty.check(raw, 2, valid.data(), flags.data(), out, tally);
  CHECK(flags == std::vector<std::uint8_t>{0, 0});
  CHECK(tally.above[1] == 1);
  CHECK(tally.above[0] == 0);
}

TEST_CASE("predict reports an offset-only covariate's range on its own", "[domain][raster]") {
  habcast::test::TempDir dir("offset-only");
  habcast::test::write_text(dir.file("m.toml"), kModel);
  habcast::test::write_text(dir.file("train.csv"), kTraining);
  habcast::test::GridSpec g;
  g.width = 3;
  g.height = 1;
  g.block = 0;
  habcast::test::write_raster(dir.file("x.tif"), g, "Float32", [](int, int) { return 1.0; });
  habcast::test::write_raster(dir.file("effort.tif"), g, "Float32", [](int, int c) { return c == 0 ? 2.0 : (c == 1 ? 3.0 : 50.0); });
  std::string out, err;
  REQUIRE(habcast::test::run_cli({"predict", dir.file("m.toml"), "-q", "-o", dir.file("out"), "-c", "x=" + dir.file("x.tif"),
                                  "-c", "effort=" + dir.file("effort.tif")},
                                 &out, &err) == 0);
  CHECK(habcast::test::read_band(dir.file("out/extrapolation.tif")) == std::vector<double>{0, 0, 0});
  // mu = exp(0.5 + 0.4 - 0.2) x effort at x = 1: the offset still scales the prediction.
  CHECK(habcast::test::read_pixel(dir.file("out/suitability.tif"), 1, 0, 2) == Approx(std::exp(0.7) * 50.0).epsilon(1e-6));
  const auto report = nlohmann::json::parse(habcast::test::read_text(dir.file("out/report.json")));
  const auto& effort = report["extrapolation"]["covariates"]["effort"];
  CHECK(effort["offset_only"] == true);
  CHECK(effort["above_pixels"] == 1);
  CHECK(report["extrapolation"]["novelty"]["covariates"] == nlohmann::json::array({"x"}));
  CHECK_THAT(report["warnings"].dump(), Contains("effort enters only the offset"));
}

TEST_CASE("describe holds an offset-only covariate instead of refusing the model", "[describe]") {
  habcast::test::TempDir dir("offset-describe");
  habcast::test::write_text(dir.file("m.toml"), kModel);
  habcast::test::write_text(dir.file("train.csv"), kTraining);
  std::string out, err;
  REQUIRE(habcast::test::run_cli({"describe", dir.file("m.toml"), "--json"}, &out, &err) == 0);
  auto j = nlohmann::json::parse(out);
  // Held at its training mean (3 hours): the quadratic form's constant (eta at x = 0) is
  // 0.5 + log 3; with --at effort=10 it is 0.5 + log 10, the surface's shape unchanged.
  CHECK_THAT(out, Contains("training mean; enters only the offset"));
  CHECK(find_number(j, "constant") == Approx(0.5 + std::log(3.0)).epsilon(1e-12));
  REQUIRE(habcast::test::run_cli({"describe", dir.file("m.toml"), "--at", "effort=10", "--json"}, &out, &err) == 0);
  j = nlohmann::json::parse(out);
  CHECK(find_number(j, "constant") == Approx(0.5 + std::log(10.0)).epsilon(1e-12));
}

TEST_CASE("an offset naming an undeclared covariate is an error with the offset's line", "[model]") {
  std::string text = kModel;
  text.replace(text.find("log(effort)"), 11, "log(effrt)");
  try {
    (void)habcast::parse_model_text(text, "m.toml");
    FAIL("no error");
  } catch (const habcast::InputError& e) {
    CHECK_THAT(std::string(e.what()), Contains("m.toml:13: offset \"log(effrt)\": uses covariate \"effrt\", which is not declared"));
  }
}
