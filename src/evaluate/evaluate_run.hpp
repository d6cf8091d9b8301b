#pragma once
// `habcast evaluate` as a library call: predictions (a raster, or a model applied to rasters) and
// independent points -> discrimination, threshold and calibration metrics (and the Boyce index for
// presence-only data), optionally an SVG of the curves and a thresholded binary map.
#include <nlohmann/json.hpp>
#include <cstdint>
#include <string>
#include <vector>

#include "evaluate/evaluate_options.hpp"

namespace habcast {

struct EvaluateSummary {
  nlohmann::ordered_json report;   ///< every number, for --json
  std::string text;                ///< the same for people
  std::vector<std::string> warnings;
};

EvaluateSummary run_evaluate(const EvaluateOptions& options, const std::string& tool_version);

/// Background points: `count` pixel centres drawn with replacement, uniformly over the grid, by
/// SplitMix64 from `seed` (a fixed, fully specified generator, so a seed gives the same points on
/// every platform), keeping only pixels whose score is not nodata.
struct BackgroundSample {
  std::vector<std::int64_t> draw;  ///< 1-based number of the draw that gave each point
  std::vector<std::int64_t> row;
  std::vector<std::int64_t> column;
  std::vector<double> x;
  std::vector<double> y;
  std::vector<double> scores;
  std::int64_t draws = 0;
};

class ScoreSource;
BackgroundSample sample_background(ScoreSource& scores, int count, std::uint64_t seed);

}  // namespace habcast
