#include "batch/mosaic.hpp"

#include <filesystem>
#include <map>

#include "core/base/error.hpp"
#include "pipeline/output_set.hpp"
#include "pipeline/stop_signal.hpp"
#include "raster/mosaic_files.hpp"
#include "raster/output_raster.hpp"

namespace habcast {

namespace {

namespace fs = std::filesystem;

/// The region layers habcast may write into the output folder. Only these names are ever
/// replaced or removed there: the folder may hold the user's own files.
const char* const kLayers[] = {"suitability", "uncertainty", "extrapolation", "novelty", "least_similar"};

/// A GDAL step that failed because a stop signal asked it to is an interruption, not an I/O error.
template <typename Step>
void run_step(Step&& step) {
  try {
    step();
  } catch (const IoError&) {
    throw_if_stopped();
    throw;
  }
  throw_if_stopped();
}

}  // namespace

const std::vector<std::string>& mosaic_owned_names() {
  static const std::vector<std::string> names = [] {
    std::vector<std::string> v;
    for (const char* layer : kLayers)
      for (const char* ext : {".vrt", ".tif"}) {
        v.push_back(std::string(layer) + ext);
        v.push_back(sidecar_of(std::string(layer) + ext));
      }
    return v;
  }();
  return names;
}

std::vector<std::string> build_region_mosaic(const std::string& output_dir, const std::vector<FinishedTile>& tiles,
                                             bool cog) {
  // In the output folder itself, above tiles/: GDAL stores a source path relative to the VRT only
  // when the source lies below the VRT's folder, and relative paths let OUT be moved as a whole.
  // Each file is made under a temporary name there (relative paths stay right when it is
  // renamed), and all are committed as one set: the old mosaic stays whole until then.
  const fs::path folder(output_dir);
  std::error_code ec;
  fs::create_directories(folder, ec);
  if (ec) throw IoError(folder.string() + ": cannot create the output folder: " + ec.message());
  remove_stale_partials(folder.string(), mosaic_owned_names());
  throw_if_stopped();

  // Layer name (file stem) -> its file in every tile, in tile-id order.
  std::map<std::string, std::vector<std::string>> layers;
  for (const FinishedTile& tile : tiles) {
    for (const auto& entry : tile.record["outputs"]) {
      const fs::path file(entry.value("file", ""));
      if (file.extension() == ".tif") layers[file.stem().string()].push_back((fs::path(tile.folder) / file).string());
    }
  }
  OutputSet set(output_dir, "mosaic", mosaic_owned_names());
  std::map<std::string, std::string> temporary_vrt;
  std::vector<std::string> written;
  auto add = [&](const std::string& temporary, const std::string& name) {
    set.add(temporary, name);
    if (fs::exists(sidecar_of(temporary), ec)) set.add(sidecar_of(temporary), sidecar_of(name));
    written.push_back((folder / name).string());
  };
  for (const auto& [layer, sources] : layers) {
    const std::string name = layer + ".vrt";
    const std::string temporary = temporary_path_for((folder / name).string());
    temporary_vrt[layer] = temporary;
    try {
      run_step([&] { build_vrt(temporary, sources); });
    } catch (...) {
      set.add(temporary, name);  // so that the set deletes what GDAL left
      throw;
    }
    add(temporary, name);
  }
  if (cog) {
    for (const auto& [layer, sources] : layers) {
      (void)sources;
      // Flags are categories: averaging them in overviews would invent reasons that no pixel has.
      const std::string resampling = layer == "extrapolation" || layer == "least_similar" ? "NEAREST" : "AVERAGE";
      const std::string name = layer + ".tif";
      const std::string temporary = temporary_path_for((folder / name).string());
      try {
        run_step([&] { write_cog(temporary_vrt[layer], temporary, resampling, [] { return stop_signal() == 0; }); });
      } catch (...) {
        set.add(temporary, name);
        throw;
      }
      add(temporary, name);
    }
  }
  set.commit();
  return written;
}

}  // namespace habcast
