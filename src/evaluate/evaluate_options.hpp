#pragma once
// Everything `habcast evaluate` needs, independent of how the command line spelled it.
#include <cstdint>
#include <map>
#include <optional>
#include <string>

#include "raster/alignment_plan.hpp"
#include "raster/point_source.hpp"

namespace habcast {

struct EvaluateOptions {
  std::string prediction_path;                           ///< a prediction raster, or:
  std::string model_path;                                ///< a model file applied to its rasters
  std::map<std::string, std::string> covariate_rasters;  ///< NAME -> FILE overrides for model_path
  PointSourceOptions points;
  std::string points_crs;          ///< empty: the file's own CRS, else EPSG:4326
  std::string response;            ///< observed 0/1 column (presence-absence mode)
  bool presence_only = false;      ///< every point is a presence; background comes from the grid
  int background = 10000;          ///< background points to draw (presence-only)
  std::uint64_t seed = 1;          ///< background draw; the same seed gives the same points
  std::optional<double> threshold; ///< report sensitivity/specificity here; also the binary map's
  int bins = 10;                   ///< calibration bins over [0, 1]
  double boyce_width = 0.1;        ///< Boyce window width, share of the prediction range
  std::string svg_path;
  std::string background_path;     ///< CSV of the background points drawn (presence-only)
  std::string binary_path;
  bool overwrite = false;
  AlignmentOptions alignment;      ///< target grid and resampling for --model's covariates (docs/alignment.md)
};

}  // namespace habcast
