#pragma once
// `habcast predict --scenarios`: one model over a baseline stack and several scenario stacks in
// one pass over the grid, with the change of every scenario against the baseline (docs/scenarios.md).
// Each (model, stack) pair is a member: a BlockPredictor of its own, fed from covariate windows
// decoded once and shared by every member that reads the same raster; the change combiner then
// reads the baseline's and the scenario's chunk (design matrix, linear predictor) while in cache.
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <vector>

#include "core/base/error.hpp"
#include "pipeline/progress.hpp"
#include "predict/predict_options.hpp"
#include "predict/scenario_set.hpp"

namespace habcast {

struct ScenarioRunOptions {
  PredictOptions predict;             ///< the model, the baseline's -c overrides, the output folder, ...
  ScenarioSet scenarios;
  std::optional<double> threshold;    ///< --threshold (the scenario file may also set one)
  std::string threshold_from;         ///< --threshold-from: evaluate's JSON or binary map, or empty
  std::string change_quicklook;       ///< png, svg or pdf: draw change_class.EXT in each scenario's folder; empty: none
};

struct ScenarioSummary {
  nlohmann::ordered_json report;      ///< the content of scenarios.json
  std::vector<std::string> warnings;
  std::vector<std::string> outputs;   ///< every file written
  ExitCode exit_code = ExitCode::ok;
};

/// Runs the baseline and every scenario. Output folder layout: baseline/ and one folder per
/// scenario with predict's outputs, plus change.tif and change_class.tif in each scenario's
/// folder, and scenarios.json, scenarios.csv at the top. Leaves no partial output when it throws.
ScenarioSummary run_scenarios(const ScenarioRunOptions& options, Progress& progress, const std::string& tool_version);

/// Every name such a run may write, relative to its output folder ("scenarios.json",
/// "baseline/report.json", "warm/change.tif", ...): what it locks, checks and commits as one set.
std::vector<std::string> scenario_owned_names(const std::vector<Scenario>& scenarios);

}  // namespace habcast
