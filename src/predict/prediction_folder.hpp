#pragma once
// The outputs of one prediction as `predict` writes them (suitability, uncertainty, extrapolation,
// novelty, least_similar), in one folder, for runs that make several predictions at once
// (scenarios, docs/scenarios.md). Defined in predict_run.cpp, so that a folder of a scenario run
// is exactly a folder of `predict`.
#include <memory>
#include <string>
#include <vector>

#include "core/domain/novelty_model.hpp"
#include "core/model/model_spec.hpp"
#include "core/prediction/block_predictor.hpp"
#include "predict/predict_options.hpp"
#include "raster/output_raster.hpp"
#include "raster/raster_grid.hpp"
#include "raster/window.hpp"

namespace habcast {

class PredictionFolder {
 public:
  /// Creates the rasters under temporary names in `options.output_dir` (which must exist),
  /// refusing to replace finished outputs unless `options.overwrite`.
  PredictionFolder(const PredictOptions& options, const ModelSpec& spec, const RasterGrid& grid, bool with_se,
                   bool with_flags, const NoveltyModel* novelty, const std::string& version, int threads);
  ~PredictionFolder();
  PredictionFolder(const PredictionFolder&) = delete;
  PredictionFolder& operator=(const PredictionFolder&) = delete;

  /// Writes one window's outputs and flushes the blocks it completes (call in window order).
  void write(const Window& window, const BlockOutputs& outputs);
  /// Every raster of the folder, for closing, overviews and commit.
  std::vector<OutputRaster*> rasters();
  [[nodiscard]] const std::string& report_path() const;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

/// The processing windows `predict` uses for `grid` (whole input blocks, about block_size^2 pixels).
std::vector<Window> prediction_windows(const RasterGrid& grid, int block_size);

/// The GDAL block cache `predict` sets for these windows, `bands` input and output bands and
/// `threads` workers.
long long prediction_cache_bytes(const std::vector<Window>& windows, std::size_t bands, std::size_t threads);

/// The checks `predict` makes of its numeric options (level, block size, --max-error, novelty
/// thresholds); throws UsageError.
void check_prediction_options(const PredictOptions& options);

}  // namespace habcast
