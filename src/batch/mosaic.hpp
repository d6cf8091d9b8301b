#pragma once
// The region as one layer per output: a VRT over every finished tile, built from the tiles'
// records alone (whoever produced them), and optionally a single COG of each VRT. Tiles run with
// scenarios keep their sub-folders (baseline/, <scenario>/), and so does the region.
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

namespace habcast {

struct FinishedTile {
  std::string id;
  std::string folder;             ///< OUT/tiles/<id>
  nlohmann::ordered_json record;  ///< its verified tile-record.json
};

/// Every name the mosaic of a plain predict run may own in the output folder (layers, their
/// COGs, sidecars).
const std::vector<std::string>& mosaic_owned_names();

/// Every name the mosaic may own when each tile's run may write `tile_outputs` (names relative to
/// the tile folder: "suitability.tif", "ssp5/change.tif", "report.json", ...): for each raster
/// LAYER.tif of them, LAYER.vrt and LAYER.tif (its COG) and their sidecars, in the same
/// sub-folder. The plain run's names are always included, so that a region whose tiles now run
/// scenarios loses its earlier top-level mosaic when the new one is committed.
std::vector<std::string> mosaic_owned_names(const std::vector<std::string>& tile_outputs);

/// Deletes leftover temporary files of `owned` (names as above) in the output folder and in those
/// of its sub-folders that exist. Call it only while holding the output folder's lock.
void remove_stale_mosaic_partials(const std::string& output_dir, const std::vector<std::string>& owned);

/// Writes OUT/<layer>.vrt for each raster the records list (suitability, uncertainty,
/// extrapolation, ...; OUT/ssp5/change.vrt for a tile's ssp5/change.tif), tiles in id order; with
/// `cog` also OUT/<layer>.tif. A VRT in a sub-folder stores its sources relative to itself
/// ("../tiles/<id>/ssp5/change.tif"), so OUT can still be moved as a whole. The layers are
/// committed as one set (pipeline/output_set.hpp) over `owned`: an earlier run's layers stay
/// whole until the new ones are all complete, then are replaced (or removed, if this run has no
/// such layer). Stop signals are honoured between and during the GDAL steps (Interrupted). The
/// caller holds the output folder's lock; sub-folders are created and locked here. Returns the
/// paths written.
std::vector<std::string> build_region_mosaic(const std::string& output_dir, const std::vector<FinishedTile>& tiles,
                                             bool cog, const std::vector<std::string>& owned);

/// The same over the names of a plain predict run.
std::vector<std::string> build_region_mosaic(const std::string& output_dir, const std::vector<FinishedTile>& tiles,
                                             bool cog);

}  // namespace habcast
