#pragma once
// The region as one layer per output: a VRT over every finished tile, built from the tiles'
// records alone (whoever produced them), and optionally a single COG of each VRT.
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

namespace habcast {

struct FinishedTile {
  std::string id;
  std::string folder;             ///< OUT/tiles/<id>
  nlohmann::ordered_json record;  ///< its verified tile-record.json
};

/// Writes OUT/<layer>.vrt for each raster the records list (suitability, uncertainty,
/// extrapolation, ...), tiles in id order; with `cog` also OUT/<layer>.tif. The layers are
/// committed as one set (pipeline/output_set.hpp): an earlier run's layers stay whole until the
/// new ones are all complete, then are replaced (or removed, if this run has no such layer).
/// Stop signals are honoured between and during the GDAL steps (Interrupted). The caller holds
/// the output folder's lock. Returns the paths written.
/// Every name the mosaic may own in the output folder (layers, their COGs, sidecars).
const std::vector<std::string>& mosaic_owned_names();

std::vector<std::string> build_region_mosaic(const std::string& output_dir, const std::vector<FinishedTile>& tiles,
                                             bool cog);

}  // namespace habcast
