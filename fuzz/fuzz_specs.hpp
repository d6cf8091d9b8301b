#pragma once
// The fixed model the term and training-table fuzzers parse against: it has every kind of
// covariate the parsers distinguish (continuous, with a transform, categorical with levels).
#include "core/model/model_spec.hpp"

namespace habcast::fuzz {

/// Covariates tmin (continuous), precip (continuous, log transform) and soil (categorical with
/// levels 1 peat, 2 clay, 7 sand); terms (Intercept), tmin, tmin^2, precip:tmin, soil[clay].
const ModelSpec& fixed_spec();

}  // namespace habcast::fuzz
