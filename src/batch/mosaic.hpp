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
/// extrapolation), tiles in id order; with `cog` also OUT/<layer>.tif. Region layers of an earlier
/// run are removed first, so the folder never mixes runs. Returns the paths written.
std::vector<std::string> build_region_mosaic(const std::string& output_dir, const std::vector<FinishedTile>& tiles,
                                             bool cog);

}  // namespace habcast
