#pragma once
// `habcast predict M1.toml M2.toml ...`: a model set averaged in one pass (docs/model-sets.md).
// Each model is a member of the same mechanism as scenarios (prediction_members.hpp): rasters
// shared by several models are decoded once per window; the average combiner reads every model's
// prediction of a chunk and forms the weighted mean, the unconditional standard error, the
// between-model share and the union of the models' extrapolation flags.
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <vector>

#include "core/base/error.hpp"
#include "core/model/model_spec.hpp"
#include "core/prediction/model_average.hpp"
#include "pipeline/progress.hpp"
#include "predict/predict_options.hpp"
#include "predict/scenario_set.hpp"

namespace habcast {

struct ModelSetOptions {
  PredictOptions predict;                ///< output folder, -c overrides, level, threads, ...
  std::vector<std::string> model_paths;  ///< two or more model files
  std::vector<double> weights;           ///< empty: Akaike weights from each file's aic
  UnconditionalForm form = UnconditionalForm::revised;
  ScenarioSet scenarios;                 ///< empty: the set over one stack
  std::optional<double> threshold;       ///< --threshold of the change classes
  std::string threshold_from;            ///< --threshold-from
};

struct ModelSetSummary {
  nlohmann::ordered_json report;
  std::vector<std::string> warnings;
  std::vector<std::string> outputs;
  ExitCode exit_code = ExitCode::ok;
};

/// Writes suitability.tif (the weighted mean), uncertainty.tif (unconditional SE and limits),
/// model_choice.tif (between-model share of the variance), extrapolation.tif (union of flags)
/// and report.json. Leaves no partial output when it throws.
ModelSetSummary run_model_set(const ModelSetOptions& options, Progress& progress, const std::string& tool_version);

/// Every name such a run may write, relative to its output folder: the averaged prediction's
/// rasters and report in the folder itself, or (with scenarios) "scenarios.json", "baseline/..." and
/// each scenario's folder with the change ("warm/change.tif"): what it locks, checks and commits.
std::vector<std::string> model_set_owned_names(const std::vector<Scenario>& scenarios);

/// Refuses (InputError naming both files) models that cannot be averaged: another family,
/// response, number of observations or training table than the first model's.
void check_model_set_compatible(const std::vector<const ModelSpec*>& specs);

/// The weights to use: the user's (normalised; refused when negative, not finite, of the wrong
/// count or all zero) or Akaike weights from `aic` (refused, naming the file, when one is missing).
std::vector<double> model_set_weights(const std::vector<double>& given, const std::vector<std::string>& paths,
                                      const std::vector<std::optional<double>>& aic);

}  // namespace habcast
