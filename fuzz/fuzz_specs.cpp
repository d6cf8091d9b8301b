#include "fuzz_specs.hpp"

namespace habcast::fuzz {

namespace {

ModelSpec make_spec() {
  ModelSpec spec;
  spec.path = "fuzz-model.toml";
  spec.family = Family::binomial;
  spec.link = Link::logit;
  Covariate tmin;
  tmin.name = "tmin";
  tmin.center = 1.0;
  tmin.scale = 2.0;
  tmin.line = 5;
  Covariate precip;
  precip.name = "precip";
  precip.transform = Transform::log;
  precip.line = 9;
  Covariate soil;
  soil.name = "soil";
  soil.categorical = true;
  soil.levels = {{1, "peat"}, {2, "clay"}, {7, "sand"}};
  soil.reference_level = "peat";
  soil.line = 12;
  spec.covariates = {tmin, precip, soil};
  spec.terms = {"(Intercept)", "tmin", "tmin^2", "precip:tmin", "soil[clay]"};
  spec.term_lines = {20, 20, 20, 20, 20};
  spec.estimates = {0.1, 0.2, -0.3, 0.4, 0.5};
  spec.training_samples = "fuzz-training.csv";
  return spec;
}

}  // namespace

const ModelSpec& fixed_spec() {
  static const ModelSpec spec = make_spec();
  return spec;
}

}  // namespace habcast::fuzz
