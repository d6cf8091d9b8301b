#pragma once
// Everything `habcast predict` needs, independent of how the command line spelled it.
#include <map>
#include <optional>
#include <string>
#include <vector>

#include "core/domain/novelty_model.hpp"
#include "pipeline/progress.hpp"
#include "predict/unit_pass.hpp"
#include "raster/alignment_plan.hpp"

namespace habcast {

struct PredictOptions {
  std::string model_path;
  std::map<std::string, std::string> covariate_rasters;  ///< NAME -> FILE, overriding the model file
  std::string output_dir;
  double level = 0.95;                ///< confidence level of the limits
  int threads = 0;                    ///< 0: all cores
  int block_size = 512;               ///< processing window edge, pixels (rounded to raster blocks)
  std::vector<std::string> creation_options;  ///< GDAL GTiff creation options KEY=VALUE
  bool overviews = false;
  bool overwrite = false;
  std::optional<double> max_extrapolated_percent;  ///< exit code 5 above this share of valid pixels
  /// Lossy Float32 outputs: round to a three-bit grid step <= 2 * this and store with LERC, |error| <= this.
  std::optional<double> max_error;
  NoveltyOptions novelty;             ///< which joint training-domain checks run, and their thresholds
  bool novelty_rasters = true;        ///< write novelty.tif and least_similar.tif
  ProgressStyle progress = ProgressStyle::automatic;
  std::string quicklook_path;         ///< small PNG of suitability and extrapolation; empty: none
  long long gdal_cache_bytes = 0;     ///< GDAL block cache; 0: sized to the windows in flight
  long long max_memory_bytes = 2048LL << 20;  ///< cap on working memory besides GDAL's cache (docs/limits.md)
  UnitOptions units;                  ///< per-unit summaries (docs/units.md); inactive without a layer
  AlignmentOptions alignment;         ///< target grid and resampling of covariates not on it (docs/alignment.md)
};

}  // namespace habcast
