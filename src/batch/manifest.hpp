#pragma once
// The batch manifest (docs/batch.md): which model (or model set), where the outputs go, the predict
// options shared by every tile, the tiles themselves, as a file-name pattern and/or an explicit
// table, and the scenarios each tile runs, with their rasters found the same two ways.
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

/// One `[[scenario]]`: the covariates it replaces, and each tile's rasters for them from a pattern
/// and/or a per-tile table `[scenario.tiles]` (paths already resolved).
struct ManifestScenario {
  std::string name;
  std::string description;
  long line = 0;                        ///< line of its name
  std::vector<std::string> covariates;  ///< the covariates it replaces, as listed
  long covariates_line = 0;
  std::optional<std::string> pattern;  ///< absolute, with {tile} (and {covariate} unless one covariate)
  std::string pattern_as_written;
  long pattern_line = 0;
  std::vector<ManifestTile> tiles;      ///< [scenario.tiles] entries: tile id -> covariate rasters
};

struct BatchManifest {
  std::string path;        ///< the manifest, as given
  std::string model_path;  ///< absolute; the first model of a set
  long model_line = 0;
  std::vector<std::string> model_paths;  ///< absolute: one (model = ...) or two or more (models = [...])
  std::vector<double> weights;           ///< weights = [...] of a model set; empty: Akaike weights
  long weights_line = 0;
  std::string average_se = "revised";    ///< average_se of a model set: "revised" or "2002" (as predict)
  std::string output_dir;  ///< absolute

  // Predict options shared by every tile.
  double level = 0.95;
  int block_size = 512;
  std::vector<std::string> creation_options;
  bool overviews = false;
  std::optional<double> max_extrapolated_percent;  ///< judged over the whole region
  long max_extrapolated_line = 0;
  std::optional<double> threshold;  ///< predict.threshold: the change classes' suitability threshold
  std::string threshold_from;       ///< predict.threshold_from: evaluate's JSON report or binary map (absolute)
  long threshold_line = 0;          ///< line of threshold or threshold_from
  long threshold_from_line = 0;

  // [units]: per-unit summaries in every tile, merged into the region's (docs/units.md).
  std::string units_path;       ///< absolute; empty: no units
  long units_line = 0;
  std::string units_layer;
  std::string units_id;
  std::string units_threshold;  ///< a number, or an evaluate JSON report (absolute path)

  std::optional<std::string> pattern;  ///< absolute, with {tile} and {covariate} placeholders
  std::string pattern_as_written;
  long pattern_line = 0;
  std::vector<ManifestTile> tiles;

  std::vector<ManifestScenario> scenarios;  ///< in the order written

  [[nodiscard]] bool model_set() const { return model_paths.size() > 1; }
};

/// Names a scenario may not take in a batch: the region folder's own files and folders (tiles/,
/// batch-report.json, the mosaic layers of a run without scenarios, ...), beside the names
/// valid_scenario_name already refuses.
bool reserved_region_name(const std::string& name);

/// Reads the manifest at `path`; relative paths in it are resolved against its folder.
BatchManifest read_batch_manifest(const std::string& path);

/// Same, from text in memory; `path` names the file in messages and anchors relative paths.
BatchManifest parse_batch_manifest(const std::string& text, const std::string& path);

}  // namespace habcast
