#pragma once
// `habcast predict M1.toml M2.toml ...`: a model set averaged in one run (docs/model-sets.md).
#include <iosfwd>
#include <string>
#include <vector>

#include "cli/predict_scenarios.hpp"
#include "pipeline/progress.hpp"
#include "predict/predict_options.hpp"

namespace habcast::cli {

struct ModelSetArgs {
  std::vector<double> weights;      ///< --weights; empty: Akaike weights
  std::string se_form = "revised";  ///< --average-se: revised or 2002
};

/// `scenarios` may be empty (any() false): the set over one stack.
int run_predict_model_set(const PredictOptions& options, const std::vector<std::string>& models, const ModelSetArgs& args,
                          const ScenarioArgs& scenarios, Progress& progress, bool json, bool quiet, std::ostream& out);

extern const char* const kModelSetHelp;

}  // namespace habcast::cli
