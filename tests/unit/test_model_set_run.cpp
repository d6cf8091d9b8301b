// `habcast predict M1 M2 ...` end to end: the averaged rasters equal the weighted combination of
// the single models' own predict outputs (Burnham & Anderson 2002 revised form, written out
// here), identical models give the single model, and a model without aic is refused by name.
#include <catch2/catch.hpp>
#include <cmath>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "test_support.hpp"

namespace {

using Catch::Matchers::Contains;
using habcast::test::GridSpec;
using habcast::test::TempDir;

std::string model(const std::string& terms, const std::string& estimates, const std::string& covariance,
                  const std::string& aic) {
  return "habcast_model = 1\n[model]\nfamily = \"binomial\"\nresponse = \"presence\"\n" + aic +
         "[training]\nsamples = \"train.csv\"\n"
         "[covariates.t]\nraster = \"t.tif\"\n" +
         (terms.find("\"p\"") != std::string::npos ? "[covariates.p]\nraster = \"p.tif\"\n" : "") +
         "[coefficients]\nterms = " + terms + "\nestimates = " + estimates + "\ncovariance = " + covariance + "\n";
}

struct SetScene {
  TempDir dir{"modelset"};
  SetScene() {
    const GridSpec grid{24, 20};
    habcast::test::write_raster(dir.file("t.tif"), grid, "Float32", [](int, int c) { return c / 4.0 - 2.0; });
    habcast::test::write_raster(dir.file("p.tif"), grid, "Float32", [](int r, int) { return r / 5.0 - 1.0; });
    habcast::test::write_text(dir.file("train.csv"), "t,p\n-1,-0.5\n2,2\n0,1\n1,0\n");
    habcast::test::write_raster(dir.file("t_warm.tif"), grid, "Float32", [](int, int c) { return c / 4.0 - 1.5; });
    habcast::test::write_text(dir.file("futures.toml"),
                              "habcast_scenarios = 1\n[[scenario]]\nname = \"warm\"\n[scenario.covariates]\nt = \"t_warm.tif\"\n");
    habcast::test::write_text(dir.file("a.toml"), model("[\"(Intercept)\", \"t\"]", "[0.3, 0.8]",
                                                        "[[0.04, 0.01], [0.01, 0.02]]", "aic = 100.0\n"));
    habcast::test::write_text(dir.file("b.toml"),
                              model("[\"(Intercept)\", \"t\", \"p\", \"t^2\"]", "[0.1, 0.7, -0.5, -0.2]",
                                    "[[0.05, 0.0, 0.01, -0.005], [0.0, 0.03, 0.0, 0.002], [0.01, 0.0, 0.02, 0.0], "
                                    "[-0.005, 0.002, 0.0, 0.01]]",
                                    "aic = 101.5\n"));
    habcast::test::write_text(dir.file("c.toml"), model("[\"(Intercept)\", \"t\"]", "[0.3, 0.8]",
                                                        "[[0.04, 0.01], [0.01, 0.02]]", ""));
  }
  int run(std::vector<std::string> args, std::string* err = nullptr) const {
    args.insert(args.begin(), "predict");
    args.insert(args.end(), {"-q", "--checks", "range"});
    std::string out;
    return habcast::test::run_cli(args, &out, err);
  }
};

}  // namespace

TEST_CASE("a model set's rasters are the Akaike-weighted combination of the single models' predictions",
          "[modelset][run]") {
  SetScene s;
  REQUIRE(s.run({s.dir.file("a.toml"), "-o", s.dir.file("a")}) == 0);
  REQUIRE(s.run({s.dir.file("b.toml"), "-o", s.dir.file("b")}) == 0);
  REQUIRE(s.run({s.dir.file("a.toml"), s.dir.file("b.toml"), "-o", s.dir.file("set"), "--threads", "2"}) == 0);
  // Akaike weights for AIC 100 and 101.5: 1 / (1 + exp(-0.75)) and its complement.
  const double wa = 1.0 / (1.0 + std::exp(-0.75)), wb = 1.0 - wa;
  const auto mu_a = habcast::test::read_band(s.dir.file("a/suitability.tif"));
  const auto mu_b = habcast::test::read_band(s.dir.file("b/suitability.tif"));
  const auto se_a = habcast::test::read_band(s.dir.file("a/uncertainty.tif"), 1);
  const auto se_b = habcast::test::read_band(s.dir.file("b/uncertainty.tif"), 1);
  const auto mu = habcast::test::read_band(s.dir.file("set/suitability.tif"));
  const auto se = habcast::test::read_band(s.dir.file("set/uncertainty.tif"), 1);
  const auto share = habcast::test::read_band(s.dir.file("set/model_choice.tif"));
  const auto flags = habcast::test::read_band(s.dir.file("set/extrapolation.tif"));
  const auto flags_a = habcast::test::read_band(s.dir.file("a/extrapolation.tif"));
  const auto flags_b = habcast::test::read_band(s.dir.file("b/extrapolation.tif"));
  for (std::size_t i = 0; i < mu.size(); ++i) {
    INFO("pixel " << i);
    const double m = wa * mu_a[i] + wb * mu_b[i];
    const double da = mu_a[i] - m, db = mu_b[i] - m;
    const double within = wa * se_a[i] * se_a[i] + wb * se_b[i] * se_b[i];
    const double between = wa * da * da + wb * db * db;
    // Single-model inputs are Float32: 1e-5 relative.
    CHECK_THAT(mu[i], Catch::Matchers::WithinRel(m, 1e-5));
    CHECK_THAT(se[i], Catch::Matchers::WithinRel(std::sqrt(within + between), 1e-5));
    CHECK_THAT(share[i], Catch::Matchers::WithinAbs(between / (within + between), 1e-4));
    // Flags: the union of the two models' flags.
    CHECK(flags[i] == static_cast<double>(static_cast<int>(flags_a[i]) | static_cast<int>(flags_b[i])));
  }
  const auto report = nlohmann::json::parse(habcast::test::read_text(s.dir.file("set/report.json")));
  CHECK(report["models"][0]["weight"].get<double>() == Approx(wa).epsilon(1e-12));
  CHECK(report["models"][1]["delta_aic"].get<double>() == Approx(1.5));
  CHECK(report["models"][1]["extrapolation"]["covariates"].contains("p"));
  CHECK_FALSE(report["models"][0]["extrapolation"]["covariates"].contains("p"));
}

TEST_CASE("a model set of one model twice, or with weights 1 and 0, is that model", "[modelset][run]") {
  SetScene s;
  REQUIRE(s.run({s.dir.file("b.toml"), "-o", s.dir.file("b")}) == 0);
  REQUIRE(s.run({s.dir.file("b.toml"), s.dir.file("b.toml"), "-o", s.dir.file("twice")}) == 0);
  REQUIRE(s.run({s.dir.file("b.toml"), s.dir.file("a.toml"), "--weights", "1,0", "-o", s.dir.file("first")}) == 0);
  for (const std::string folder : {"twice", "first"}) {
    INFO(folder);
    CHECK(habcast::test::read_band(s.dir.file(folder + "/suitability.tif")) ==
          habcast::test::read_band(s.dir.file("b/suitability.tif")));
    const auto se = habcast::test::read_band(s.dir.file(folder + "/uncertainty.tif"), 1);
    const auto se_b = habcast::test::read_band(s.dir.file("b/uncertainty.tif"), 1);
    const auto lo = habcast::test::read_band(s.dir.file(folder + "/uncertainty.tif"), 2);
    const auto lo_b = habcast::test::read_band(s.dir.file("b/uncertainty.tif"), 2);
    for (std::size_t i = 0; i < se.size(); ++i) {
      CHECK_THAT(se[i], Catch::Matchers::WithinRel(se_b[i], 1e-6));
      CHECK_THAT(lo[i], Catch::Matchers::WithinRel(lo_b[i], 1e-5));
    }
    CHECK(habcast::test::read_band(s.dir.file(folder + "/extrapolation.tif")) ==
          habcast::test::read_band(s.dir.file("b/extrapolation.tif")));
  }
}

TEST_CASE("a model set refuses missing AIC, wrong weights and models of different things", "[modelset][errors]") {
  SetScene s;
  std::string err;
  SECTION("a model without aic and no --weights: the file is named") {
    CHECK(s.run({s.dir.file("a.toml"), s.dir.file("c.toml"), "-o", s.dir.file("x")}, &err) == 3);
    CHECK_THAT(err, Contains("c.toml"));
    CHECK_THAT(err, Contains("--weights"));
  }
  SECTION("with --weights the missing aic is no obstacle") {
    CHECK(s.run({s.dir.file("a.toml"), s.dir.file("c.toml"), "--weights", "2,1", "-o", s.dir.file("x")}) == 0);
  }
  SECTION("a weight per model") {
    CHECK(s.run({s.dir.file("a.toml"), s.dir.file("b.toml"), "--weights", "1", "-o", s.dir.file("x")}, &err) == 2);
    CHECK_THAT(err, Contains("1 weights for 2 models"));
  }
  SECTION("a different response") {
    std::string text = habcast::test::read_text(s.dir.file("b.toml"));
    text.replace(text.find("presence"), 8, "abundance");
    habcast::test::write_text(s.dir.file("d.toml"), text);
    CHECK(s.run({s.dir.file("a.toml"), s.dir.file("d.toml"), "-o", s.dir.file("x")}, &err) == 3);
    CHECK_THAT(err, Contains("response"));
  }
}

TEST_CASE("a model set under scenarios: the averaged change and its SE combine each model's own change",
          "[modelset][scenarios]") {
  SetScene s;
  const std::string futures = s.dir.file("futures.toml");
  REQUIRE(s.run({s.dir.file("a.toml"), "--scenarios", futures, "--threshold", "0.5", "-o", s.dir.file("a")}) == 0);
  REQUIRE(s.run({s.dir.file("b.toml"), "--scenarios", futures, "--threshold", "0.5", "-o", s.dir.file("b")}) == 0);
  REQUIRE(s.run({s.dir.file("a.toml"), s.dir.file("b.toml"), "--scenarios", futures, "--threshold", "0.5", "-o",
                 s.dir.file("set"), "--threads", "2"}) == 0);
  const double wa = 1.0 / (1.0 + std::exp(-0.75)), wb = 1.0 - wa;  // AIC 100 and 101.5
  const auto da = habcast::test::read_band(s.dir.file("a/warm/change.tif"), 1);
  const auto db = habcast::test::read_band(s.dir.file("b/warm/change.tif"), 1);
  const auto sa = habcast::test::read_band(s.dir.file("a/warm/change.tif"), 2);
  const auto sb = habcast::test::read_band(s.dir.file("b/warm/change.tif"), 2);
  const auto d = habcast::test::read_band(s.dir.file("set/warm/change.tif"), 1);
  const auto se = habcast::test::read_band(s.dir.file("set/warm/change.tif"), 2);
  const auto classes = habcast::test::read_band(s.dir.file("set/warm/change_class.tif"), 1);
  const auto mb = habcast::test::read_band(s.dir.file("set/baseline/suitability.tif"));
  const auto ms = habcast::test::read_band(s.dir.file("set/warm/suitability.tif"));
  const auto fb = habcast::test::read_band(s.dir.file("set/baseline/extrapolation.tif"));
  const auto fs = habcast::test::read_band(s.dir.file("set/warm/extrapolation.tif"));
  for (std::size_t i = 0; i < d.size(); ++i) {
    INFO("pixel " << i);
    // Burnham & Anderson's revised form over the models' changes (written out here).
    const double m = wa * da[i] + wb * db[i];
    const double v = wa * (sa[i] * sa[i] + (da[i] - m) * (da[i] - m)) + wb * (sb[i] * sb[i] + (db[i] - m) * (db[i] - m));
    CHECK_THAT(d[i], Catch::Matchers::WithinAbs(m, 1e-6));
    CHECK_THAT(se[i], Catch::Matchers::WithinRel(std::sqrt(v), 1e-5));
    // The averaged change is the change of the averaged prediction.
    CHECK_THAT(d[i], Catch::Matchers::WithinAbs(ms[i] - mb[i], 1e-6));
    // Marks follow the union flags of each stack.
    const int mark = static_cast<int>(classes[i]) & 48;
    CHECK(((mark & 16) != 0) == (fb[i] != 0.0));
    CHECK(((mark & 32) != 0) == (fs[i] != 0.0));
  }
  const auto report = nlohmann::json::parse(habcast::test::read_text(s.dir.file("set/scenarios.json")));
  CHECK(report["scenarios"][0]["compared_pixels"] == 24 * 20);
}

TEST_CASE("a model set of one model twice under a scenario is that model's scenario run", "[modelset][scenarios]") {
  SetScene s;
  const std::string futures = s.dir.file("futures.toml");
  REQUIRE(s.run({s.dir.file("b.toml"), "--scenarios", futures, "--threshold", "0.5", "-o", s.dir.file("one")}) == 0);
  REQUIRE(s.run({s.dir.file("b.toml"), s.dir.file("b.toml"), "--scenarios", futures, "--threshold", "0.5", "-o",
                 s.dir.file("twice")}) == 0);
  const auto c1 = habcast::test::read_band(s.dir.file("one/warm/change.tif"), 1);
  const auto c2 = habcast::test::read_band(s.dir.file("twice/warm/change.tif"), 1);
  const auto s1 = habcast::test::read_band(s.dir.file("one/warm/change.tif"), 2);
  const auto s2 = habcast::test::read_band(s.dir.file("twice/warm/change.tif"), 2);
  for (std::size_t i = 0; i < c1.size(); ++i) {
    CHECK_THAT(c2[i], Catch::Matchers::WithinAbs(c1[i], 1e-7));
    CHECK_THAT(s2[i], Catch::Matchers::WithinRel(s1[i], 1e-6));
  }
  // Both classify on the stored suitability maps, which are equal.
  CHECK(habcast::test::read_band(s.dir.file("twice/warm/change_class.tif")) ==
        habcast::test::read_band(s.dir.file("one/warm/change_class.tif")));
}

TEST_CASE("models of a set fitted to one training table share their checks and still flag as each alone",
          "[modelset][run]") {
  // a.toml and b.toml read t and p from the same table; b adds the interaction t:p, so it checks
  // the pair's hull as well. The set checks the range, hull, NT2 and MESS once and each model's
  // own pairs: every model's counts and the union must be those of the models run alone.
  SetScene s;
  habcast::test::write_text(s.dir.file("train.csv"), "t,p\n-1,-0.5\n2,2\n0,1\n1,0\n-0.5,1.5\n1.5,-0.8\n0.2,0.3\n");
  habcast::test::write_text(s.dir.file("a2.toml"),
                            model("[\"(Intercept)\", \"t\", \"p\"]", "[0.3, 0.8, -0.2]",
                                  "[[0.04, 0.01, 0.0], [0.01, 0.02, 0.0], [0.0, 0.0, 0.03]]", "aic = 100.0\n"));
  habcast::test::write_text(s.dir.file("b2.toml"),
                            model("[\"(Intercept)\", \"t\", \"p\", \"t:p\"]", "[0.1, 0.7, -0.5, 0.3]",
                                  "[[0.05, 0.0, 0.01, 0.0], [0.0, 0.03, 0.0, 0.0], [0.01, 0.0, 0.02, 0.0], "
                                  "[0.0, 0.0, 0.0, 0.01]]",
                                  "aic = 100.5\n"));
  auto run_all_checks = [&](std::vector<std::string> args) {
    args.insert(args.begin(), "predict");
    args.insert(args.end(), {"-q"});
    std::string out, err;
    const int code = habcast::test::run_cli(args, &out, &err);
    INFO(err);
    REQUIRE(code == 0);
  };
  run_all_checks({s.dir.file("a2.toml"), "-o", s.dir.file("a")});
  run_all_checks({s.dir.file("b2.toml"), "-o", s.dir.file("b")});
  // c2 is a2 with t standardised: the same raster, other model values, so nothing is shared.
  std::string c2 = model("[\"(Intercept)\", \"t\", \"p\"]", "[0.3, 1.6, -0.2]",
                         "[[0.04, 0.02, 0.0], [0.02, 0.08, 0.0], [0.0, 0.0, 0.03]]", "aic = 100.0\n");
  c2.replace(c2.find("raster = \"t.tif\"\n"), 17, "raster = \"t.tif\"\ncenter = 0.5\nscale = 2.0\n");
  habcast::test::write_text(s.dir.file("c2.toml"), c2);
  run_all_checks({s.dir.file("c2.toml"), "-o", s.dir.file("c")});
  run_all_checks({s.dir.file("a2.toml"), s.dir.file("c2.toml"), "-o", s.dir.file("ac"), "--weights", "0.5,0.5"});
  {
    const auto mu_a = habcast::test::read_band(s.dir.file("a/suitability.tif"));
    const auto mu_c = habcast::test::read_band(s.dir.file("c/suitability.tif"));
    const auto mu = habcast::test::read_band(s.dir.file("ac/suitability.tif"));
    for (std::size_t i = 0; i < mu.size(); ++i) CHECK_THAT(mu[i], Catch::Matchers::WithinRel(0.5 * mu_a[i] + 0.5 * mu_c[i], 1e-5));
  }
  // d2 has b2's pair t:p too (and a quadratic term): in a set after b2 it takes that pair's
  // verdicts from b2's mask instead of checking the pair's hull again.
  habcast::test::write_text(s.dir.file("d2.toml"),
                            model("[\"(Intercept)\", \"t\", \"p\", \"t:p\", \"t^2\"]", "[0.2, 0.6, -0.4, 0.2, -0.1]",
                                  "[[0.05, 0.0, 0.01, 0.0, 0.0], [0.0, 0.03, 0.0, 0.0, 0.0], [0.01, 0.0, 0.02, 0.0, 0.0], "
                                  "[0.0, 0.0, 0.0, 0.01, 0.0], [0.0, 0.0, 0.0, 0.0, 0.01]]",
                                  "aic = 101.0\n"));
  run_all_checks({s.dir.file("d2.toml"), "-o", s.dir.file("d")});
  run_all_checks({s.dir.file("b2.toml"), s.dir.file("d2.toml"), "-o", s.dir.file("bd")});
  {
    const auto alone = nlohmann::json::parse(habcast::test::read_text(s.dir.file("d/report.json")))["extrapolation"];
    const auto set = nlohmann::json::parse(habcast::test::read_text(s.dir.file("bd/report.json")));
    const auto& mine = set["models"][1]["extrapolation"];
    CHECK(mine["causes"]["outside_pair_hull"]["pixels"] == alone["causes"]["outside_pair_hull"]["pixels"]);
    CHECK(mine["flagged_pixels"] == alone["flagged_pixels"]);
    CHECK(habcast::test::read_band(s.dir.file("bd/extrapolation.tif")) ==
          habcast::test::read_band(s.dir.file("d/extrapolation.tif")));  // b2's flags are d2's
  }
  // Both orders: the first model of a set makes the shared checks, the others take them over.
  run_all_checks({s.dir.file("a2.toml"), s.dir.file("b2.toml"), "-o", s.dir.file("ab"), "--threads", "2"});
  run_all_checks({s.dir.file("b2.toml"), s.dir.file("a2.toml"), "-o", s.dir.file("ba"), "--threads", "2"});
  const auto flags_a = habcast::test::read_band(s.dir.file("a/extrapolation.tif"));
  const auto flags_b = habcast::test::read_band(s.dir.file("b/extrapolation.tif"));
  int pair_flagged = 0;
  for (std::size_t i = 0; i < flags_b.size(); ++i)
    pair_flagged += (static_cast<int>(flags_b[i]) & 16) != 0 && flags_b[i] != 255 ? 1 : 0;
  CHECK(pair_flagged > 0);  // the scene exercises the pair check that only b makes
  // The second model of a set also reads the first one's model values (the same covariates read
  // the same way): the average must still be that of the models run alone. Akaike weights for
  // AIC 100 and 100.5: 1 / (1 + exp(-0.25)) and its complement.
  const double wa = 1.0 / (1.0 + std::exp(-0.25)), wb = 1.0 - wa;
  const auto mu_a = habcast::test::read_band(s.dir.file("a/suitability.tif"));
  const auto mu_b = habcast::test::read_band(s.dir.file("b/suitability.tif"));
  for (const std::string order : {"ab", "ba"}) {
    INFO("set " << order);
    const auto mu = habcast::test::read_band(s.dir.file(order + "/suitability.tif"));
    for (std::size_t i = 0; i < mu.size(); ++i) CHECK_THAT(mu[i], Catch::Matchers::WithinRel(wa * mu_a[i] + wb * mu_b[i], 1e-5));
    const auto flags = habcast::test::read_band(s.dir.file(order + "/extrapolation.tif"));
    for (std::size_t i = 0; i < flags.size(); ++i) {
      INFO("pixel " << i);
      CHECK(flags[i] == static_cast<double>(static_cast<int>(flags_a[i]) | static_cast<int>(flags_b[i])));
    }
    const auto set = nlohmann::json::parse(habcast::test::read_text(s.dir.file(order + "/report.json")));
    for (std::size_t k = 0; k < 2; ++k) {
      const std::string name(1, order[k]);
      INFO("model " << name);
      const auto alone =
          nlohmann::json::parse(habcast::test::read_text(s.dir.file(name + "/report.json")))["extrapolation"];
      const auto& mine = set["models"][k]["extrapolation"];
      CHECK(mine["flagged_pixels"] == alone["flagged_pixels"]);
      for (const char* cause : {"outside_range", "outside_hull", "unseen_level", "novel_combination", "outside_pair_hull"})
        CHECK(mine["causes"][cause]["pixels"] == alone["causes"][cause]["pixels"]);
      for (const char* c : {"t", "p"}) {
        CHECK(mine["covariates"][c]["below_pixels"] == alone["covariates"][c]["below_pixels"]);
        CHECK(mine["covariates"][c]["above_pixels"] == alone["covariates"][c]["above_pixels"]);
      }
      CHECK((mine["causes"]["outside_pair_hull"]["pixels"].get<long>() > 0) == (name == "b"));
    }
  }
}
