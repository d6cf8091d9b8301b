// The model writer: what `habcast fit` writes must read back through read_model_file exactly.
#include <catch2/catch.hpp>
#include <filesystem>
#include <fstream>
#include <limits>

#include "core/base/error.hpp"
#include "core/model/model_file.hpp"
#include "core/model/model_writer.hpp"
#include "fit_reference_support.hpp"

using namespace habcast;

namespace {

void require_same_spec(const ModelSpec& a, const ModelSpec& b) {
  CHECK(a.name == b.name);
  CHECK(a.description == b.description);
  CHECK(a.response == b.response);
  CHECK(a.family == b.family);
  CHECK(a.link == b.link);
  CHECK(a.terms == b.terms);
  CHECK(a.estimates == b.estimates);  // bit-for-bit: 17 significant digits round-trip a double
  REQUIRE(a.covariance.has_value() == b.covariance.has_value());
  if (a.covariance) CHECK((*a.covariance).cwiseEqual(*b.covariance).all());
  CHECK(a.training_samples == b.training_samples);
  CHECK(a.deviance == b.deviance);
  CHECK(a.null_deviance == b.null_deviance);
  CHECK(a.aic == b.aic);
  CHECK(a.observations == b.observations);
  CHECK(a.offset_term == b.offset_term);
  CHECK(a.offset_constant == b.offset_constant);
  REQUIRE(a.covariates.size() == b.covariates.size());
  for (std::size_t i = 0; i < a.covariates.size(); ++i) {
    const Covariate& x = a.covariates[i];
    const Covariate& y = b.covariates[i];
    INFO("covariate " << x.name);
    CHECK(x.name == y.name);
    CHECK(x.categorical == y.categorical);
    CHECK(x.units == y.units);
    CHECK(x.description == y.description);
    CHECK(x.transform == y.transform);
    CHECK(x.center == y.center);
    CHECK(x.scale == y.scale);
    CHECK(x.raster == y.raster);
    CHECK(x.band == y.band);
    CHECK(x.reference_level == y.reference_level);
    REQUIRE(x.levels.size() == y.levels.size());
    for (std::size_t l = 0; l < x.levels.size(); ++l) {
      CHECK(x.levels[l].code == y.levels[l].code);
      CHECK(x.levels[l].name == y.levels[l].name);
    }
  }
}

}  // namespace

TEST_CASE("A model file written by habcast reads back identically (R's mite reference model)", "[fit]") {
  const std::string path = test::reference_path("mite/model.toml");
  const ModelSpec original = read_model_file(path);
  const std::string text = write_model_text(original, path, {"written by the round-trip test"});
  const ModelSpec again = parse_model_text(text, path);
  require_same_spec(original, again);
  // Writing the re-read model gives the same text: the writer is a fixed point.
  CHECK(write_model_text(again, path, {"written by the round-trip test"}) == text);
}

TEST_CASE("Awkward numbers, strings, paths and fit statistics survive a round trip", "[fit]") {
  ModelSpec spec;
  spec.path = "out/sub/model.toml";
  spec.name = "quote \" backslash \\ tab \t newline \n end";
  spec.response = "presence";
  spec.family = Family::poisson;
  spec.link = Link::log;
  spec.deviance = 123.456789012345678;
  spec.null_deviance = 0.0;
  spec.aic = -1e-300;
  spec.observations = 42;
  spec.training_samples = "out/sub/model-training.csv";
  Covariate a = test::continuous("tmin");
  a.center = 0.1;
  a.scale = 3.0;  // an integer-valued double must stay a TOML float
  a.transform = Transform::log1p;
  a.units = "degC";
  a.raster = "rasters/tmin.tif";
  a.band = 2;
  Covariate b = test::categorical("soil", {{1, "peat"}, {7, "sand \"coarse\""}, {-3, "3"}}, "sand \"coarse\"");
  spec.covariates = {a, b};
  spec.terms = {"(Intercept)", "tmin", "log(tmin)^2", "soil[peat]", "soil[3]"};
  spec.estimates = {1.0, -0.0, std::numeric_limits<double>::denorm_min(), 1.7976931348623157e308, 5e-324 * 3};
  Eigen::MatrixXd V = Eigen::MatrixXd::Identity(5, 5) * (1.0 / 3.0);
  V(0, 1) = V(1, 0) = 1e-17;
  spec.covariance = V;
  spec.offset_constant = -2.5;

  const std::string text = write_model_text(spec, spec.path);
  const ModelSpec again = parse_model_text(text, spec.path);
  require_same_spec(spec, again);
  CHECK(text.find("raster = \"../../rasters/tmin.tif\"") != std::string::npos);
  CHECK(text.find("samples = \"model-training.csv\"") != std::string::npos);
  CHECK(toml_number(3.0) == "3.0");
  CHECK(toml_number(1e-5) == "1.0000000000000001e-05");
}

TEST_CASE("The model reader rejects fit statistics that cannot be right", "[fit]") {
  const std::string base =
      "habcast_model = 1\n[model]\nfamily = \"binomial\"\n%s\n[covariates.x]\n[coefficients]\nterms = [\"(Intercept)\", \"x\"]\n"
      "estimates = [0.5, 1.0]\n";
  auto with = [&](const std::string& line) {
    std::string s = base;
    s.replace(s.find("%s"), 2, line);
    return s;
  };
  CHECK(parse_model_text(with("deviance = 12.5\nnull_deviance = 20.0\naic = 16.5\nn = 30"), "m.toml").observations == 30);
  CHECK_THROWS_WITH(parse_model_text(with("deviance = -1.0"), "m.toml"),
                    Catch::Contains("m.toml:4") && Catch::Contains("cannot be negative"));
  CHECK_THROWS_WITH(parse_model_text(with("n = 0"), "m.toml"), Catch::Contains("m.toml:4") && Catch::Contains("1 or more"));
  CHECK_THROWS_WITH(parse_model_text(with("n = 2.5"), "m.toml"), Catch::Contains("whole number"));
  CHECK_THROWS_WITH(parse_model_text(with("devience = 3.0"), "m.toml"), Catch::Contains("unknown key \"devience\""));
}
