#pragma once
// `habcast predict` as a library call: model file + covariate rasters in, suitability,
// uncertainty and extrapolation rasters plus report.json out, streamed block by block.
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "core/base/error.hpp"
#include "pipeline/progress.hpp"
#include "predict/predict_options.hpp"

namespace habcast {

struct PredictSummary {
  nlohmann::ordered_json report;                 ///< the content of report.json
  std::vector<std::string> warnings;     ///< plain-language warnings (also in the report)
  std::vector<std::string> outputs;      ///< paths written
  ExitCode exit_code = ExitCode::ok;     ///< ok, or extrapolation when --max-extrapolated is exceeded
};

/// Runs the whole prediction. Throws habcast::Error subclasses (UsageError, InputError, IoError,
/// Interrupted) and leaves no partial output behind when it does. `tool_version` is recorded in
/// the outputs' metadata and the report.
PredictSummary run_predict(const PredictOptions& options, Progress& progress, const std::string& tool_version);

}  // namespace habcast
