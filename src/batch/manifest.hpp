#pragma once
// The batch manifest (docs/batch.md): which model, where the outputs go, the predict options shared
// by every tile, and the tiles themselves, as a file-name pattern and/or an explicit table.
// Every problem is an InputError "manifest:line: what is wrong; what to do".
#include <optional>
#include <string>
#include <utility>
#include <vector>

namespace habcast {

/// One `[[tile]]` entry: an id and a raster per covariate, as written (paths already resolved).
struct ManifestTile {
  std::string id;
  long line = 0;
  std::vector<std::pair<std::string, std::string>> rasters;  ///< covariate -> absolute path
  std::vector<long> raster_lines;                            ///< line of each entry of `rasters`
};

struct BatchManifest {
  std::string path;        ///< the manifest, as given
  std::string model_path;  ///< absolute
  long model_line = 0;
  std::string output_dir;  ///< absolute

  // Predict options shared by every tile.
  double level = 0.95;
  int block_size = 512;
  std::vector<std::string> creation_options;
  bool overviews = false;
  std::optional<double> max_extrapolated_percent;  ///< judged over the whole region

  // [units]: per-unit summaries in every tile, merged into the region's (docs/units.md).
  std::string units_path;       ///< absolute; empty: no units
  std::string units_layer;
  std::string units_id;
  std::string units_threshold;  ///< a number, or an evaluate JSON report (absolute path)

  std::optional<std::string> pattern;  ///< absolute, with {tile} and {covariate} placeholders
  std::string pattern_as_written;
  long pattern_line = 0;
  std::vector<ManifestTile> tiles;
};

/// Reads the manifest at `path`; relative paths in it are resolved against its folder.
BatchManifest read_batch_manifest(const std::string& path);

/// Same, from text in memory; `path` names the file in messages and anchors relative paths.
BatchManifest parse_batch_manifest(const std::string& text, const std::string& path);

}  // namespace habcast
