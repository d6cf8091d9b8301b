#include "predict/predict_run.hpp"

#include <algorithm>
#include <chrono>
#include <cmath>
#include <ctime>
#include <filesystem>
#include <fstream>
#include <memory>
#include <optional>
#include <thread>
#if defined(__GLIBC__)
#include <malloc.h>
#endif

#include "core/base/utc_time.hpp"
#include "pipeline/atomic_file.hpp"
#include "core/domain/extrapolation_flags.hpp"
#include "core/domain/novelty_model.hpp"
#include "core/domain/training_domain.hpp"
#include "core/domain/training_samples.hpp"
#include "core/model/evaluator.hpp"
#include "core/model/model_file.hpp"
#include "core/model/output_precision.hpp"
#include "core/model/term_plan.hpp"
#include "core/prediction/block_predictor.hpp"
#include "pipeline/ordered_parallel.hpp"
#include "pipeline/recycling_pool.hpp"
#include "pipeline/resource_limits.hpp"
#include "pipeline/stop_signal.hpp"
#include "predict/empty_map.hpp"
#include "predict/covariate_inputs.hpp"
#include "predict/predict_folder.hpp"
#include "predict/prediction_folder.hpp"
#include "predict/prediction_report.hpp"
#include "predict/unit_pass.hpp"
#include "raster/alignment_plan.hpp"
#include "raster/covariate_reader.hpp"
#include "raster/gdal_session.hpp"
#include "raster/output_raster.hpp"
#include "raster/raster_grid.hpp"
#include "raster/window.hpp"
#include "render/figure_file.hpp"
#include "render/quicklook.hpp"

namespace habcast {

namespace {

namespace fs = std::filesystem;

/// GDAL's cache blocks come and go by the thousand; glibc keeps the freed pages, and the
/// scattered holes let the resident set creep up with raster size (measured: the heap peak was
/// the same at 26 and 100 Mpix, the resident set was not). Handing free pages back every few
/// dozen windows keeps it flat.
constexpr std::size_t kTrimEvery = 32;

void return_free_memory() {
#if defined(__GLIBC__)
  malloc_trim(0);
#endif
}

constexpr const char* kCaution =
    "Model output, not ground truth. Check extrapolation.tif and uncertainty.tif, verify in the field, and follow "
    "local regulations and licensed practice before acting on this map.";

/// The target grid and how each covariate reaches it (raster/alignment_plan.hpp): covariates on it
/// are read as they are, the others warped window by window.
AlignmentPlan plan_inputs(const ModelSpec& spec, const std::vector<CovariateInput>& inputs, const PredictOptions& options) {
  std::vector<AlignmentInput> aligned;
  for (std::size_t c = 0; c < inputs.size(); ++c)
    aligned.push_back({inputs[c].name, inputs[c].path, inputs[c].band, spec.covariates[c].categorical,
                       spec.covariates[c].resampling});
  AlignmentPlan plan = plan_alignment(aligned, options.alignment);
  check_raster_size(inputs.front().path, plan.target);
  return plan;
}

/// Processing windows: about block_size x block_size pixels, in whole blocks of the input's tiling
/// (whole rows for striped files), so each input block is decoded once.
std::vector<Window> processing_windows(const RasterGrid& grid, int block_size) {
  const int bw = std::max(1, std::min(grid.block_width, grid.width));
  const int bh = std::max(1, std::min(grid.block_height, grid.height));
  const long long target = static_cast<long long>(block_size) * block_size;
  int win_w = bw >= grid.width ? grid.width : std::max(bw, (std::min(block_size, grid.width) / bw) * bw);
  long long rows = std::max<long long>(1, target / win_w);
  int win_h = static_cast<int>(std::max<long long>(bh, (rows / bh) * bh));
  win_h = std::min(win_h, grid.height);
  return block_windows(grid.width, grid.height, win_w, win_h);
}

/// A GDAL block cache that holds the input and output blocks of the windows in flight (2 per
/// worker, plus the one being written) twice over, and little more: every block is read or
/// written once, so a larger cache only holds dirty output blocks longer (raising peak memory
/// and delaying their compression) instead of saving work.
long long cache_for_windows(const std::vector<Window>& windows, std::size_t bands, std::size_t threads) {
  long long largest = 0;
  for (const Window& w : windows) largest = std::max(largest, static_cast<long long>(w.pixels()));
  const long long bytes = largest * 4 * static_cast<long long>(bands) * static_cast<long long>(2 * threads + 1) * 2;
  return std::clamp(bytes, 32LL << 20, 256LL << 20);
}

std::string percent_label(double level) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%g%%", level * 100.0);
  return buf;
}

std::vector<std::pair<std::string, std::string>> common_metadata(const ModelSpec& spec, const std::string& version) {
  return {{"HABCAST_VERSION", version},
          {"HABCAST_MODEL", spec.path},
          {"HABCAST_MODEL_NAME", spec.name},
          {"HABCAST_FAMILY", to_string(spec.family)},
          {"HABCAST_LINK", to_string(spec.link)},
          {"HABCAST_CAUTION", kCaution}};
}

/// Per-worker state: its own GDAL handles (they are not thread-safe) and scratch buffers.
struct Worker {
  std::vector<std::unique_ptr<CovariateSource>> sources;
  std::vector<std::int64_t> missing;  ///< per covariate: target pixels it gave no value for
  Evaluator evaluator;
  BlockPredictor predictor;
  Eigen::ArrayXXd raw;
  std::vector<std::uint8_t> valid;
  BlockUnitCover unit_cover;
  std::vector<std::uint32_t> unit_slots;  ///< scratch of BlockUnitSums::at, one entry per unit

  Worker(const AlignmentPlan& alignment, const ModelSpec& spec, const TermPlan& plan, double level,
         double quantum, const TrainingDomain* domain, const NoveltyModel* novelty, const LowCertaintyRule* certainty)
      : missing(alignment.covariates.size(), 0), evaluator(spec, level, quantum),
        predictor(spec, plan, evaluator, domain, novelty, certainty) {
    for (std::size_t c = 0; c < alignment.covariates.size(); ++c) sources.push_back(open_covariate_source(alignment, c));
  }
  Worker(const Worker&) = delete;
  Worker& operator=(const Worker&) = delete;
};

struct BlockResult {
  BlockOutputs outputs;
  PredictionTally tally;
  BlockUnitSums units;
};

struct Outputs {
  std::unique_ptr<OutputRaster> suitability;
  std::unique_ptr<OutputRaster> uncertainty;
  std::unique_ptr<OutputRaster> extrapolation;
  std::unique_ptr<OutputRaster> novelty;
  std::unique_ptr<OutputRaster> least_similar;
  std::string report_path;

  std::vector<OutputRaster*> all() {
    std::vector<OutputRaster*> v;
    for (auto* p : {suitability.get(), uncertainty.get(), extrapolation.get(), novelty.get(), least_similar.get()})
      if (p) v.push_back(p);
    return v;
  }
};

/// With --max-error the Float32 outputs hold values on a grid of step q, which LERC stores
/// exactly when its own error allowance is q / 2 (its quantisation grid is then ours). ZSTD level 1
/// behind LERC: on the bench stack GDAL's default level (9) spent ~20 % of the run's CPU in zstd for
/// 2 % fewer bytes. The user's --co still override these.
std::vector<std::string> float_creation_options(const PredictOptions& options) {
  std::vector<std::string> result;
  if (options.max_error) {
    char q_half[64];
    std::snprintf(q_half, sizeof q_half, "%.17g", quantum_for_max_error(*options.max_error) / 2.0);
    result = {"COMPRESS=LERC_ZSTD", std::string("MAX_Z_ERROR=") + q_half, "ZSTD_LEVEL=1"};
  }
  result.insert(result.end(), options.creation_options.begin(), options.creation_options.end());
  return result;
}

std::string checks_text(const NoveltyModel* novelty) {
  std::string s = "range";
  if (!novelty || !novelty->active()) return s;
  const NoveltyOptions& o = novelty->options();
  if (o.hull) s += ",hull";
  if (o.pairs) s += ",pairs";
  if (o.nt2) s += ",nt2";
  if (o.mess) s += ",mess";
  return s;
}

OutputSpec novelty_spec(const OutputSpec& base, const std::string& path, const NoveltyModel& novelty) {
  OutputSpec n = base;
  n.final_path = path;
  n.type = OutputType::float32;
  n.nodata = kFloatNodata;
  n.colours.clear();
  const NoveltyOptions& o = novelty.options();
  const std::string off = " (not computed: not in --checks)";
  n.bands = {{"MESS similarity, percent: min over covariates, negative outside the training range (Elith et al. 2010)" +
                  (o.mess ? std::string() : off), "percent"},
             {"NT1 univariate novelty: 0 in range, negative outside (Mesgaran et al. 2014)" + (o.mess ? std::string() : off), ""},
             {"NT2 = D^2 / max D^2: squared Mahalanobis distance from the training centroid over the largest squared "
              "training distance; > 1 is novel (Mesgaran et al. 2014)" + (o.nt2 ? std::string() : off), ""}};
  n.metadata.emplace_back("HABCAST_NOVELTY_SPACE", "model values of the continuous covariates (after transform and standardisation)");
  n.metadata.emplace_back("HABCAST_NOVELTY_FLOOR", "values below -9000 are written as -9000 so they never equal nodata");
  return n;
}

OutputSpec least_similar_spec(const OutputSpec& base, const std::string& path, const ModelSpec& spec, const NoveltyModel& novelty) {
  OutputSpec l = base;
  l.final_path = path;
  l.type = OutputType::uint8;
  l.nodata = flag::nodata;
  l.bands = {{"covariate with the lowest MESS similarity (1-based position in the model file)", ""}};
  l.colours.clear();
  l.attributes.columns = {"covariate", "units", "description"};
  // A qualitative palette: one distinct colour per covariate, in the model file's order.
  static const std::uint8_t palette[8][3] = {{27, 158, 119}, {217, 95, 2}, {117, 112, 179}, {231, 41, 138},
                                             {102, 166, 30}, {230, 171, 2}, {166, 118, 29}, {102, 102, 102}};
  for (int c : novelty.covariates()) {
    const Covariate& cov = spec.covariates[static_cast<std::size_t>(c)];
    l.attributes.rows.push_back({c + 1, {cov.name, cov.units, cov.description}});
    const auto* rgb = palette[static_cast<std::size_t>(c) % 8];
    l.colours.push_back({c + 1, rgb[0], rgb[1], rgb[2], 255, cov.name});
  }
  l.colours.push_back({flag::nodata, 0, 0, 0, 0, "no data"});
  return l;
}

Outputs create_outputs(const PredictOptions& options, const ModelSpec& spec, const RasterGrid& grid, bool with_se,
                       bool with_flags, const NoveltyModel* novelty, const std::string& version, int threads) {
  // GDAL compresses output blocks in this many threads: as many as --threads allows, so that a
  // job given one core (a cluster slot, --threads 1) uses one core. A user's --co NUM_THREADS=...
  // still wins (it comes later in the list).
  const std::string compression_threads = "NUM_THREADS=" + std::to_string(threads);
  const fs::path dir(options.output_dir);
  Outputs out;
  const std::string suitability_path = (dir / "suitability.tif").string();
  const std::string uncertainty_path = (dir / "uncertainty.tif").string();
  const std::string extrapolation_path = (dir / "extrapolation.tif").string();
  const std::string novelty_path = (dir / "novelty.tif").string();
  const std::string least_similar_path = (dir / "least_similar.tif").string();
  out.report_path = (dir / "report.json").string();
  const bool with_novelty = with_flags && novelty && novelty->active() && options.novelty_rasters &&
                            (novelty->options().mess || novelty->options().nt2);
  const bool with_least_similar = with_novelty && novelty->options().mess;

  const auto metadata = common_metadata(spec, version);
  const std::string units = spec.family == Family::binomial ? "probability" : spec.response;

  OutputSpec s;
  s.final_path = suitability_path;
  s.type = OutputType::float32;
  s.nodata = kFloatNodata;
  s.bands = {{response_description(spec), units}};
  s.creation_options = float_creation_options(options);
  s.creation_options.insert(s.creation_options.begin(), compression_threads);
  s.metadata = metadata;
  if (options.max_error) {
    const double q = quantum_for_max_error(*options.max_error);
    s.metadata.emplace_back("HABCAST_MAX_ERROR",
                            "values rounded to multiples of 2^" + std::to_string(std::ilogb(q)) +
                                ", so |stored - computed| <= " + format_value(q / 2) + " (--max-error " +
                                format_value(*options.max_error) + ")");
  }
  out.suitability = std::make_unique<OutputRaster>(s, grid);

  if (with_se) {
    OutputSpec u = s;
    u.final_path = uncertainty_path;
    const std::string pct = percent_label(options.level);
    u.bands = {{"standard error (response scale, delta method)", units},
               {"lower " + pct + " confidence limit", units},
               {"upper " + pct + " confidence limit", units}};
    u.metadata.emplace_back("HABCAST_CONFIDENCE_LEVEL", format_value(options.level));
    u.metadata.emplace_back("HABCAST_LIMITS", "formed on the link scale as eta -/+ z*se(eta), then back-transformed");
    out.uncertainty = std::make_unique<OutputRaster>(u, grid);
  }
  if (with_flags) {
    OutputSpec e;
    e.final_path = extrapolation_path;
    e.type = OutputType::uint8;
    e.nodata = flag::nodata;
    e.bands = {{"extrapolation flags (bit field; see category names)", ""}};
    e.creation_options = options.creation_options;
    e.creation_options.insert(e.creation_options.begin(), compression_threads);
    e.metadata = metadata;
    e.metadata.emplace_back("HABCAST_FLAG_BITS",
                            "1=outside training range of a covariate; 2=in range but outside the training hull; "
                            "4=categorical level not seen in training; 8=in range but NT2 above its threshold "
                            "(novel combination); 16=in range but outside the 2-D training hull of an interacting "
                            "pair; 255=no data");
    e.metadata.emplace_back("HABCAST_CHECKS", checks_text(novelty));
    e.metadata.emplace_back("HABCAST_HULL_METHOD", novelty ? novelty->hull_method() : "not checked (range only)");
    if (novelty && novelty->options().nt2)
      e.metadata.emplace_back("HABCAST_NT2_THRESHOLD", format_value(novelty->options().nt2_threshold));
    for (const FlagColour& c : flag_colour_table()) e.colours.push_back({c.value, c.r, c.g, c.b, c.a, c.label});
    out.extrapolation = std::make_unique<OutputRaster>(e, grid);
    if (with_novelty) out.novelty = std::make_unique<OutputRaster>(novelty_spec(e, novelty_path, *novelty), grid);
    if (with_least_similar)
      out.least_similar = std::make_unique<OutputRaster>(least_similar_spec(e, least_similar_path, spec, *novelty), grid);
  }
  return out;
}

void write_block(Outputs& out, const Window& w, const BlockOutputs& b) {
  out.suitability->write(1, w, b.suitability.data());
  if (out.uncertainty) {
    out.uncertainty->write(1, w, b.se.data());
    out.uncertainty->write(2, w, b.lower.data());
    out.uncertainty->write(3, w, b.upper.data());
  }
  if (out.extrapolation) out.extrapolation->write(1, w, b.flags.data());
  if (out.novelty) {
    out.novelty->write(1, w, b.novelty.mess.data());
    out.novelty->write(2, w, b.novelty.nt1.data());
    out.novelty->write(3, w, b.novelty.nt2.data());
  }
  if (out.least_similar) out.least_similar->write(1, w, b.novelty.least_similar.data());
  for (OutputRaster* r : out.all()) r->flush_completed_blocks(w);
}

void check_novelty_options(const NoveltyOptions& o) {
  if (!(o.nt2_threshold > 0.0))
    throw UsageError("--nt2-threshold must be positive (1 flags pixels farther than any training sample), got " +
                     format_value(o.nt2_threshold));
  if (!(o.hull_tolerance >= 0.0 && o.hull_tolerance <= 1e-3))
    throw UsageError("--hull-tolerance is a relative enlargement from 0 to 0.001 (default 1e-9), got " +
                     format_value(o.hull_tolerance));
  if (o.hull_max_dim < 2 || o.hull_max_dim > 10)
    throw UsageError("--hull-max-dim must be between 2 and 10, got " + std::to_string(o.hull_max_dim));
}

}  // namespace

PredictSummary run_predict(const PredictOptions& options, Progress& progress, const std::string& tool_version) {
  const auto t0 = std::chrono::steady_clock::now();
  const std::string started = utc_now();
  if (!(options.level > 0.0 && options.level < 1.0))
    throw UsageError("--level must lie strictly between 0 and 1 (for example 0.95), got " + format_value(options.level));
  if (options.block_size < 16 || options.block_size > 16384)
    throw UsageError("--block-size must be between 16 and 16384 pixels");
  if (options.max_extrapolated_percent && !(*options.max_extrapolated_percent >= 0.0 && *options.max_extrapolated_percent <= 100.0))
    throw UsageError("--max-extrapolated is a percentage from 0 to 100");
  if (options.max_error && !(*options.max_error > 0.0 && *options.max_error <= 1.0))
    throw UsageError("--max-error is an absolute error in the outputs' units, above 0 and at most 1 (for example "
                     "1e-4), got " + format_value(*options.max_error));
  check_novelty_options(options.novelty);
  ensure_gdal();
  check_creation_options(options.creation_options);

  // Everything that can be wrong with the inputs is found before any output is created.
  const ModelSpec spec = read_model_file(options.model_path);
  const TermPlan plan(spec);
  const std::vector<CovariateInput> inputs = resolve_inputs(spec, options);
  check_predict_files(options, spec, inputs);  // no output may be an input, or another output
  const AlignmentPlan alignment = plan_inputs(spec, inputs, options);
  const RasterGrid& grid = alignment.target;
  std::optional<TrainingSamples> samples;
  std::optional<TrainingDomain> domain;
  std::optional<NoveltyModel> novelty;
  if (spec.training_samples) {
    samples = read_training_samples(spec);
    domain.emplace(spec, *samples);
    if (options.novelty.any()) novelty.emplace(spec, plan, *samples, options.novelty);
  }
  const LowCertaintyRule certainty = LowCertaintyRule::for_model(spec, samples ? &*samples : nullptr);
  std::optional<UnitPlan> unit_plan;
  if (options.units.active()) unit_plan = plan_units(options.units, grid, spec.family);
  if (!options.units.map_path.empty()) {
    if (!unit_plan) throw UsageError("--units-map draws the units of --units: give --units POLYGONS too");
    figure_format(options.units.map_path);
  }
  if (!options.quicklook_path.empty()) figure_format(options.quicklook_path);  // .png, .pdf or .svg, refused before the run
  if (options.max_extrapolated_percent && !domain)
    throw InputError(located(spec.path, 0, "--max-extrapolated needs training samples: add [training] samples = \"FILE.csv\""));

  const double quantum = options.max_error ? quantum_for_max_error(*options.max_error) : 0.0;
  const int threads = options.threads > 0 ? options.threads : static_cast<int>(std::max(1u, std::thread::hardware_concurrency()));
  const std::vector<Window> windows = processing_windows(grid, options.block_size);
  std::int64_t largest_window = 0;
  for (const Window& w : windows) largest_window = std::max(largest_window, w.pixels());
  check_working_memory(largest_window, static_cast<std::int64_t>(spec.covariates.size()), plan.term_count(), threads,
                       options.max_memory_bytes);
  std::vector<std::unique_ptr<Worker>> workers;
  for (int t = 0; t < threads; ++t)
    workers.push_back(std::make_unique<Worker>(alignment, spec, plan, options.level, quantum,
                                               domain ? &*domain : nullptr, novelty ? &*novelty : nullptr, &certainty));

  const PredictFolder folder(options);  // created, locked, leftovers of killed runs resolved
  Outputs out = create_outputs(options, spec, grid, spec.covariance.has_value(), domain.has_value(),
                               novelty ? &*novelty : nullptr, tool_version, threads);
  const fs::path out_dir(options.output_dir);
  const std::string units_gpkg = (out_dir / "units.gpkg").string();
  const std::string units_csv_path = (out_dir / "units.csv").string();
  const std::string units_json_path = (out_dir / "units.json").string();
  if (unit_plan) {
    for (auto& w : workers) w->unit_slots.assign(unit_plan->units.size(), 0);
  }
  std::vector<UnitSums> unit_totals(unit_plan ? unit_plan->units.size() : 0);

  const std::size_t k = spec.covariates.size();
  set_gdal_cache(options.gdal_cache_bytes > 0 ? options.gdal_cache_bytes
                                              : cache_for_windows(windows, k + 5, static_cast<std::size_t>(threads)));
  PredictionTally total(k);
  RecyclingPool<BlockOutputs> buffers;
  progress.start("predict", static_cast<std::int64_t>(windows.size()));

  run_ordered<BlockResult>(
      windows.size(), threads, 2 * static_cast<std::size_t>(threads),
      [&](std::size_t item, int worker_index) {
        Worker& worker = *workers[static_cast<std::size_t>(worker_index)];
        const Window& w = windows[item];
        const Eigen::Index n = static_cast<Eigen::Index>(w.pixels());
        worker.raw.resize(n, static_cast<Eigen::Index>(k));
        worker.valid.assign(static_cast<std::size_t>(n), 1);
        for (std::size_t c = 0; c < k; ++c)
          worker.missing[c] += worker.sources[c]->read(w, worker.raw.col(static_cast<Eigen::Index>(c)).data(), worker.valid.data());
        BlockResult result{buffers.take(), PredictionTally(k), {}};
        if (unit_plan) {
          cover_window(*unit_plan, w, worker.unit_cover);
          const UnitPass pass{&worker.unit_cover, &result.units, &worker.unit_slots,
                              unit_plan->threshold ? unit_plan->threshold->value : 0.0, spec.covariance.has_value()};
          worker.predictor.run(worker.raw, worker.valid, n, result.outputs, result.tally, &pass);
          result.units.release_slots(worker.unit_slots);
        } else {
          worker.predictor.run(worker.raw, worker.valid, n, result.outputs, result.tally);
        }
        return result;
      },
      [&](std::size_t item, BlockResult& result) {
        write_block(out, windows[item], result.outputs);
        buffers.give(std::move(result.outputs));
        total.merge(result.tally);
        for (std::size_t i = 0; i < result.units.units.size(); ++i)
          unit_totals[result.units.units[i]].merge(result.units.sums[i]);
        progress.advance(static_cast<std::int64_t>(item + 1));
        if ((item + 1) % kTrimEvery == 0) return_free_memory();
      },
      [] { return stop_signal() != 0; });
  throw_if_stopped();
  progress.finish();

  // Sums of whole numbers: the same whichever worker read which window.
  std::vector<std::int64_t> missing(k, 0);
  for (const auto& worker : workers)
    for (std::size_t c = 0; c < k; ++c) missing[c] += worker->missing[c];
  const std::int64_t target_pixels = static_cast<std::int64_t>(grid.width) * grid.height;
  for (OutputRaster* r : out.all())
    for (const auto& [key, value] : alignment_metadata(alignment, missing, target_pixels)) r->add_metadata(key, value);
  for (OutputRaster* r : out.all()) {
    if (options.overviews) r->build_overviews();
    throw_if_stopped();
    r->close();
  }
  // Nothing is renamed until every file of the set is complete: then all of it at once.
  PredictCommit commit(options);
  commit.take_rasters(out.all());
  // The quicklook is a convenience: if it cannot be drawn, the rasters still stand.
  const std::string quicklook_problem = commit.add_outside_picture([&](const std::string& temporary) {
    const Figure quicklook = quicklook_figure(commit.finished(out.suitability->final_path()),
                                              out.extrapolation ? commit.finished(out.extrapolation->final_path()) : "",
                                              spec.name.empty() ? "habcast prediction" : spec.name, spec.description);
    write_whole_file(temporary, encode_figure(quicklook, options.quicklook_path), options.quicklook_path);
  });

  std::optional<UnitResults> unit_results;
  if (unit_plan) {
    const Evaluator evaluator(spec, options.level, 0.0);
    unit_results = summarise_units(*unit_plan, unit_totals, spec, evaluator.z(), options.level);
    // The unit tables are part of the set: committed with the rasters, or not at all.
    commit.add_written(units_gpkg, [&](const std::string& temporary) {
      write_units_geopackage(temporary, unit_plan->units, unit_status(*unit_plan, *unit_results),
                             unit_table_columns(*unit_plan, *unit_results, spec));
    });
    commit.add_file(units_csv_path, units_csv(*unit_plan, *unit_results, spec));
    commit.add_file(units_json_path, units_json(*unit_plan, *unit_results, spec, options.level).dump(2) + "\n");
  }

  ReportContext ctx;
  ctx.tool_version = tool_version;
  ctx.spec = &spec;
  ctx.domain = domain ? &*domain : nullptr;
  ctx.novelty = novelty ? &*novelty : nullptr;
  ctx.certainty = &certainty;
  ctx.inputs = inputs;
  ctx.grid = grid;
  ctx.level = options.level;
  ctx.threads = threads;
  for (OutputRaster* r : out.all()) {
    const std::string role = fs::path(r->final_path()).stem().string();
    ctx.outputs.emplace_back(role, r->final_path());
  }
  if (!options.quicklook_path.empty() && quicklook_problem.empty()) ctx.outputs.emplace_back("quicklook", options.quicklook_path);
  if (unit_plan) {
    ctx.outputs.emplace_back("units", units_gpkg);
    ctx.outputs.emplace_back("units_table", units_csv_path);
    ctx.outputs.emplace_back("units_json", units_json_path);
    if (!options.units.map_path.empty()) ctx.outputs.emplace_back("units_map", options.units.map_path);
  }
  ctx.outputs.emplace_back("report", out.report_path);
  ctx.tally = &total;
  ctx.started_utc = started;
  ctx.elapsed_seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();

  PredictSummary summary;
  summary.warnings = prediction_warnings(ctx);
  for (std::string& w : alignment_warnings(alignment, missing, target_pixels)) summary.warnings.push_back(std::move(w));
  if (samples) summary.warnings.insert(summary.warnings.begin(), samples->warnings.begin(), samples->warnings.end());
  if (total.predicted == 0 && total.pixels > 0) summary.warnings.push_back(empty_map_warning(inputs, grid));
  if (!quicklook_problem.empty()) summary.warnings.push_back(quicklook_problem);
  if (unit_results)
    summary.warnings.insert(summary.warnings.end(), unit_results->warnings.begin(), unit_results->warnings.end());
  summary.report = prediction_report(ctx, summary.warnings);
  if (unit_results) summary.report["units"] = unit_results->report;
  summary.report["alignment"] = alignment_json(alignment, missing, target_pixels);
  if (options.max_extrapolated_percent && domain) {
    const double pct = total.domain.checked > 0 ? 100.0 * static_cast<double>(total.domain.flagged) /
                                                      static_cast<double>(total.domain.checked)
                                                : 0.0;
    summary.report["max_extrapolated_percent"] = *options.max_extrapolated_percent;
    if (pct > *options.max_extrapolated_percent) {
      summary.exit_code = ExitCode::extrapolation;
      summary.warnings.push_back(format_value(pct) + " % of valid pixels are extrapolated, more than --max-extrapolated " +
                                 format_value(*options.max_extrapolated_percent) +
                                 " %; outputs were written but the run reports failure (exit code 5).");
      summary.report["warnings"] = summary.warnings;
    }
  }
  summary.report["exit_code"] = static_cast<int>(summary.exit_code);
  commit.add_file(out.report_path, summary.report.dump(2) + "\n");
  commit.commit();
  // The units map, like a quicklook outside the folder, follows the committed set; if it cannot be
  // drawn, the set still stands and the warning says so.
  if (unit_results && !options.units.map_path.empty()) {
    try {
      write_file_atomically(options.units.map_path,
                            encode_figure(units_map(*unit_plan, *unit_results, spec, grid), options.units.map_path));
    } catch (const Error& e) {
      summary.warnings.push_back(std::string("no units map was written: ") + e.what());
    }
  }
  for (const auto& [role, path] : ctx.outputs) {
    (void)role;
    summary.outputs.push_back(path);
  }
  return summary;
}

}  // namespace habcast

// ---- PredictionFolder (prediction_folder.hpp): predict's outputs, for runs of several predictions ----

namespace habcast {

struct PredictionFolder::Impl {
  Outputs outputs;
};

PredictionFolder::PredictionFolder(const PredictOptions& options, const ModelSpec& spec, const RasterGrid& grid,
                                   bool with_se, bool with_flags, const NoveltyModel* novelty, const std::string& version,
                                   int threads)
    : impl_(std::make_unique<Impl>(
          Impl{create_outputs(options, spec, grid, with_se, with_flags, novelty, version, threads)})) {}

PredictionFolder::~PredictionFolder() = default;

void PredictionFolder::write(const Window& window, const BlockOutputs& outputs) { write_block(impl_->outputs, window, outputs); }

std::vector<OutputRaster*> PredictionFolder::rasters() { return impl_->outputs.all(); }

const std::string& PredictionFolder::report_path() const { return impl_->outputs.report_path; }

std::vector<Window> prediction_windows(const RasterGrid& grid, int block_size) { return processing_windows(grid, block_size); }

long long prediction_cache_bytes(const std::vector<Window>& windows, std::size_t bands, std::size_t threads) {
  return cache_for_windows(windows, bands, threads);
}

void check_prediction_options(const PredictOptions& options) {
  // The same checks and words as run_predict's opening lines.
  if (!(options.level > 0.0 && options.level < 1.0))
    throw UsageError("--level must lie strictly between 0 and 1 (for example 0.95), got " + format_value(options.level));
  if (options.block_size < 16 || options.block_size > 16384)
    throw UsageError("--block-size must be between 16 and 16384 pixels");
  if (options.max_error && !(*options.max_error > 0.0 && *options.max_error <= 1.0))
    throw UsageError("--max-error is an absolute error in the outputs' units, above 0 and at most 1 (for example "
                     "1e-4), got " + format_value(*options.max_error));
  check_novelty_options(options.novelty);
}

}  // namespace habcast
