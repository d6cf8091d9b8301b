#include "batch/mosaic.hpp"

#include <filesystem>
#include <map>
#include <memory>
#include <set>

#include "core/base/error.hpp"
#include "pipeline/folder_lock.hpp"
#include "pipeline/output_set.hpp"
#include "pipeline/stop_signal.hpp"
#include "raster/mosaic_files.hpp"
#include "raster/output_raster.hpp"

namespace habcast {

namespace {

namespace fs = std::filesystem;

/// The region layers habcast may write into the output folder of a plain predict run. Only the
/// owned names are ever replaced or removed there: the folder may hold the user's own files.
const char* const kLayers[] = {"suitability", "uncertainty", "extrapolation", "novelty", "least_similar"};

/// Layers whose pixels are categories: averaging them in overviews would invent values (flags,
/// change classes) that no pixel has.
bool categorical_layer(const std::string& stem) {
  return stem == "extrapolation" || stem == "least_similar" || stem == "change_class";
}

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

void add_layer_names(const std::string& layer, std::vector<std::string>& v) {
  for (const char* ext : {".vrt", ".tif"}) {
    v.push_back(layer + ext);
    v.push_back(sidecar_of(layer + ext));
  }
}

/// Owned names grouped by sub-folder ("" for the output folder itself), file names only.
std::map<std::string, std::vector<std::string>> by_folder(const std::vector<std::string>& owned) {
  std::map<std::string, std::vector<std::string>> groups;
  for (const std::string& name : owned)
    groups[fs::path(name).parent_path().string()].push_back(fs::path(name).filename().string());
  return groups;
}

}  // namespace

const std::vector<std::string>& mosaic_owned_names() {
  static const std::vector<std::string> names = [] {
    std::vector<std::string> v;
    for (const char* layer : kLayers) add_layer_names(layer, v);
    return v;
  }();
  return names;
}

std::vector<std::string> mosaic_owned_names(const std::vector<std::string>& tile_outputs) {
  std::vector<std::string> v = mosaic_owned_names();
  std::set<std::string> seen(v.begin(), v.end());
  for (const std::string& name : tile_outputs) {
    const fs::path p(name);
    if (p.extension() != ".tif") continue;
    std::vector<std::string> mine;
    add_layer_names((p.parent_path() / p.stem()).string(), mine);
    for (std::string& n : mine)
      if (seen.insert(n).second) v.push_back(std::move(n));
  }
  return v;
}

void remove_stale_mosaic_partials(const std::string& output_dir, const std::vector<std::string>& owned) {
  for (const auto& [sub, names] : by_folder(owned)) {
    const fs::path dir = sub.empty() ? fs::path(output_dir) : fs::path(output_dir) / sub;
    std::error_code ec;
    if (fs::is_directory(dir, ec)) remove_stale_partials(dir.string(), names);
  }
}

std::vector<std::string> build_region_mosaic(const std::string& output_dir, const std::vector<FinishedTile>& tiles,
                                             bool cog) {
  return build_region_mosaic(output_dir, tiles, cog, mosaic_owned_names());
}

std::vector<std::string> build_region_mosaic(const std::string& output_dir, const std::vector<FinishedTile>& tiles,
                                             bool cog, const std::vector<std::string>& owned) {
  // In the output folder itself (or its sub-folders), not in tiles/: GDAL 3.6 stores a source
  // path relative to the VRT only when the source lies below the VRT's folder, so build_vrt is
  // told to make relative every source within the output folder, and OUT can be moved as a whole.
  // Each file is made under a temporary name beside its final name (relative paths stay right
  // when it is renamed), and all are committed as one set: the old mosaic stays whole until then.
  const fs::path folder(output_dir);
  std::error_code ec;
  fs::create_directories(folder, ec);
  if (ec) throw IoError(folder.string() + ": cannot create the output folder: " + ec.message());
  // Layer (name relative to the tile folder, without ".tif") -> its file in every tile, in
  // tile-id order. Only owned names are ever written.
  const std::set<std::string> allowed(owned.begin(), owned.end());
  std::map<std::string, std::vector<std::string>> layers;
  for (const FinishedTile& tile : tiles) {
    for (const auto& entry : tile.record["outputs"]) {
      const fs::path file(entry.value("file", ""));
      if (file.extension() != ".tif") continue;
      const std::string layer = (file.parent_path() / file.stem()).generic_string();
      if (!allowed.count(layer + ".vrt"))
        throw InputError(located((fs::path(tile.folder) / "tile-record.json").string(), 0,
                                 "lists the output " + file.generic_string() + ", which this batch's tiles do not write; "
                                 "redo the tile (habcast batch --force)"));
      layers[layer].push_back((fs::path(tile.folder) / file).string());
    }
  }
  // The sub-folders of the region's layers are created and locked like the folder itself (one
  // writer per folder).
  std::set<std::string> subfolders;
  std::vector<std::unique_ptr<FolderLock>> locks;
  for (const auto& [layer, sources] : layers) {
    (void)sources;
    const std::string sub = fs::path(layer).parent_path().string();
    if (sub.empty() || !subfolders.insert(sub).second) continue;
    const fs::path dir = folder / sub;
    fs::create_directories(dir, ec);
    if (ec || !fs::is_directory(dir))
      throw IoError(dir.string() + ": cannot create the region's folder: " + (ec ? ec.message() : "not a folder"));
    locks.push_back(std::make_unique<FolderLock>(dir.string()));
  }
  remove_stale_mosaic_partials(output_dir, owned);
  throw_if_stopped();

  OutputSet set(output_dir, "mosaic", owned);
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
      run_step([&] { build_vrt(temporary, sources, output_dir); });
    } catch (...) {
      set.add(temporary, name);  // so that the set deletes what GDAL left
      throw;
    }
    add(temporary, name);
  }
  if (cog) {
    for (const auto& [layer, sources] : layers) {
      (void)sources;
      const std::string resampling = categorical_layer(fs::path(layer).filename().string()) ? "NEAREST" : "AVERAGE";
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
