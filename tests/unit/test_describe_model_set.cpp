// `habcast describe` on a model set: each model's description, Akaike weights, and the averaged
// optimum written out from the models' own optima (Burnham & Anderson 2002 revised form). Models:
// tests/reference/change/set_m2.toml (R 4.2.2 glm on vegan's mite data, see scenario_change.R)
// and a variant of it with a shifted quadratic term and AIC, written here.
#include <catch2/catch.hpp>
#include <cmath>
#include <nlohmann/json.hpp>
#include <string>

#include "test_support.hpp"

namespace {

using Catch::Matchers::Contains;

nlohmann::json describe(const std::vector<std::string>& models) {
  std::vector<std::string> args{"describe"};
  args.insert(args.end(), models.begin(), models.end());
  args.push_back("--json");
  std::string out, err;
  REQUIRE(habcast::test::run_cli(args, &out, &err) == 0);
  return nlohmann::json::parse(out);
}

}  // namespace

TEST_CASE("describe on a model set averages the models' optima with their unconditional SE", "[modelset][describe]") {
  habcast::test::TempDir dir("describe-set");
  const std::string m2 = habcast::test::source_path("tests/reference/change/set_m2.toml");
  std::string text = habcast::test::read_text(m2);
  // A variant: the water-content peak moved (the linear coefficient changed) and AIC 2 higher.
  const auto aic_at = text.find("aic = ");
  text.replace(aic_at, text.find('\n', aic_at) - aic_at, "aic = 95.743100204553542");
  const auto est_at = text.find("estimates = [ ");
  const auto first_comma = text.find(',', est_at);
  const auto second_comma = text.find(',', first_comma + 1);
  text.replace(first_comma + 2, second_comma - first_comma - 2, "0.5");  // the WatrCont coefficient
  habcast::test::write_text(dir.file("variant.toml"), text);

  const nlohmann::json r = describe({m2, dir.file("variant.toml")});
  const double w1 = r["models"][0]["weight"], w2 = r["models"][1]["weight"];
  CHECK(w1 == Approx(1.0 / (1.0 + std::exp(-1.0))).epsilon(1e-9));  // dAIC = 2
  CHECK(r["models"][1]["delta_aic"].get<double>() == Approx(2.0));
  const auto& p1 = r["models"][0]["description"]["canonical"]["stationary_point"]["WatrCont"];
  const auto& p2 = r["models"][1]["description"]["canonical"]["stationary_point"]["WatrCont"];
  const double x1 = p1["raw"], x2 = p2["raw"], s1 = p1["se_raw"], s2 = p2["se_raw"];
  const double mean = w1 * x1 + w2 * x2;
  const double se = std::sqrt(w1 * (s1 * s1 + (x1 - mean) * (x1 - mean)) + w2 * (s2 * s2 + (x2 - mean) * (x2 - mean)));
  const auto& avg = r["averaged_optimum"]["stationary_point"]["WatrCont"];
  CHECK(avg["raw"].get<double>() == Approx(mean).epsilon(1e-12));
  CHECK(avg["se_raw"].get<double>() == Approx(se).epsilon(1e-12));
  CHECK(x1 != Approx(x2));
}

TEST_CASE("describe on a model set says why no optimum is averaged", "[modelset][describe]") {
  const nlohmann::json r = describe({habcast::test::source_path("tests/reference/change/set_m1.toml"),
                                     habcast::test::source_path("tests/reference/change/set_m2.toml")});
  CHECK(r["averaged_optimum"].is_null());
  CHECK_THAT(r["averaged_optimum_not_formed"].get<std::string>(), Contains("set_m1.toml"));
}

TEST_CASE("one model twice: the averaged optimum is that model's", "[modelset][describe]") {
  const std::string m2 = habcast::test::source_path("tests/reference/change/set_m2.toml");
  const nlohmann::json r = describe({m2, m2});
  const auto& p = r["models"][0]["description"]["canonical"]["stationary_point"]["WatrCont"];
  const auto& avg = r["averaged_optimum"]["stationary_point"]["WatrCont"];
  CHECK(avg["raw"].get<double>() == p["raw"].get<double>());
  CHECK(avg["se_raw"].get<double>() == Approx(p["se_raw"].get<double>()).epsilon(1e-12));
  CHECK(avg["between_share"].get<double>() == 0.0);
}
