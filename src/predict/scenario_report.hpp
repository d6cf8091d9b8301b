#pragma once
// The report of a scenario run (scenarios.json, scenarios.csv) and its plain-language warnings:
// per scenario the area and share gained, lost, stable and not distinguishable, how much of each
// is extrapolated, and the share of pixels extrapolated per cause beside the baseline's.
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <vector>

#include "core/model/model_spec.hpp"
#include "core/prediction/block_predictor.hpp"
#include "core/prediction/change_combiner.hpp"
#include "predict/scenario_set.hpp"
#include "raster/raster_grid.hpp"

namespace habcast {

struct ScenarioReportContext {
  std::string tool_version;
  const ModelSpec* spec = nullptr;
  bool with_domain = false;                 ///< training samples known: flags and marks exist
  RasterGrid grid;
  double level = 0.95;
  std::optional<double> threshold;
  std::string threshold_source;             ///< "--threshold", "scenario file FILE", or empty
  const ScenarioSet* scenarios = nullptr;
  const PredictionTally* baseline = nullptr;
  std::vector<const PredictionTally*> tallies;   ///< per scenario
  std::vector<const ChangeTally*> changes;       ///< per scenario
  std::vector<std::string> folders;              ///< per scenario
  std::string baseline_folder;
  std::vector<std::pair<std::string, std::string>> outputs;  ///< role -> path (top-level files)
  double elapsed_seconds = 0.0;
  std::string started_utc;
};

std::vector<std::string> scenario_warnings(const ScenarioReportContext& context);
nlohmann::ordered_json scenario_report(const ScenarioReportContext& context, const std::vector<std::string>& warnings);

/// scenarios.csv: one row per scenario and item (a change class, or an extrapolation cause), with
/// pixels, share, area and extrapolated pixels and share; cause rows carry the baseline's share.
std::string scenario_csv(const ScenarioReportContext& context);

}  // namespace habcast
