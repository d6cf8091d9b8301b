#pragma once
// change.tif and change_class.tif of one scenario (docs/scenarios.md), shared by scenario runs of
// one model and of a model set.
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "core/model/model_spec.hpp"
#include "core/prediction/change_combiner.hpp"
#include "predict/predict_options.hpp"
#include "predict/scenario_set.hpp"
#include "raster/output_raster.hpp"
#include "raster/raster_grid.hpp"
#include "raster/window.hpp"

namespace habcast {

/// change.tif and change_class.tif of one scenario.
struct ChangeRasters {
  std::unique_ptr<OutputRaster> change;
  std::unique_ptr<OutputRaster> classes;
  /// Writes one window's change outputs and flushes the blocks it completes (window order).
  void write(const Window& window, const ChangeOutputs& outputs);
};

/// The names a scenario's folder may hold beside a prediction's: change.tif, change_class.tif,
/// their sidecars and the change-class pictures.
const std::vector<std::string>& change_owned_names();

/// Creates them under temporary names in `folder`, which the caller holds through an OutputFolder
/// owning change_owned_names() there (locked, leftovers removed, existing files refused unless
/// --overwrite); `models` names the model file(s) in the metadata; change_class.tif only with a
/// threshold.
ChangeRasters create_change_rasters(const PredictOptions& options, const ModelSpec& spec, const std::string& models,
                                    const Scenario& scenario, const std::string& folder, const RasterGrid& grid,
                                    std::optional<double> threshold, const std::string& version, int threads);

}  // namespace habcast
