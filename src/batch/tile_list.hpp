#pragma once
// The tiles of a manifest, checked against the model: ids found by globbing the pattern, plus the
// explicit [[tile]] entries, each with one raster per model covariate, sorted by id.
#include <string>
#include <utility>
#include <vector>

#include "batch/manifest.hpp"
#include "core/model/model_spec.hpp"

namespace habcast {

struct Tile {
  std::string id;
  std::vector<std::pair<std::string, std::string>> rasters;  ///< model covariate order -> absolute path
};

/// Every tile of the manifest, sorted by id. Throws InputError with the manifest's line for a
/// covariate the model does not have, a [[tile]] without a raster for one of the model's
/// covariates, a pattern that matches no file, or an id used twice. A pattern tile whose file
/// for some covariate is missing is kept: running it reports the tile as failed, not the region.
std::vector<Tile> list_tiles(const BatchManifest& manifest, const ModelSpec& spec);

/// Tile ids found by globbing `pattern` (absolute, with {tile}) on disk, sorted.
std::vector<std::string> glob_tile_ids(const std::string& pattern);

}  // namespace habcast
