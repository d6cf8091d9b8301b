#include "batch/batch_run.hpp"

#include <algorithm>
#include <atomic>
#include <chrono>
#include <csignal>
#include <filesystem>
#include <fstream>
#include <map>
#include <mutex>
#include <thread>

#include "batch/batch_progress.hpp"
#include "batch/manifest.hpp"
#include "batch/mosaic.hpp"
#include "batch/region_report.hpp"
#include "batch/region_scenarios.hpp"
#include "batch/region_units.hpp"
#include "batch/tile_list.hpp"
#include "batch/tile_record.hpp"
#include "core/base/number_text.hpp"
#include "core/model/model_file.hpp"
#include "pipeline/atomic_file.hpp"
#include "pipeline/folder_lock.hpp"
#include "pipeline/output_set.hpp"
#include "pipeline/run_files.hpp"
#include "pipeline/stop_signal.hpp"
#include "predict/predict_folder.hpp"
#include "predict/model_set_run.hpp"
#include "predict/predict_run.hpp"
#include "predict/recorded_threshold.hpp"
#include "predict/scenario_run.hpp"
#include "predict/prediction_report.hpp"
#include "predict/unit_pass.hpp"
#include "raster/gdal_session.hpp"
#include "raster/output_raster.hpp"
#include "raster/raster_grid.hpp"

namespace habcast {

namespace {

namespace fs = std::filesystem;
using json = nlohmann::ordered_json;
using Clock = std::chrono::steady_clock;

/// Everything fixed for the whole batch once the manifest and model(s) are read.
struct BatchPlan {
  BatchManifest manifest;
  ModelSpec spec;                         ///< the model, or the first model of a set
  std::vector<ModelSpec> specs;           ///< every model (one without a set)
  std::vector<double> weights;            ///< a set's weights as used (normalised); empty for one model
  std::vector<Tile> tiles;                ///< sorted by id
  TileSettings settings;
  std::string model_hash;
  std::string tool_version;
  std::vector<std::string> tile_owned;    ///< every name a tile's run may write in its folder
  std::vector<std::string> region_owned;  ///< every name the region's mosaic may write

  [[nodiscard]] json fingerprint(const Tile& tile) const {
    return tile_fingerprint(tile, model_hash, settings, tool_version);
  }
  [[nodiscard]] bool scenarios() const { return !manifest.scenarios.empty(); }
  [[nodiscard]] bool model_set() const { return manifest.model_set(); }

  /// The manifest's scenarios with this tile's rasters, as predict --scenarios reads them.
  [[nodiscard]] ScenarioSet scenario_set(const Tile& tile) const {
    ScenarioSet set;
    set.path = manifest.path;
    for (std::size_t i = 0; i < manifest.scenarios.size(); ++i) {
      const ManifestScenario& m = manifest.scenarios[i];
      set.scenarios.push_back({m.name, m.description, tile.scenarios[i].rasters, manifest.path + ":" + std::to_string(m.line)});
    }
    return set;
  }
};

/// Scenarios with their names only: what the owned names of a tile's run depend on.
std::vector<Scenario> named_scenarios(const BatchManifest& manifest) {
  std::vector<Scenario> v;
  for (const ManifestScenario& m : manifest.scenarios) v.push_back({m.name, m.description, {}, ""});
  return v;
}

/// Before any tile runs: no output of any tile, nor of the region, may be an input of a tile
/// (e.g. output = "." with a covariate raster named suitability.tif in the tile's folder, or a
/// scenario raster inside a tile's output folder).
void check_batch_files(const BatchPlan& plan) {
  const BatchManifest& manifest = plan.manifest;
  auto shared_inputs = [&](RunFiles& files) {
    for (const ModelSpec& spec : plan.specs) {
      files.input("model file", spec.path);
      if (spec.training_samples) files.input("training samples of " + spec.path, *spec.training_samples);
    }
    files.input("predict.threshold_from", manifest.threshold_from);
    files.input("[units] path", manifest.units_path);
  };
  RunFiles region;
  shared_inputs(region);
  for (const std::string& name : plan.region_owned)
    region.output("region output " + name, (fs::path(manifest.output_dir) / name).string());
  for (const char* name : {"batch-report.json", "batch-report.csv"})
    region.output(std::string("region output ") + name, (fs::path(manifest.output_dir) / name).string());
  if (!manifest.units_path.empty())
    for (const char* name : {"units.gpkg", "units.csv", "units.json"})
      region.output(std::string("region output ") + name, (fs::path(manifest.output_dir) / name).string());
  for (const Tile& tile : plan.tiles) {
    RunFiles files;
    shared_inputs(files);
    const std::string dir = tile_folder(manifest.output_dir, tile.id);
    for (const auto& [covariate, path] : tile.rasters) {
      files.input("tile " + tile.id + " raster of covariate " + covariate, path);
      region.input("tile " + tile.id + " raster of covariate " + covariate, path);
    }
    for (const TileScenario& sc : tile.scenarios)
      for (const auto& [covariate, path] : sc.rasters) {
        const std::string role = "tile " + tile.id + " scenario " + sc.name + " raster of covariate " + covariate;
        files.input(role, path);
        region.input(role, path);
      }
    for (const std::string& name : plan.tile_owned)
      files.output("tile " + tile.id + " output " + name, (fs::path(dir) / name).string());
    files.output("tile " + tile.id + " record", record_path(dir));
    files.check();
  }
  region.check();
}

/// Reads every model of the manifest and checks what would otherwise fail every tile alike.
void read_models(BatchPlan& plan) {
  const BatchManifest& m = plan.manifest;
  for (const std::string& path : m.model_paths) {
    if (!fs::exists(path))
      throw InputError(located(m.path, m.model_line,
                               "model file " + path + " does not exist; model paths are relative to the manifest's folder"));
    plan.specs.push_back(read_model_file(path));
  }
  plan.spec = plan.specs.front();
  for (const ModelSpec& spec : plan.specs) {
    if (m.max_extrapolated_percent && !spec.training_samples)
      throw InputError(located(m.path, m.max_extrapolated_line,
                               "predict.max_extrapolated needs training samples: add [training] samples = \"FILE.csv\" to " +
                                   spec.path));
    if (spec.training_samples && !fs::exists(*spec.training_samples))
      throw InputError(located(spec.path, spec.training_line, "training samples " + *spec.training_samples +
                                                                  " do not exist; check the path (relative to the model file)"));
    if ((plan.scenarios() || plan.model_set()) && !spec.covariance)
      throw InputError(located(spec.path, 0, std::string(plan.model_set() ? "a model set needs every model's covariance "
                                                                          "matrix for the unconditional standard error"
                                                                        : "the change between scenarios needs the model's "
                                                                          "covariance matrix for its uncertainty") +
                                                 ": add covariance = [[...]] to [coefficients]"));
  }
  if (!plan.model_set()) return;
  std::vector<const ModelSpec*> specs;
  for (const ModelSpec& spec : plan.specs) specs.push_back(&spec);
  check_model_set_compatible(specs);
  std::vector<std::optional<double>> aic;
  for (const ModelSpec& spec : plan.specs) {
    if (m.weights.empty() && !spec.aic)
      throw InputError(located(spec.path, 0, "no aic in [model], so no Akaike weight can be formed; add aic = ... (the "
                                             "model's AIC) or give weights = [W1, W2, ...] in " + m.path));
    aic.push_back(spec.aic);
  }
  plan.weights = model_set_weights(m.weights, m.model_paths, aic);
}

/// What a tile's outputs depend on beyond its rasters, the model files and [predict]: the set's
/// weights and form, the threshold, the scenarios' definitions.
void scenario_and_set_settings(BatchPlan& plan) {
  const BatchManifest& m = plan.manifest;
  if (plan.model_set())
    plan.settings.model_set = {{"models", m.model_paths}, {"weights", m.weights}, {"average_se", m.average_se}};
  if (!plan.scenarios()) return;
  // Checked once here, not failing every tile: a threshold file that cannot be read, or two
  // thresholds that disagree (refused naming both, in the manifest's words).
  if (!m.threshold_from.empty()) {
    RecordedThreshold recorded;
    try {
      recorded = read_recorded_threshold(m.threshold_from);
    } catch (const Error& e) {
      throw InputError(located(m.path, m.threshold_from_line, std::string("predict.threshold_from: ") + e.what()));
    }
    if (m.threshold && *m.threshold != recorded.value)
      throw InputError(located(m.path, m.threshold_line,
                               "two thresholds: predict.threshold = " + significant(*m.threshold, 6) + " (line " +
                                   std::to_string(m.threshold_line) + ") and " + significant(recorded.value, 6) +
                                   " from predict.threshold_from (line " + std::to_string(m.threshold_from_line) + ", the " +
                                   recorded.rule + "); keep one of them"));
  }
  plan.settings.threshold = {{"value", m.threshold ? json(*m.threshold) : json()},
                             {"from", m.threshold_from.empty() ? json() : input_stamp("threshold_from", m.threshold_from)}};
  for (const ManifestScenario& sc : m.scenarios)
    plan.settings.scenarios.push_back({{"name", sc.name}, {"description", sc.description}, {"covariates", sc.covariates}});
}

BatchPlan make_plan(const BatchOptions& options, const std::string& tool_version) {
  BatchPlan plan;
  plan.manifest = read_batch_manifest(options.manifest_path);
  if (!options.output_dir.empty())
    plan.manifest.output_dir = fs::absolute(options.output_dir).lexically_normal().string();
  read_models(plan);
  try {
    check_creation_options(plan.manifest.creation_options);  // not once per tile, failing each
  } catch (const UsageError& e) {
    throw UsageError(plan.manifest.path + ": creation_options: " + e.what());
  }
  std::vector<const ModelSpec*> specs;
  for (const ModelSpec& spec : plan.specs) specs.push_back(&spec);
  plan.tiles = list_tiles(plan.manifest, specs);
  const std::vector<Scenario> scenarios = named_scenarios(plan.manifest);
  plan.tile_owned = plan.model_set()   ? model_set_owned_names(scenarios)
                    : plan.scenarios() ? scenario_owned_names(scenarios)
                                       : predict_owned_names();
  plan.region_owned = mosaic_owned_names(plan.tile_owned);
  check_batch_files(plan);
  plan.settings.level = plan.manifest.level;
  plan.settings.block_size = plan.manifest.block_size;
  plan.settings.creation_options = plan.manifest.creation_options;
  plan.settings.overviews = plan.manifest.overviews;
  plan.settings.alignment = options.alignment;
  scenario_and_set_settings(plan);
  if (!plan.manifest.units_path.empty()) {
    // Checked before any tile runs: a bad layer, id field or threshold would fail every tile.
    (void)read_unit_ids({plan.manifest.units_path, plan.manifest.units_layer, plan.manifest.units_id});
    (void)resolve_unit_threshold(plan.manifest.units_threshold, plan.spec.family);
    plan.settings.units = units_stamp(plan.manifest.units_path, plan.manifest.units_layer, plan.manifest.units_id,
                                      plan.manifest.units_threshold);
  }
  std::vector<std::string> hashes;
  for (const ModelSpec& spec : plan.specs)
    hashes.push_back(model_fingerprint(spec.path, spec.training_samples ? &*spec.training_samples : nullptr));
  plan.model_hash = model_set_fingerprint(hashes);
  plan.tool_version = tool_version;
  return plan;
}

std::int64_t tile_pixels(const Tile& tile) {
  for (const auto& [covariate, path] : tile.rasters) {
    (void)covariate;
    try {
      const RasterGrid g = read_grid(path);
      return static_cast<std::int64_t>(g.width) * g.height;
    } catch (const Error&) {
      // A missing or unreadable raster is the tile's failure to report later, not the estimate's.
    }
  }
  return 0;
}

void check_rasters_exist(const Tile& tile) {
  std::string missing;
  for (const auto& [covariate, path] : tile.rasters)
    if (!fs::exists(path)) missing += (missing.empty() ? "" : "; ") + covariate + " (" + path + " does not exist)";
  if (!missing.empty()) throw InputError("tile \"" + tile.id + "\" lacks a covariate raster: " + missing);
  for (const TileScenario& sc : tile.scenarios) {
    for (const auto& [covariate, path] : sc.rasters)
      if (!fs::exists(path)) missing += (missing.empty() ? "" : "; ") + covariate + " (" + path + " does not exist)";
    if (!missing.empty())
      throw InputError("tile \"" + tile.id + "\" lacks a raster of scenario " + sc.name + ": " + missing);
  }
}

/// Runs what the manifest asks of one tile into its folder: predict, predict --scenarios, or a
/// model set (with or without scenarios). Returns the files written.
std::vector<std::string> predict_tile(const BatchPlan& plan, const Tile& tile, const PredictOptions& po,
                                      TileProgress& progress) {
  if (!plan.model_set() && !plan.scenarios()) return run_predict(po, progress, plan.tool_version).outputs;
  const BatchManifest& m = plan.manifest;
  if (!plan.model_set()) {
    ScenarioRunOptions so;
    so.predict = po;
    so.scenarios = plan.scenario_set(tile);
    so.threshold = m.threshold;
    so.threshold_from = m.threshold_from;
    return run_scenarios(so, progress, plan.tool_version).outputs;
  }
  ModelSetOptions mo;
  mo.predict = po;
  mo.model_paths = m.model_paths;
  mo.weights = m.weights;
  mo.form = m.average_se == "2002" ? UnconditionalForm::form_2002 : UnconditionalForm::revised;
  if (plan.scenarios()) {
    mo.scenarios = plan.scenario_set(tile);
    mo.threshold = m.threshold;
    mo.threshold_from = m.threshold_from;
  }
  return run_model_set(mo, progress, plan.tool_version).outputs;
}

struct TileRun {
  TileOutcome outcome;
  json record;
};

TileRun run_tile(const BatchPlan& plan, const Tile& tile, int threads, TileProgress& progress) {
  const auto t0 = Clock::now();
  const std::string dir = tile_folder(plan.manifest.output_dir, tile.id);
  const json fingerprint = plan.fingerprint(tile);
  auto seconds = [&] { return std::chrono::duration<double>(Clock::now() - t0).count(); };
  TileRun run;
  run.outcome.id = tile.id;
  run.outcome.ran_this_run = true;
  std::unique_ptr<FolderLock> lock;
  try {
    std::error_code ec;
    fs::create_directories(dir, ec);
    if (ec) throw IoError(dir + ": cannot create the tile's output folder: " + ec.message());
    // Held through predict (which takes it again) and the record: one writer per tile folder.
    // Nothing is cleared first: predict replaces the tile's outputs as one set, so an interrupted
    // or failed redo leaves the earlier outputs whole, and the region's mosaic readable.
    lock = std::make_unique<FolderLock>(dir);
    if (lock->held()) remove_stale_partials(dir, {"tile-record.json"});
    check_rasters_exist(tile);
    PredictOptions po;
    po.model_path = plan.spec.path;
    for (const auto& [covariate, path] : tile.rasters) po.covariate_rasters[covariate] = path;
    po.output_dir = dir;
    po.level = plan.settings.level;
    po.threads = threads;
    po.block_size = plan.settings.block_size;
    po.creation_options = plan.settings.creation_options;
    po.overviews = plan.settings.overviews;
    po.overwrite = true;
    po.units.layer = {plan.manifest.units_path, plan.manifest.units_layer, plan.manifest.units_id};
    po.units.threshold_text = plan.manifest.units_threshold;
    po.alignment = plan.settings.alignment;
    const std::vector<std::string> outputs = predict_tile(plan, tile, po, progress);
    run.record = done_record(tile.id, dir, fingerprint, outputs, seconds());
    // Written last: a tile is done exactly when its record says so.
    write_file_atomically(record_path(dir), run.record.dump(2) + "\n");
    run.outcome.status = "done";
  } catch (const Interrupted&) {
    throw;
  } catch (const std::exception& e) {
    const auto* error = dynamic_cast<const Error*>(&e);
    run.outcome.status = "failed";
    run.outcome.reason = error ? e.what() : std::string("internal error (please report): ") + e.what();
    const int code = error ? static_cast<int>(error->code()) : static_cast<int>(ExitCode::internal);
    run.record = failed_record(tile.id, fingerprint, run.outcome.reason, code, seconds());
    try {
      write_file_atomically(record_path(dir), run.record.dump(2) + "\n");
    } catch (const Error&) {
      // Without a record the tile reads as "not run", which a re-run redoes all the same.
    }
  }
  run.outcome.seconds = seconds();
  return run;
}

/// Runs `pending` tiles, several at once. Returns their runs in the order of `pending`.
std::vector<TileRun> run_tiles(const BatchPlan& plan, const std::vector<const Tile*>& pending,
                               const std::vector<std::int64_t>& pixels, int threads, int tile_workers,
                               BatchProgress& progress) {
  std::vector<TileRun> runs(pending.size());
  const int workers = std::max(1, std::min<int>(tile_workers, static_cast<int>(pending.size())));
  const int per_tile = std::max(1, threads / workers);
  std::atomic<std::size_t> next{0};
  std::atomic<bool> interrupted{false};
  std::mutex failure_mutex;
  std::exception_ptr unexpected;
  auto loop = [&] {
    for (;;) {
      if (interrupted.load() || stop_signal() != 0) return;
      const std::size_t i = next.fetch_add(1);
      if (i >= pending.size()) return;
      std::unique_ptr<TileProgress> tile_progress = progress.for_tile(pixels[i]);
      try {
        runs[i] = run_tile(plan, *pending[i], per_tile, *tile_progress);
      } catch (const Interrupted&) {
        interrupted.store(true);
        return;
      } catch (...) {
        std::lock_guard lock(failure_mutex);
        if (!unexpected) unexpected = std::current_exception();
        interrupted.store(true);
        return;
      }
      progress.tile_finished(*tile_progress, runs[i].outcome.status == "done");
    }
  };
  std::vector<std::thread> pool;
  for (int w = 1; w < workers; ++w) pool.emplace_back(loop);
  loop();
  for (std::thread& t : pool) t.join();
  if (unexpected) std::rethrow_exception(unexpected);
  if (interrupted.load() || stop_signal() != 0) throw Interrupted(stop_signal() != 0 ? stop_signal() : SIGINT);
  return runs;
}

json read_json(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) return nullptr;
  try {
    return json::parse(in);
  } catch (const json::exception&) {
    return nullptr;
  }
}

TileOutcome outcome_of(const std::string& id, const TileAssessment& a) {
  TileOutcome o;
  o.id = id;
  o.status = to_string(a.state);
  if (a.state != TileState::up_to_date) o.reason = a.reason;
  if (a.record.is_object()) o.seconds = a.record.value("elapsed_seconds", 0.0);
  return o;
}

int choose_threads(int requested) {
  return requested > 0 ? requested : static_cast<int>(std::max(1u, std::thread::hardware_concurrency()));
}

/// Mosaic and report over every tile of the manifest, from what is on disk (records) plus what
/// this process has just done.
void finish_region(const BatchPlan& plan, const BatchOptions& options, std::map<std::string, TileRun>& known,
                   BatchSummary& summary) {
  throw_if_stopped();
  std::vector<FinishedTile> finished;
  std::vector<TileScenarioReport> scenario_reports;
  RegionReportInput in;
  in.tool_version = plan.tool_version;
  in.manifest_path = plan.manifest.path;
  in.output_dir = plan.manifest.output_dir;
  in.spec = &plan.spec;
  in.max_extrapolated_percent = plan.manifest.max_extrapolated_percent;
  for (const Tile& tile : plan.tiles) {
    const std::string dir = tile_folder(plan.manifest.output_dir, tile.id);
    auto it = known.find(tile.id);
    if (it == known.end()) {
      const TileAssessment a = assess_tile(dir, plan.fingerprint(tile));
      it = known.emplace(tile.id, TileRun{outcome_of(tile.id, a), a.record}).first;
    }
    const TileOutcome& o = it->second.outcome;
    RegionTile row{o.id, o.status, o.reason, o.ran_this_run, o.seconds, nullptr};
    if (o.status == "done" || o.status == "up_to_date") {
      finished.push_back({tile.id, dir, it->second.record});
      // With scenarios the tile rows describe the baseline; each scenario is merged below.
      row.tile_report = read_json((fs::path(dir) / (plan.scenarios() ? "baseline/report.json" : "report.json")).string());
      if (plan.scenarios()) scenario_reports.push_back({tile.id, read_json((fs::path(dir) / "scenarios.json").string())});
    }
    in.tiles.push_back(std::move(row));
  }
  if (!finished.empty()) {
    summary.outputs = build_region_mosaic(plan.manifest.output_dir, finished, options.cog, plan.region_owned);
  } else {
    summary.warnings.push_back("No tile is done, so no mosaic was built.");
  }
  const int not_done = static_cast<int>(plan.tiles.size() - finished.size());
  std::optional<RegionUnits> units;
  if (!plan.manifest.units_path.empty()) {
    if (not_done == 0) {
      std::vector<std::string> tile_dirs;
      for (const FinishedTile& f : finished) tile_dirs.push_back(f.folder);
      units = merge_region_units(plan.manifest, plan.spec, tile_dirs);
      summary.outputs.insert(summary.outputs.end(), units->outputs.begin(), units->outputs.end());
      summary.warnings.insert(summary.warnings.end(), units->warnings.begin(), units->warnings.end());
    } else {
      summary.warnings.push_back("No region unit summaries: units that span tiles need every tile, and " +
                                 std::to_string(not_done) + " " + (not_done == 1 ? "is" : "are") + " not done.");
    }
  }
  in.mosaic = summary.outputs;
  in.model_set = plan.model_set();
  if (plan.model_set()) in.model_paths = plan.manifest.model_paths;
  for (const ModelSpec& spec : plan.specs) in.every_model_trained = in.every_model_trained && spec.training_samples;
  RegionReport report = region_report(in);
  if (units) report.json["units"] = units->report;
  if (plan.model_set()) {
    json models = json::array();
    for (std::size_t i = 0; i < plan.specs.size(); ++i)
      models.push_back({{"path", plan.specs[i].path},
                        {"aic", plan.specs[i].aic ? json(*plan.specs[i].aic) : json()},
                        {"weight", plan.weights[i]}});
    report.json["model_set"] = {{"models", models},
                                {"weights_from", plan.manifest.weights.empty()
                                                     ? "Akaike weights exp(-dAIC/2) / sum, from each model file's aic"
                                                     : "weights of the manifest, normalised to sum 1"},
                                {"average_se", plan.manifest.average_se}};
  }
  if (plan.scenarios()) {
    std::vector<std::string> names;
    for (const ManifestScenario& sc : plan.manifest.scenarios) names.push_back(sc.name);
    report.json["scenarios"] = merge_region_scenarios(names, scenario_reports, static_cast<int>(plan.tiles.size()));
  }
  summary.not_done = not_done;
  int exit_code = 0;
  if (not_done > 0) {
    exit_code = kExitTilesFailed;
  } else if (plan.manifest.max_extrapolated_percent &&
             100.0 * report.extrapolated_share > *plan.manifest.max_extrapolated_percent) {
    exit_code = static_cast<int>(ExitCode::extrapolation);
    summary.warnings.push_back(format_value(100.0 * report.extrapolated_share) +
                               " % of the region's valid pixels are extrapolated, more than max_extrapolated " +
                               format_value(*plan.manifest.max_extrapolated_percent) + " % (exit code 5).");
  }
  report.json["warnings"] = summary.warnings;
  report.json["exit_code"] = exit_code;
  throw_if_stopped();
  for (const std::string& p : write_region_report(plan.manifest.output_dir, report)) summary.outputs.push_back(p);
  summary.report = std::move(report.json);
  summary.exit_code = exit_code;
}

}  // namespace

BatchSummary run_batch(const BatchOptions& options, Progress& progress, const std::string& tool_version) {
  if (options.mosaic_only && options.shard)
    throw UsageError("--mosaic-only and --shard do not go together: shards run tiles, the mosaic step reads them all");
  if (options.mosaic_only && options.force)
    throw UsageError("--mosaic-only runs no tile, so --force has nothing to redo");
  if (options.threads < 0 || options.tile_workers < 0) throw UsageError("--threads and --tile-workers must be 0 or more");
  ensure_gdal();
  const BatchPlan plan = make_plan(options, tool_version);
  // One batch per region folder; shards of one batch share it (each tile folder has its own lock).
  std::error_code ec;
  fs::create_directories(plan.manifest.output_dir, ec);
  if (ec) throw IoError(plan.manifest.output_dir + ": cannot create the output folder: " + ec.message());
  const FolderLock region_lock(plan.manifest.output_dir,
                               options.shard ? FolderLock::Mode::shared : FolderLock::Mode::exclusive);
  if (region_lock.held() && !options.shard) {
    recover_output_sets(plan.manifest.output_dir);
    remove_stale_partials(plan.manifest.output_dir, {"batch-report.json", "batch-report.csv"});
    remove_stale_mosaic_partials(plan.manifest.output_dir, plan.region_owned);
  }

  std::vector<std::size_t> selected;
  if (options.shard) selected = shard_positions(plan.tiles.size(), *options.shard);
  else
    for (std::size_t i = 0; i < plan.tiles.size(); ++i) selected.push_back(i);

  BatchSummary summary;
  std::map<std::string, TileRun> known;
  if (!options.mosaic_only) {
    std::vector<const Tile*> pending;
    for (const std::size_t i : selected) {
      const Tile& tile = plan.tiles[i];
      const std::string dir = tile_folder(plan.manifest.output_dir, tile.id);
      if (!options.force) {
        const TileAssessment a = assess_tile(dir, plan.fingerprint(tile));
        if (a.state == TileState::up_to_date) {
          known.emplace(tile.id, TileRun{outcome_of(tile.id, a), a.record});
          continue;
        }
      }
      pending.push_back(&tile);
    }
    const int threads = choose_threads(options.threads);
    const int workers = options.tile_workers > 0 ? options.tile_workers : threads;
    std::vector<TileRun> runs;
    {
      std::vector<std::int64_t> pixels;
      std::int64_t total_pixels = 0;
      for (const Tile* t : pending) total_pixels += pixels.emplace_back(tile_pixels(*t));
      BatchProgress display(progress, static_cast<std::int64_t>(pending.size()), total_pixels,
                            static_cast<std::int64_t>(known.size()));
      runs = run_tiles(plan, pending, pixels, threads, workers, display);
      display.finish();
    }
    for (TileRun& run : runs) known.emplace(run.outcome.id, std::move(run));
  }

  for (const std::size_t i : selected) {
    const Tile& tile = plan.tiles[i];
    auto it = known.find(tile.id);
    if (it == known.end()) {
      const TileAssessment a = assess_tile(tile_folder(plan.manifest.output_dir, tile.id), plan.fingerprint(tile));
      it = known.emplace(tile.id, TileRun{outcome_of(tile.id, a), a.record}).first;
    }
    const TileOutcome& o = it->second.outcome;
    summary.tiles.push_back(o);
    if (o.ran_this_run && o.status == "done") ++summary.ran;
    else if (o.status == "up_to_date") ++summary.up_to_date;
    else if (o.status == "failed") ++summary.failed;
  }
  if (options.shard) {
    summary.not_done = static_cast<int>(summary.tiles.size()) - summary.ran - summary.up_to_date;
    summary.exit_code = summary.not_done > 0 ? kExitTilesFailed : 0;
    return summary;
  }
  finish_region(plan, options, known, summary);
  return summary;
}

}  // namespace habcast
