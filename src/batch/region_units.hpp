#pragma once
// Unit summaries of a whole region run as tiles: each tile's units.json keeps the units' sums,
// which add up exactly across tiles, so a unit spanning tiles is summarised from the sum of its
// parts (docs/units.md, docs/batch.md).
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "batch/manifest.hpp"
#include "core/model/model_spec.hpp"

namespace habcast {

struct RegionUnits {
  std::vector<std::string> outputs;  ///< OUT/units.gpkg, units.csv, units.json
  nlohmann::ordered_json report;     ///< for batch-report.json
  std::vector<std::string> warnings;
};

/// Merges the sums of every tile (in the order given: the tiles' id order) per unit id and writes
/// the region's unit outputs into the manifest's output folder. Throws InputError naming the tile's
/// file when its units.json is missing or malformed.
RegionUnits merge_region_units(const BatchManifest& manifest, const ModelSpec& spec, const std::vector<std::string>& tile_dirs);

}  // namespace habcast
