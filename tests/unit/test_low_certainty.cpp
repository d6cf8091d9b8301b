// The low-certainty rule behind the plain warning, for each family and link (common practice, no
// source: see docs/report.md, "Low certainty"). The numbers below are hand-worked.
#include <catch2/catch.hpp>

#include "core/domain/training_samples.hpp"
#include "core/model/model_file.hpp"
#include "core/prediction/low_certainty.hpp"
#include "test_support.hpp"

using habcast::LowCertaintyRule;

namespace {

habcast::ModelSpec model(const std::string& family, const std::string& link) {
  return habcast::parse_model_text("habcast_model = 1\n[model]\nfamily = \"" + family + "\"\nlink = \"" + link +
                                       "\"\n[covariates.x]\n[coefficients]\nterms = [\"(Intercept)\", \"x\"]\n"
                                       "estimates = [0.0, 2.0]\n",
                                   "m.toml");
}

}  // namespace

TEST_CASE("binomial models: an interval wider than 0.5 in probability is low certainty", "[predict]") {
  for (const char* link : {"logit", "probit", "cloglog"}) {
    const LowCertaintyRule rule = LowCertaintyRule::for_model(model("binomial", link), nullptr);
    CHECK(rule.kind() == LowCertaintyRule::Kind::probability_width);
    CHECK(rule.applies(0.1, 0.7));
    CHECK_FALSE(rule.applies(0.3, 0.7));
  }
}

TEST_CASE("positive means (log links, poisson): an upper limit above 3 x the lower is low certainty", "[predict]") {
  for (const auto& [family, link] : {std::pair{"poisson", "log"}, {"poisson", "identity"}, {"gaussian", "log"}}) {
    INFO(family << "/" << link);
    const LowCertaintyRule rule = LowCertaintyRule::for_model(model(family, link), nullptr);
    CHECK(rule.kind() == LowCertaintyRule::Kind::ratio);
    CHECK(rule.applies(1.0, 3.5));
    CHECK_FALSE(rule.applies(1.0, 2.9));
    CHECK(rule.applies(-0.5, 2.0));  // an identity-link count interval reaching below zero
    CHECK_FALSE(rule.applies(0.0, 0.0));
  }
}

TEST_CASE("gaussian/identity means of any sign are judged against the spread of the fitted mean", "[predict]") {
  // mean = 2 x; training x from -3 to 3 gives fitted means from -6 to 6: spread 12, threshold 6.
  const habcast::ModelSpec spec = model("gaussian", "identity");
  const habcast::TrainingSamples samples =
      habcast::parse_training_samples("x\n-3\n-1\n0\n2\n3\n", "t.csv", spec);
  const LowCertaintyRule rule = LowCertaintyRule::for_model(spec, &samples);
  REQUIRE(rule.kind() == LowCertaintyRule::Kind::spread_width);
  CHECK(rule.spread() == Approx(12.0));
  // A negative mean with a narrow interval is certain enough: the ratio rule flagged every such pixel.
  CHECK_FALSE(rule.applies(-5.0, -3.0));
  CHECK_FALSE(rule.applies(-1.0, 4.9));
  CHECK(rule.applies(-1.0, 5.1));
  CHECK_THAT(rule.description(), Catch::Contains("half the spread of the fitted mean"));
  // Without training samples there is nothing to compare the width with: no pixel is judged.
  const LowCertaintyRule none = LowCertaintyRule::for_model(spec, nullptr);
  CHECK(none.kind() == LowCertaintyRule::Kind::unavailable);
  CHECK_FALSE(none.applies(-100.0, 100.0));
}

TEST_CASE("predict counts gaussian/identity low certainty by the spread rule, and says when it cannot judge", "[predict][raster]") {
  // mean = 2 x, V = I: se(eta) = sqrt(1 + x^2); 95 % width = 2 x 1.959964 x se. Training x from -3
  // to 3: spread 12, threshold 6. x = 0: width 3.92, certain enough (the ratio rule flagged it: the
  // interval spans 0); x = 3: width 12.40, low certainty.
  habcast::test::TempDir dir("low-certainty");
  const std::string model =
      "habcast_model = 1\n[model]\nfamily = \"gaussian\"\n[training]\nsamples = \"t.csv\"\n[covariates.x]\n"
      "[coefficients]\nterms = [\"(Intercept)\", \"x\"]\nestimates = [0.0, 2.0]\ncovariance = [[1.0, 0.0], [0.0, 1.0]]\n";
  habcast::test::write_text(dir.file("m.toml"), model);
  habcast::test::write_text(dir.file("t.csv"), "x\n-3\n-1\n0\n2\n3\n");
  habcast::test::GridSpec g;
  g.width = 2;
  g.height = 1;
  g.block = 0;
  habcast::test::write_raster(dir.file("x.tif"), g, "Float32", [](int, int c) { return c == 0 ? 0.0 : 3.0; });
  std::string out, err;
  REQUIRE(habcast::test::run_cli({"predict", dir.file("m.toml"), "-q", "-o", dir.file("o"), "-c", "x=" + dir.file("x.tif")},
                                 &out, &err) == 0);
  const std::string report = habcast::test::read_text(dir.file("o/report.json"));
  CHECK_THAT(report, Catch::Contains("\"low_certainty\": 1"));
  CHECK_THAT(report, Catch::Contains("half the spread of the fitted mean over the training samples (6)"));
  // Without training samples nothing is judged, and the report says why.
  std::string no_samples = model;
  no_samples.erase(no_samples.find("[training]"), std::string("[training]\nsamples = \"t.csv\"\n").size());
  habcast::test::write_text(dir.file("m2.toml"), no_samples);
  REQUIRE(habcast::test::run_cli({"predict", dir.file("m2.toml"), "-q", "-o", dir.file("o2"), "-c", "x=" + dir.file("x.tif")},
                                 &out, &err) == 0);
  const std::string report2 = habcast::test::read_text(dir.file("o2/report.json"));
  CHECK_THAT(report2, Catch::Contains("\"low_certainty\": 0"));
  CHECK_THAT(report2, Catch::Contains("No pixel was judged for low certainty"));
}
