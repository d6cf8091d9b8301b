#pragma once
// The small JSON record a tile leaves in its output folder (tile-record.json): what its outputs
// were computed from (the fingerprint: inputs' sizes and modification times, model and training
// hashes, options, scenarios, habcast version) and what they were (sizes and FNV-1a hashes). A
// re-run skips a tile whose record still matches and whose outputs still verify; anything else is
// redone.
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "batch/tile_list.hpp"
#include "raster/alignment_plan.hpp"

namespace habcast {

/// Options that change a tile's outputs (threads do not: outputs are identical for any count).
struct TileSettings {
  double level = 0.95;
  int block_size = 512;
  std::vector<std::string> creation_options;
  bool overviews = false;
  nlohmann::ordered_json units;  ///< [units] of the manifest with its file's stamp; null without units
  AlignmentOptions alignment;  ///< --grid-of, --resampling, --warp-error (each tile keeps its own grid)
  /// A model set's models (paths), weights as given and average_se; null for one model.
  nlohmann::ordered_json model_set;
  /// The change classes' threshold (value as given, threshold_from with its file's stamp); null
  /// without scenarios.
  nlohmann::ordered_json threshold;
  /// Each scenario's name, description and replaced covariates, in the manifest's order; the
  /// tile's own rasters of each are stamped from the tile. Empty without scenarios.
  nlohmann::ordered_json scenarios = nlohmann::ordered_json::array();
};

/// What a tile's outputs depend on. `model_hash` covers the model file(s) and training table(s).
/// The entries for model sets and scenarios appear only when used, so that records of plain runs
/// written before them stay valid.
nlohmann::ordered_json tile_fingerprint(const Tile& tile, const std::string& model_hash, const TileSettings& settings,
                                        const std::string& tool_version);

/// The [units] settings with the size and time of the units file (and of a threshold report).
nlohmann::ordered_json units_stamp(const std::string& path, const std::string& layer, const std::string& id,
                                   const std::string& threshold);

/// FNV-1a 64 of the model file followed by its training table (when it names one), as hex.
std::string model_fingerprint(const std::string& model_path, const std::string* training_path);

/// The fingerprint of a model set: of each model's fingerprint, in the set's order (one model:
/// that model's own, so a record stays valid).
std::string model_set_fingerprint(const std::vector<std::string>& model_hashes);

/// The size and modification time of a file that a tile's outputs depend on, under `role`.
nlohmann::ordered_json input_stamp(const std::string& role, const std::string& path);

/// OUT/tiles/<id>
std::string tile_folder(const std::string& output_dir, const std::string& id);
/// OUT/tiles/<id>/tile-record.json
std::string record_path(const std::string& tile_dir);

/// Record of a finished tile: fingerprint plus every output (name relative to the tile folder,
/// e.g. "suitability.tif" or "ssp5/change.tif", size, hash). Outputs must lie in `tile_dir`.
nlohmann::ordered_json done_record(const std::string& id, const std::string& tile_dir,
                                   const nlohmann::ordered_json& fingerprint, const std::vector<std::string>& outputs,
                                   double seconds);
/// Record of a failed tile, so that the region report knows why, whoever ran it.
nlohmann::ordered_json failed_record(const std::string& id, const nlohmann::ordered_json& fingerprint,
                                     const std::string& error, int exit_code, double seconds);

enum class TileState {
  up_to_date,    ///< record matches and every output verifies
  no_record,     ///< never run, or interrupted (the record is written last)
  failed,        ///< the last attempt failed (the record says why)
  changed,       ///< inputs, model, options or habcast version differ from the record
  outputs_bad,   ///< an output is missing or its size or hash differs
};

struct TileAssessment {
  TileState state = TileState::no_record;
  std::string reason;             ///< plain language, for the summary and report
  nlohmann::ordered_json record;  ///< the record read (null when none or unreadable)
};

/// Compares the tile's record with the current fingerprint and checks its outputs.
TileAssessment assess_tile(const std::string& tile_dir, const nlohmann::ordered_json& fingerprint);

const char* to_string(TileState state);

}  // namespace habcast
