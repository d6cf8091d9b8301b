#pragma once
// The region report: batch-report.json and batch-report.csv, one row per tile and a total, with
// valid pixels, mean suitability, and the share and area extrapolated per cause and per covariate,
// time and status. Built from the tiles' own report.json files and records.
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <vector>

#include "core/model/model_spec.hpp"

namespace habcast {

struct RegionTile {
  std::string id;
  std::string status;      ///< done, up_to_date, failed, not_run, stale, outputs_bad
  std::string reason;      ///< why it is not done (empty when done)
  bool ran_this_run = false;
  double seconds = 0.0;    ///< time of the run that produced it (from its record)
  nlohmann::ordered_json tile_report;  ///< the tile's report.json; null unless done
};

struct RegionReportInput {
  std::string tool_version;
  std::string manifest_path;
  std::string output_dir;
  const ModelSpec* spec = nullptr;
  std::vector<RegionTile> tiles;  ///< every tile of the manifest, in id order
  std::vector<std::string> mosaic;
  std::optional<double> max_extrapolated_percent;
  /// The tiles ran a model set: their report.json gives the union of the models' flags, without
  /// valid pixels, causes or covariates (those are per model); the report leaves them null.
  bool model_set = false;
  std::vector<std::string> model_paths;  ///< every model of a set (for "model"); empty: spec's
  bool every_model_trained = true;       ///< false when some model of the set has no training samples
};

struct RegionReport {
  nlohmann::ordered_json json;
  std::string csv;
  double extrapolated_share = 0.0;  ///< over all finished tiles' checked pixels
  bool has_extrapolation = false;   ///< false without training samples
};

RegionReport region_report(const RegionReportInput& input);

/// Writes OUT/batch-report.json and OUT/batch-report.csv atomically; returns their paths.
std::vector<std::string> write_region_report(const std::string& output_dir, const RegionReport& report);

}  // namespace habcast
