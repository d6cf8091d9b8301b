#include "batch/mosaic.hpp"

#include <filesystem>
#include <map>

#include "core/base/error.hpp"
#include "raster/mosaic_files.hpp"
#include "raster/output_raster.hpp"

namespace habcast {

namespace {

namespace fs = std::filesystem;

/// The region layers habcast writes into the output folder. Only these names are ever removed
/// there: the folder may hold the user's own files.
const char* const kLayers[] = {"suitability", "uncertainty", "extrapolation"};

void remove_old_mosaic(const fs::path& folder) {
  std::vector<std::string> names;
  for (const char* layer : kLayers)
    for (const char* ext : {".vrt", ".tif"}) {
      std::error_code ignored;
      fs::remove(folder / (std::string(layer) + ext), ignored);
      names.push_back(std::string(layer) + ext);
    }
  remove_stale_partials(folder.string(), names);
}

}  // namespace

std::vector<std::string> build_region_mosaic(const std::string& output_dir, const std::vector<FinishedTile>& tiles,
                                             bool cog) {
  // In the output folder itself, above tiles/: GDAL stores a source path relative to the VRT only
  // when the source lies below the VRT's folder, and relative paths let OUT be moved as a whole.
  const fs::path folder(output_dir);
  std::error_code ec;
  fs::create_directories(folder, ec);
  if (ec) throw IoError(folder.string() + ": cannot create the output folder: " + ec.message());
  remove_old_mosaic(folder);

  // Layer name (file stem) -> its file in every tile, in tile-id order.
  std::map<std::string, std::vector<std::string>> layers;
  for (const FinishedTile& tile : tiles) {
    for (const auto& entry : tile.record["outputs"]) {
      const fs::path file(entry.value("file", ""));
      if (file.extension() == ".tif") layers[file.stem().string()].push_back((fs::path(tile.folder) / file).string());
    }
  }
  std::vector<std::string> written;
  for (const auto& [layer, sources] : layers) {
    const std::string vrt = (folder / (layer + ".vrt")).string();
    build_vrt(vrt, sources);
    written.push_back(vrt);
  }
  if (cog) {
    for (const auto& [layer, sources] : layers) {
      (void)sources;
      // Flags are categories: averaging them in overviews would invent reasons that no pixel has.
      const std::string resampling = layer == "extrapolation" ? "NEAREST" : "AVERAGE";
      const std::string path = (folder / (layer + ".tif")).string();
      write_cog((folder / (layer + ".vrt")).string(), path, resampling);
      written.push_back(path);
    }
  }
  return written;
}

}  // namespace habcast
