#include "predict/scenario_run.hpp"

#include <algorithm>
#include <chrono>
#include <filesystem>
#include <memory>
#include <optional>
#include <thread>

#include "core/base/utc_time.hpp"
#include "core/domain/novelty_model.hpp"
#include "core/domain/training_domain.hpp"
#include "core/domain/training_samples.hpp"
#include "core/model/evaluator.hpp"
#include "core/model/model_file.hpp"
#include "core/model/output_precision.hpp"
#include "core/model/term_plan.hpp"
#include "core/prediction/block_predictor.hpp"
#include "core/prediction/change_combiner.hpp"
#include "pipeline/output_folder.hpp"
#include "pipeline/ordered_parallel.hpp"
#include "pipeline/run_files.hpp"
#include "pipeline/resource_limits.hpp"
#include "pipeline/stop_signal.hpp"
#include "predict/change_rasters.hpp"
#include "predict/covariate_inputs.hpp"
#include "predict/predict_folder.hpp"
#include "predict/prediction_folder.hpp"
#include "predict/prediction_members.hpp"
#include "predict/prediction_report.hpp"
#include "predict/recorded_threshold.hpp"
#include "predict/scenario_report.hpp"
#include "raster/alignment_plan.hpp"
#include "raster/gdal_session.hpp"
#include "raster/output_raster.hpp"
#include "raster/raster_grid.hpp"
#include "raster/window.hpp"
#include "render/change_class_figure.hpp"
#include "render/figure_file.hpp"

namespace habcast {

namespace {

namespace fs = std::filesystem;

/// A scenario's rasters: the baseline's, with the scenario's replacements.
std::vector<CovariateInput> scenario_inputs(const ModelSpec& spec, const std::vector<CovariateInput>& baseline,
                                            const Scenario& scenario) {
  std::vector<CovariateInput> inputs = baseline;
  for (const auto& [name, path] : scenario.rasters) {
    const int c = spec.covariate_index(name);
    if (c < 0)
      throw InputError(scenario.source + ": scenario \"" + scenario.name + "\" replaces covariate \"" + name +
                       "\", which the model does not have; its covariates are " + covariate_list(spec));
    inputs[static_cast<std::size_t>(c)].path = path;
  }
  return inputs;
}

struct Worker {
  std::unique_ptr<MemberWindow> members;
  std::vector<ChangeCombiner> combiners;  ///< one per scenario
};

struct BlockResult {
  std::vector<BlockOutputs> members;
  std::vector<PredictionTally> tallies;
  std::vector<ChangeOutputs> changes;
  std::vector<ChangeTally> change_tallies;
};

}  // namespace

std::vector<std::string> scenario_owned_names(const std::vector<Scenario>& scenarios) {
  std::vector<std::string> owned{"scenarios.json", "scenarios.csv"};
  for (const std::string& name : predict_owned_names()) owned.push_back("baseline/" + name);
  for (const Scenario& s : scenarios) {
    for (const std::string& name : predict_owned_names()) owned.push_back(s.name + "/" + name);
    for (const std::string& name : change_owned_names()) owned.push_back(s.name + "/" + name);
  }
  return owned;
}

ScenarioSummary run_scenarios(const ScenarioRunOptions& options, Progress& progress, const std::string& tool_version) {
  const auto t0 = std::chrono::steady_clock::now();
  const std::string started = utc_now();
  const PredictOptions& po = options.predict;
  check_prediction_options(po);
  if (options.scenarios.scenarios.empty())
    throw UsageError("no scenarios: give --scenarios FILE.toml or --scenario NAME:COVARIATE=FILE");
  if (!po.quicklook_path.empty())
    throw UsageError("--quicklook draws one prediction; with scenarios, draw a folder's suitability.tif afterwards");
  if (po.max_extrapolated_percent)
    throw UsageError("--max-extrapolated is not available with scenarios: the scenario report gives each "
                     "scenario's extrapolated share (scenarios.json)");
  std::string threshold_source;
  const std::optional<double> threshold = choose_threshold(options.threshold, options.threshold_from, options.scenarios, threshold_source);
  const std::string& ql = options.change_quicklook;
  if (!ql.empty() && ql != "png" && ql != "svg" && ql != "pdf")
    throw UsageError("--change-quicklook takes png, svg or pdf, got \"" + ql + "\"");
  if (!ql.empty() && !threshold)
    throw UsageError("--change-quicklook draws the change classes, which need a threshold: add --threshold or --threshold-from");
  ensure_gdal();

  // Everything that can be wrong with the inputs is found before any output is created.
  const ModelSpec spec = read_model_file(po.model_path);
  if (!spec.covariance)
    throw InputError(located(spec.path, 0, "the change between scenarios needs the model's covariance matrix for its "
                                           "uncertainty: add covariance = [[...]] to [coefficients]"));
  const TermPlan plan(spec);
  const std::vector<Scenario>& scenarios = options.scenarios.scenarios;
  std::vector<std::vector<CovariateInput>> member_inputs{resolve_inputs(spec, po)};
  for (const Scenario& s : scenarios) member_inputs.push_back(scenario_inputs(spec, member_inputs.front(), s));
  std::vector<PredictionMember> member_list;
  for (const auto& inputs : member_inputs) member_list.push_back({&spec, &plan, nullptr, nullptr, inputs});
  const MemberSources sources(member_list);
  const AlignmentPlan alignment = sources.align(po.alignment);  // covariates on other grids: warped
  const RasterGrid& grid = alignment.target;
  std::optional<TrainingSamples> samples;
  std::optional<TrainingDomain> domain;
  std::optional<NoveltyModel> novelty;
  if (spec.training_samples) {
    samples = read_training_samples(spec);
    domain.emplace(spec, *samples);
    if (po.novelty.any()) novelty.emplace(spec, plan, *samples, po.novelty);
  }

  for (PredictionMember& m : member_list) {
    m.domain = domain ? &*domain : nullptr;
    m.novelty = novelty ? &*novelty : nullptr;
  }
  const std::size_t members = member_inputs.size();
  const std::size_t k = spec.covariates.size();
  const double quantum = po.max_error ? quantum_for_max_error(*po.max_error) : 0.0;
  const int threads = po.threads > 0 ? po.threads : static_cast<int>(std::max(1u, std::thread::hardware_concurrency()));
  const std::vector<Window> windows = prediction_windows(grid, po.block_size);
  std::int64_t largest_window = 0;
  for (const Window& w : windows) largest_window = std::max(largest_window, w.pixels());
  // Each member holds a window of covariates and its outputs, each scenario its change: counted
  // as that many windows of predict.
  check_working_memory(largest_window * static_cast<std::int64_t>(members + scenarios.size()),
                       static_cast<std::int64_t>(k), plan.term_count(), threads, po.max_memory_bytes);

  const double z = Evaluator(spec, po.level).z();
  std::vector<std::unique_ptr<Worker>> workers;
  for (int t = 0; t < threads; ++t) {
    auto w = std::make_unique<Worker>();
    w->members = std::make_unique<MemberWindow>(member_list, sources, alignment, po.level, quantum);
    for (std::size_t s = 0; s < scenarios.size(); ++s) w->combiners.emplace_back(spec.link, *spec.covariance, z, threshold);
    workers.push_back(std::move(w));
  }

  // Folders: baseline/ and one per scenario, each exactly as predict writes it. Every file the run
  // reads and writes is resolved first; the whole tree is locked, and committed as one set.
  const fs::path top(po.output_dir);
  std::vector<std::string> folders{(top / "baseline").string()};
  for (const Scenario& s : scenarios) folders.push_back((top / s.name).string());
  const std::string json_path = (top / "scenarios.json").string();
  const std::string csv_path = (top / "scenarios.csv").string();
  const std::vector<std::string> owned = scenario_owned_names(scenarios);
  RunFiles files;
  files.input("model file", spec.path);
  if (spec.training_samples) files.input("training samples", *spec.training_samples);
  files.input("scenario file", options.scenarios.path);
  for (std::size_t m = 0; m < members; ++m)
    for (const CovariateInput& in : member_inputs[m])
      files.input((m == 0 ? std::string("baseline") : "scenario " + scenarios[m - 1].name) + " raster of covariate " + in.name,
                  in.path);
  for (const std::string& name : owned) files.output("output " + name, (top / name).string());
  files.check();
  const OutputFolder folder(po.output_dir, owned, po.overwrite,
                            " (the old outputs stay until the new ones are complete, then are replaced as a set), or "
                            "choose another output folder with -o");
  std::vector<std::unique_ptr<PredictionFolder>> outputs;
  for (std::size_t m = 0; m < members; ++m) {
    PredictOptions mo = po;
    mo.output_dir = folders[m];
    outputs.push_back(std::make_unique<PredictionFolder>(mo, spec, grid, true, domain.has_value(),
                                                         novelty ? &*novelty : nullptr, tool_version, threads));
  }
  std::vector<ChangeRasters> change_outputs;
  for (std::size_t s = 0; s < scenarios.size(); ++s)
    change_outputs.push_back(
        create_change_rasters(po, spec, spec.path, scenarios[s], folders[s + 1], grid, threshold, tool_version, threads));
  std::vector<OutputRaster*> all_rasters;
  for (auto& f : outputs)
    for (OutputRaster* r : f->rasters()) all_rasters.push_back(r);
  for (ChangeRasters& c : change_outputs) {
    all_rasters.push_back(c.change.get());
    if (c.classes) all_rasters.push_back(c.classes.get());
  }

  set_gdal_cache(po.gdal_cache_bytes > 0
                     ? po.gdal_cache_bytes
                     : prediction_cache_bytes(windows, sources.sources.size() + 6 * members + 6 * scenarios.size(),
                                              static_cast<std::size_t>(threads)));
  std::vector<PredictionTally> totals(members, PredictionTally(k));
  std::vector<ChangeTally> change_totals(scenarios.size());
  progress.start("scenarios", static_cast<std::int64_t>(windows.size()));

  run_ordered<BlockResult>(
      windows.size(), threads, 2 * static_cast<std::size_t>(threads),
      [&](std::size_t item, int worker_index) {
        Worker& wk = *workers[static_cast<std::size_t>(worker_index)];
        const Window& w = windows[item];
        const Eigen::Index n = static_cast<Eigen::Index>(w.pixels());
        BlockResult result;
        result.changes.resize(scenarios.size());
        result.change_tallies.resize(scenarios.size());
        for (std::size_t s = 0; s < scenarios.size(); ++s) wk.combiners[s].begin(n, result.changes[s]);
        wk.members->run(w, result.members, result.tallies, [&](Eigen::Index first, Eigen::Index rows) {
          for (std::size_t s = 0; s < scenarios.size(); ++s)
            wk.combiners[s].chunk(first, rows, wk.members->predictor(0), wk.members->predictor(s + 1),
                                  result.members[0], result.members[s + 1], result.changes[s],
                                  result.change_tallies[s]);
        });
        return result;
      },
      [&](std::size_t item, BlockResult& result) {
        const Window& w = windows[item];
        for (std::size_t m = 0; m < members; ++m) {
          outputs[m]->write(w, result.members[m]);
          totals[m].merge(result.tallies[m]);
        }
        for (std::size_t s = 0; s < scenarios.size(); ++s) {
          change_outputs[s].write(w, result.changes[s]);
          change_totals[s].merge(result.change_tallies[s]);
        }
        progress.advance(static_cast<std::int64_t>(item + 1));
      },
      [] { return stop_signal() != 0; });
  throw_if_stopped();
  progress.finish();

  for (OutputRaster* r : all_rasters) {
    if (po.overviews) r->build_overviews();
    throw_if_stopped();
  }
  // Every raster, picture, table and report of every folder is committed together at the end:
  // a run leaves the complete old set or the complete new one (pipeline/output_set.hpp).
  OutputCommit commit(po.output_dir, "scenarios", owned);
  commit.take_rasters(all_rasters);

  ScenarioSummary summary;
  // The pictures are a convenience: if one cannot be drawn, the rasters still stand.
  std::vector<std::string> picture_problems;
  if (!ql.empty()) {
    for (std::size_t s = 0; s < scenarios.size(); ++s) {
      const std::string path = (fs::path(folders[s + 1]) / ("change_class." + ql)).string();
      try {
        const Figure f = change_class_figure(commit.finished(change_outputs[s].classes->final_path()),
                                             "Scenario " + scenarios[s].name + " against the baseline",
                                             "at suitability " + format_value(*threshold));
        commit.add_file(path, encode_figure(f, path));
        summary.outputs.push_back(path);
      } catch (const Error& e) {
        picture_problems.push_back("no change quicklook for scenario " + scenarios[s].name + ": " + e.what());
      }
    }
  }
  const double elapsed = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  std::vector<std::int64_t> missing(sources.sources.size(), 0);
  for (const auto& w : workers)
    for (std::size_t i = 0; i < missing.size(); ++i) missing[i] += w->members->missing()[i];
  const std::int64_t target_pixels = static_cast<std::int64_t>(grid.width) * grid.height;
  // Each folder's report.json, as predict writes it, for that folder's stack.
  for (std::size_t m = 0; m < members; ++m) {
    ReportContext ctx;
    ctx.tool_version = tool_version;
    ctx.spec = &spec;
    ctx.domain = domain ? &*domain : nullptr;
    ctx.novelty = novelty ? &*novelty : nullptr;
    ctx.inputs = member_inputs[m];
    ctx.grid = grid;
    ctx.level = po.level;
    ctx.threads = threads;
    for (OutputRaster* r : outputs[m]->rasters())
      ctx.outputs.emplace_back(fs::path(r->final_path()).stem().string(), r->final_path());
    if (m > 0) {
      ctx.outputs.emplace_back("change", change_outputs[m - 1].change->final_path());
      if (change_outputs[m - 1].classes) ctx.outputs.emplace_back("change_class", change_outputs[m - 1].classes->final_path());
    }
    ctx.outputs.emplace_back("report", outputs[m]->report_path());
    ctx.tally = &totals[m];
    ctx.started_utc = started;
    ctx.elapsed_seconds = elapsed;
    std::vector<std::string> warnings = prediction_warnings(ctx);
    const auto [folder_alignment, folder_missing] = members_alignment(alignment, sources, {m}, missing);
    for (std::string& w : alignment_warnings(folder_alignment, folder_missing, target_pixels)) warnings.push_back(std::move(w));
    nlohmann::ordered_json report = prediction_report(ctx, warnings);
    report["scenario"] = m == 0 ? "baseline" : scenarios[m - 1].name;
    report["alignment"] = alignment_json(folder_alignment, folder_missing, target_pixels);
    report["exit_code"] = 0;
    commit.add_file(outputs[m]->report_path(), report.dump(2) + "\n");
    for (const auto& [role, path] : ctx.outputs) {
      (void)role;
      summary.outputs.push_back(path);
    }
  }

  ScenarioReportContext sc;
  sc.tool_version = tool_version;
  sc.spec = &spec;
  sc.with_domain = domain.has_value();
  sc.grid = grid;
  sc.level = po.level;
  sc.threshold = threshold;
  sc.threshold_source = threshold_source;
  sc.scenarios = &options.scenarios;
  sc.baseline = &totals[0];
  sc.baseline_folder = folders[0];
  for (std::size_t s = 0; s < scenarios.size(); ++s) {
    sc.tallies.push_back(&totals[s + 1]);
    sc.changes.push_back(&change_totals[s]);
    sc.folders.push_back(folders[s + 1]);
  }
  sc.outputs = {{"report", json_path}, {"table", csv_path}};
  sc.started_utc = started;
  sc.elapsed_seconds = elapsed;
  summary.warnings = scenario_warnings(sc);
  for (std::string& w : alignment_warnings(alignment, missing, target_pixels)) summary.warnings.push_back(std::move(w));
  summary.warnings.insert(summary.warnings.end(), picture_problems.begin(), picture_problems.end());
  summary.report = scenario_report(sc, summary.warnings);
  summary.report["alignment"] = alignment_json(alignment, missing, target_pixels);
  commit.add_file(csv_path, scenario_csv(sc));
  commit.add_file(json_path, summary.report.dump(2) + "\n");
  commit.commit();
  summary.outputs.push_back(csv_path);
  summary.outputs.push_back(json_path);
  return summary;
}

}  // namespace habcast
