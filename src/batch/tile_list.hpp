#pragma once
// The tiles of a manifest, checked against the model (or every model of a set): ids found by
// globbing the pattern, plus the explicit [[tile]] entries, each with one raster per covariate and
// the rasters of every scenario of the manifest, sorted by id.
#include <string>
#include <utility>
#include <vector>

#include "batch/manifest.hpp"
#include "core/model/model_spec.hpp"

namespace habcast {

/// One scenario of one tile: the rasters of the covariates it replaces.
struct TileScenario {
  std::string name;
  std::vector<std::pair<std::string, std::string>> rasters;  ///< covariate (as the manifest lists them) -> absolute path
};

struct Tile {
  std::string id;
  std::vector<std::pair<std::string, std::string>> rasters;  ///< model covariate order -> absolute path
  std::vector<TileScenario> scenarios;                       ///< the manifest's scenarios, in its order
};

/// Every tile of the manifest, sorted by id. Throws InputError with the manifest's line for a
/// covariate the model does not have, a [[tile]] without a raster for one of the model's
/// covariates, a pattern that matches no file, or an id used twice. A pattern tile whose file
/// for some covariate is missing is kept: running it reports the tile as failed, not the region.
std::vector<Tile> list_tiles(const BatchManifest& manifest, const ModelSpec& spec);

/// The same for a model set: a tile needs a raster for every covariate of any model (in the order
/// they first appear). Scenarios are checked here too: each replaced covariate must be one some
/// model has; a [scenario.tiles] entry must name a tile of the region and must not also be found
/// by the scenario's pattern; a pattern must find a file for at least one tile. A tile whose
/// scenario raster is missing is kept: running it reports the tile as failed.
std::vector<Tile> list_tiles(const BatchManifest& manifest, const std::vector<const ModelSpec*>& models);

/// Tile ids found by globbing `pattern` (absolute, with {tile}) on disk, sorted.
std::vector<std::string> glob_tile_ids(const std::string& pattern);

}  // namespace habcast
