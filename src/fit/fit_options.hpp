#pragma once
// Everything `habcast fit` needs, independent of how the command line spelled it.
#include <map>
#include <optional>
#include <set>
#include <string>

#include "raster/alignment_plan.hpp"
#include "core/model/model_spec.hpp"
#include "core/stats/irls.hpp"
#include "raster/point_source.hpp"

namespace habcast {

struct FitOptions {
  PointSourceOptions points;                 ///< path, layer, x/y columns (columns are filled in by run_fit)
  std::string points_crs;                    ///< empty: the CRS the points file declares, else EPSG:4326
  std::string response;                      ///< response column; empty: the formula's left-hand side
  std::string weights_column;                ///< optional prior weights
  std::string offset;                        ///< optional "COLUMN" or "log(COLUMN)", on the link scale
  std::optional<double> prediction_offset;   ///< offset written to the model file for predict
  std::map<std::string, std::string> covariate_rasters;  ///< NAME -> FILE
  std::set<std::string> categorical;         ///< covariates whose rasters hold class codes
  std::set<std::string> continuous;          ///< declared continuous on purpose, despite a category table
  std::map<std::string, Transform> transforms;
  std::map<std::string, std::string> reference_levels;   ///< NAME -> level name or code
  std::string formula;
  Family family = Family::binomial;
  std::optional<Link> link;
  bool standardise = true;
  bool bilinear = false;
  std::string model_path;
  std::string samples_path;                  ///< empty: MODEL-STEM-training.csv beside the model
  std::string name;
  bool overwrite = false;
  IrlsOptions irls;                          ///< default: R's glm() stopping rule and vcov()
  /// Target grid the points are sampled on, and resampling of covariates not on it
  /// (docs/alignment.md); a --resampling choice is written into the model for predict.
  AlignmentOptions alignment;
};

}  // namespace habcast
