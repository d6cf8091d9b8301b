#pragma once
// Which raster each covariate of a model is read from: predict's -c overrides, else the model
// file's own default. Shared by a single prediction and the baseline of a scenario run.
#include <string>
#include <vector>

#include "core/model/model_spec.hpp"
#include "predict/predict_options.hpp"
#include "predict/prediction_report.hpp"

namespace habcast {

/// The model's covariate names, comma-separated, for messages.
std::string covariate_list(const ModelSpec& spec);

/// One input per covariate of `spec`, in the model's order. Throws UsageError for a -c naming no
/// covariate of the model, and for a covariate with neither -c nor a default raster.
std::vector<CovariateInput> resolve_inputs(const ModelSpec& spec, const PredictOptions& options);

}  // namespace habcast
