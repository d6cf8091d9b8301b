#pragma once
// `habcast predict --scenarios FILE` / `--scenario NAME:COVARIATE=FILE`: the baseline and every
// scenario in one run, with the change against the baseline (docs/scenarios.md).
#include <iosfwd>
#include <optional>
#include <string>
#include <vector>

#include "pipeline/progress.hpp"
#include "predict/predict_options.hpp"

namespace habcast::cli {

struct ScenarioArgs {
  std::string file;                     ///< --scenarios
  std::vector<std::string> inline_args;  ///< --scenario, repeatable
  std::optional<double> threshold;      ///< --threshold
  std::string threshold_from;           ///< --threshold-from
  std::string change_quicklook;         ///< --change-quicklook
  [[nodiscard]] bool any() const { return !file.empty() || !inline_args.empty(); }
};

/// Runs the scenarios; prints the summary (or JSON with `json`) on `out`. Returns the exit code.
int run_predict_scenarios(const PredictOptions& options, const ScenarioArgs& args, Progress& progress, bool json,
                          bool quiet, std::ostream& out);

/// Help text of the scenario options, for predict's footer.
extern const char* const kScenarioHelp;

}  // namespace habcast::cli
