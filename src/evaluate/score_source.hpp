#pragma once
// Where `habcast evaluate` gets predictions: a prediction raster (e.g. predict's suitability.tif),
// or a model file applied on the fly to its covariate rasters, at points and block by block.
#include <map>
#include <memory>
#include <string>
#include <vector>

#include "core/model/model_spec.hpp"
#include "raster/alignment_plan.hpp"
#include "raster/point_sampler.hpp"
#include "raster/raster_grid.hpp"
#include "raster/window.hpp"

namespace habcast {

class ScoreSource {
 public:
  /// A prediction raster, band 1.
  static std::unique_ptr<ScoreSource> from_raster(const std::string& path);
  /// A model file with its covariate rasters (`overrides` NAME -> FILE replace the model's own).
  /// Covariates off the first one's grid (or `alignment`'s target) are aligned as in predict.
  static std::unique_ptr<ScoreSource> from_model(const std::string& model_path,
                                                 const std::map<std::string, std::string>& overrides,
                                                 const AlignmentOptions& alignment = {});
  virtual ~ScoreSource() = default;

  [[nodiscard]] virtual const RasterGrid& grid() const = 0;
  /// What the scores are, for reports: "suitability.tif" or "model.toml applied to 4 rasters".
  [[nodiscard]] virtual std::string describe() const = 0;
  /// Scores at points in the grid's CRS; NaN where a point is off the grid or on nodata.
  virtual std::vector<double> at_points(const std::vector<double>& x, const std::vector<double>& y,
                                        const std::vector<std::uint8_t>& transformed, SampledPoints* status) = 0;
  /// Scores of a window, row-major; NaN for nodata.
  virtual void read(const Window& window, std::vector<double>& scores) = 0;
  /// The model behind the scores: --model's, or the file a prediction raster names in its
  /// HABCAST_MODEL metadata when that file can be read; nullptr otherwise.
  [[nodiscard]] virtual const ModelSpec* model() const = 0;
  /// How at_points() reads its rasters: a model's recorded [training] sampling, or the containing
  /// pixel of a prediction raster (interpolating predictions is not predicting at interpolated
  /// covariates).
  [[nodiscard]] virtual PointSampling sampling() const = 0;
};

}  // namespace habcast
