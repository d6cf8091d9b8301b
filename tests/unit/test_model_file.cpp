// The model file reader: a valid file parses into the expected spec, and every class of mistake is
// reported with the file, the line and what is wrong.
#include <catch2/catch.hpp>
#include <string>

#include "core/base/error.hpp"
#include "core/model/model_file.hpp"
#include "core/model/term_plan.hpp"

namespace {

// Line numbers matter to the tests below: keep this text's layout.
const std::string kValid = R"TOML(habcast_model = 1
[model]
family = "binomial"
name = "test"

[training]
samples = "train.csv"

[covariates.tmin]
units = "degC"
center = 2.0
scale = 4.0

[covariates.precip]
transform = "log"

[covariates.soil]
type = "categorical"
levels = [ { code = 1, name = "peat" }, { code = 2, name = "sand" } ]
reference = "peat"

[coefficients]
terms = [ "(Intercept)", "tmin", "tmin^2", "precip", "tmin:precip", "soil[sand]" ]
estimates = [ 0.5, 1, -2, 0.25, 0.125, -1 ]
covariance = [
  [ 1, 0, 0, 0, 0, 0 ],
  [ 0, 1, 0, 0, 0, 0 ],
  [ 0, 0, 1, 0, 0, 0 ],
  [ 0, 0, 0, 1, 0, 0 ],
  [ 0, 0, 0, 0, 1, 0 ],
  [ 0, 0, 0, 0, 0, 1 ],
]
)TOML";

std::string replace(std::string text, const std::string& from, const std::string& to) {
  const auto at = text.find(from);
  REQUIRE(at != std::string::npos);
  return text.replace(at, from.size(), to);
}

/// Parses `text` and returns the error message (fails the test when parsing succeeds).
std::string error_of(const std::string& text) {
  try {
    habcast::parse_model_text(text, "/data/m.toml");
  } catch (const habcast::InputError& e) {
    return e.what();
  }
  FAIL("expected an InputError");
  return "";
}

}  // namespace

TEST_CASE("a valid model file parses into the spec it describes", "[model]") {
  const habcast::ModelSpec spec = habcast::parse_model_text(kValid, "/data/m.toml");
  CHECK(spec.family == habcast::Family::binomial);
  CHECK(spec.link == habcast::Link::logit);  // default link of the binomial family
  REQUIRE(spec.covariates.size() == 3);
  CHECK(spec.covariates[0].name == "tmin");  // file order, not alphabetical
  CHECK(spec.covariates[1].name == "precip");
  CHECK(spec.covariates[1].transform == habcast::Transform::log);
  CHECK(spec.covariates[2].categorical);
  CHECK(spec.covariates[2].reference_level == "peat");
  CHECK(spec.covariates[0].center == 2.0);
  CHECK(spec.covariates[0].scale == 4.0);
  CHECK(*spec.training_samples == "/data/train.csv");  // relative to the model file
  CHECK(spec.terms.size() == 6);
  CHECK(spec.estimates[2] == -2.0);
  REQUIRE(spec.covariance);
  CHECK(spec.covariance->rows() == 6);
  CHECK(spec.term_lines[0] == 23);
}

TEST_CASE("model file errors name the file, the line and the problem", "[model]") {
  using Catch::Matchers::Contains;
  SECTION("unknown covariate in a term") {
    const std::string msg = error_of(replace(kValid, "\"tmin:precip\"", "\"tmin:prcp\""));
    CHECK_THAT(msg, Contains("/data/m.toml:23:") && Contains("\"prcp\"") && Contains("not declared") &&
                        Contains("tmin, precip, soil"));
  }
  SECTION("duplicate term, in another factor order") {
    const std::string msg = error_of(replace(kValid, "\"soil[sand]\"", "\"precip:tmin\""));
    CHECK_THAT(msg, Contains("m.toml:23:") && Contains("repeats term 5"));
  }
  SECTION("non-finite coefficient") {
    CHECK_THAT(error_of(replace(kValid, "0.125, -1 ]", "nan, -1 ]")), Contains("m.toml:24:") && Contains("finite"));
    CHECK_THAT(error_of(replace(kValid, "0.125, -1 ]", "inf, -1 ]")), Contains("finite"));
  }
  SECTION("covariance of the wrong size") {
    const std::string msg = error_of(replace(kValid, "  [ 0, 0, 0, 0, 0, 1 ],\n", ""));
    CHECK_THAT(msg, Contains("m.toml:25:") && Contains("5 rows") && Contains("6 terms"));
    CHECK_THAT(error_of(replace(kValid, "  [ 0, 0, 0, 0, 0, 1 ],", "  [ 0, 0, 0, 0, 1 ],")), Contains("row 6"));
  }
  SECTION("covariance not symmetric") {
    const std::string msg = error_of(replace(kValid, "  [ 0, 1, 0, 0, 0, 0 ],", "  [ 0, 1, 0.5, 0, 0, 0 ],"));
    CHECK_THAT(msg, Contains("m.toml:25:") && Contains("not symmetric") && Contains("row 2, column 3"));
  }
  SECTION("covariance not positive semi-definite") {
    std::string text = replace(kValid, "  [ 1, 0, 0, 0, 0, 0 ],\n  [ 0, 1, 0, 0, 0, 0 ],",
                               "  [ 1, 2, 0, 0, 0, 0 ],\n  [ 2, 1, 0, 0, 0, 0 ],");
    CHECK_THAT(error_of(text), Contains("not positive semi-definite") && Contains("-1"));
  }
  SECTION("a term the syntax does not know") {
    CHECK_THAT(error_of(replace(kValid, "\"tmin^2\"", "\"cbrt(tmin)\"")), Contains("unknown function \"cbrt\""));
    CHECK_THAT(error_of(replace(kValid, "\"tmin^2\"", "\"tmin^0\"")), Contains("power must be a whole number"));
    CHECK_THAT(error_of(replace(kValid, "\"tmin^2\"", "\"tmin*precip\"")), Contains("unexpected \"*precip\""));
    CHECK_THAT(error_of(replace(kValid, "\"soil[sand]\"", "\"soil[clay]\"")), Contains("\"clay\" is not a level"));
    CHECK_THAT(error_of(replace(kValid, "\"soil[sand]\"", "\"soil\"")), Contains("categorical"));
  }
  SECTION("family and link that do not fit") {
    const std::string msg = error_of(replace(kValid, "family = \"binomial\"", "family = \"binomial\"\nlink = \"log\""));
    CHECK_THAT(msg, Contains("m.toml:4:") && Contains("does not fit family"));
    CHECK_THAT(error_of(replace(kValid, "\"binomial\"", "\"gamma\"")), Contains("unknown family"));
  }
  SECTION("unknown keys are typos, not silently ignored") {
    CHECK_THAT(error_of(replace(kValid, "center = 2.0", "centre = 2.0")),
               Contains("m.toml:11:") && Contains("unknown key \"centre\""));
  }
  SECTION("version, TOML syntax, scale, levels") {
    CHECK_THAT(error_of(replace(kValid, "habcast_model = 1", "habcast_model = 7")), Contains("unsupported model format"));
    CHECK_THAT(error_of(replace(kValid, "habcast_model = 1", "")), Contains("habcast_model"));
    CHECK_THAT(error_of(replace(kValid, "scale = 4.0", "scale = [")), Contains("not valid TOML"));
    CHECK_THAT(error_of(replace(kValid, "scale = 4.0", "scale = 0")), Contains("m.toml:12:") && Contains("positive"));
    CHECK_THAT(error_of(replace(kValid, "code = 2, name = \"sand\"", "code = 1, name = \"sand\"")),
               Contains("listed twice"));
    CHECK_THAT(error_of(replace(kValid, "reference = \"peat\"", "reference = \"loam\"")), Contains("not among the levels"));
  }
}

TEST_CASE("term syntax reads like model notation", "[model]") {
  const habcast::ModelSpec spec = habcast::parse_model_text(kValid, "/data/m.toml");
  auto canonical = [&](const std::string& label) { return habcast::parse_term(label, spec, "m", 1).canonical; };
  CHECK(canonical("precip:tmin") == canonical("tmin:precip"));
  CHECK(canonical("tmin:tmin") == canonical("tmin^2"));
  CHECK(canonical("I(tmin^2)") == canonical("tmin^2"));
  CHECK(canonical(" tmin : precip ^ 2 ") == "tmin:precip^2");
  CHECK(canonical("soil[2]") == canonical("soil[sand]"));
  CHECK(canonical("log(precip)^2") == "log(precip)^2");
  CHECK(habcast::parse_term("1", spec, "m", 1).intercept);
}
