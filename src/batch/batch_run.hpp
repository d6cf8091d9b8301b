#pragma once
// `habcast batch` as a library call: every tile of a manifest through run_predict, or run_scenarios
// and run_model_set when the manifest has scenarios or a model set (resumable, in parallel), then
// the region mosaic and report. See docs/batch.md.
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <vector>

#include "raster/alignment_plan.hpp"
#include "batch/shard.hpp"
#include "core/base/error.hpp"
#include "pipeline/progress.hpp"

namespace habcast {

/// Exit code when the batch finished but some tiles are not done (docs/exit-codes.md).
constexpr int kExitTilesFailed = 6;

struct BatchOptions {
  std::string manifest_path;
  std::string output_dir;     ///< overrides the manifest's output when not empty
  int threads = 0;            ///< 0: all cores
  int tile_workers = 0;       ///< tiles run at once; 0: decided from threads and tile count
  std::optional<Shard> shard; ///< run only this share of the tiles; no mosaic or report
  bool mosaic_only = false;   ///< run no tile: mosaic and report from the records
  bool cog = false;           ///< also write a COG of each mosaic layer
  bool force = false;         ///< redo every selected tile, whatever its record says
  AlignmentOptions alignment; ///< --grid-of, --resampling, --warp-error, applied to every tile
};

struct TileOutcome {
  std::string id;
  std::string status;  ///< done, up_to_date, failed, not_run, stale, outputs_bad
  std::string reason;
  bool ran_this_run = false;
  double seconds = 0.0;
};

struct BatchSummary {
  std::vector<TileOutcome> tiles;  ///< the tiles this process looked at (its shard), in id order
  int ran = 0, up_to_date = 0, failed = 0, not_done = 0;
  std::vector<std::string> outputs;  ///< mosaic and report files written
  nlohmann::ordered_json report;     ///< batch-report.json (null for a shard run)
  std::vector<std::string> warnings;
  int exit_code = 0;                 ///< 0, 5 (region extrapolation above the limit) or 6
};

/// Throws habcast::Error for problems with the manifest or model (nothing runs), and Interrupted
/// when a stop signal arrives (finished tiles keep their records; the interrupted ones have none
/// and are redone next time). Problems of single tiles never throw: they are in the summary.
BatchSummary run_batch(const BatchOptions& options, Progress& progress, const std::string& tool_version);

}  // namespace habcast
