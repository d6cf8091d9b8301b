#pragma once
// The report of a prediction run (report.json) and the plain-language warnings drawn from it.
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <vector>

#include "core/domain/novelty_model.hpp"
#include "core/domain/training_domain.hpp"
#include "core/model/model_spec.hpp"
#include "core/prediction/block_predictor.hpp"
#include "raster/raster_grid.hpp"

namespace habcast {

struct CovariateInput {
  std::string name;
  std::string path;
  int band = 1;
};

struct ReportContext {
  std::string tool_version;
  const ModelSpec* spec = nullptr;
  const TrainingDomain* domain = nullptr;  ///< null without training samples
  const NoveltyModel* novelty = nullptr;   ///< null without training samples or joint checks
  const LowCertaintyRule* certainty = nullptr;  ///< the low-certainty rule (null: the family's, without samples)
  std::vector<CovariateInput> inputs;
  RasterGrid grid;
  double level = 0.95;
  int threads = 1;
  std::vector<std::pair<std::string, std::string>> outputs;  ///< role -> path
  const PredictionTally* tally = nullptr;
  double elapsed_seconds = 0.0;
  std::string started_utc;
};

/// Plain-language warnings: the share of valid pixels outside each covariate's training range and
/// on which side, unseen levels, pixels left without prediction, missing uncertainty or domain.
std::vector<std::string> prediction_warnings(const ReportContext& context);

/// The report as JSON (see docs/report.md).
nlohmann::ordered_json prediction_report(const ReportContext& context, const std::vector<std::string>& warnings);

/// "12.4 %" with one decimal, "< 0.1 %" for tiny non-zero shares.
std::string format_percent(double share);

/// A number with up to 4 significant digits, no trailing zeros ("2310", "0.125").
std::string format_value(double value);

/// The area of `pixels` pixels for a sentence: "2,310 ha" in a metric CRS, else "1.2e+04 square
/// map units" (CRS units), or "" when the grid has no geotransform.
std::string format_area(std::int64_t pixels, const RasterGrid& grid);

}  // namespace habcast
