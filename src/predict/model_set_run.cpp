#include "predict/model_set_run.hpp"

#include <algorithm>
#include <chrono>
#include <cmath>
#include <filesystem>
#include <map>
#include <memory>
#include <optional>
#include <thread>

#include "core/base/utc_time.hpp"
#include "core/domain/extrapolation_flags.hpp"
#include "core/domain/novelty_model.hpp"
#include "core/domain/training_domain.hpp"
#include "core/domain/training_samples.hpp"
#include "core/model/evaluator.hpp"
#include "core/model/model_file.hpp"
#include "core/model/term_plan.hpp"
#include "pipeline/atomic_file.hpp"
#include "pipeline/ordered_parallel.hpp"
#include "pipeline/output_folder.hpp"
#include "pipeline/output_guard.hpp"
#include "pipeline/run_files.hpp"
#include "pipeline/resource_limits.hpp"
#include "pipeline/stop_signal.hpp"
#include "core/prediction/averaged_change.hpp"
#include "core/prediction/change_combiner.hpp"
#include "predict/change_rasters.hpp"
#include "predict/prediction_folder.hpp"
#include "predict/recorded_threshold.hpp"
#include "predict/prediction_members.hpp"
#include "predict/prediction_report.hpp"
#include "raster/alignment_plan.hpp"
#include "raster/gdal_session.hpp"
#include "raster/output_raster.hpp"
#include "render/figure_file.hpp"
#include "render/quicklook.hpp"

namespace habcast {

namespace {

namespace fs = std::filesystem;
using json = nlohmann::ordered_json;

/// One model of the set, with what it needs to run.
struct SetModel {
  ModelSpec spec;
  std::unique_ptr<TermPlan> plan;
  std::optional<TrainingDomain> domain;
  std::optional<NoveltyModel> novelty;
  double weight = 0.0;
};

/// The same response, family and training data: averaging models of different things is refused.
void check_compatible(const std::vector<SetModel>& models) {
  std::vector<const ModelSpec*> specs;
  for (const SetModel& m : models) specs.push_back(&m.spec);
  check_model_set_compatible(specs);
}

/// Each covariate's raster: -c, else the models' own default; two models naming different
/// defaults for one covariate is ambiguous and refused with both readings.
std::vector<std::vector<CovariateInput>> resolve_set_inputs(const std::vector<SetModel>& models, const PredictOptions& o) {
  for (const auto& [name, path] : o.covariate_rasters) {
    (void)path;
    bool used = false;
    for (const SetModel& m : models) used = used || m.spec.covariate_index(name) >= 0;
    if (!used) throw UsageError("-c " + name + "=...: no model of the set has a covariate \"" + name + "\"");
  }
  std::map<std::string, std::pair<std::string, std::string>> defaults;  // covariate -> (raster, model)
  std::vector<std::vector<CovariateInput>> all;
  for (const SetModel& m : models) {
    std::vector<CovariateInput> inputs;
    for (const Covariate& c : m.spec.covariates) {
      CovariateInput in{c.name, "", c.band};
      if (auto it = o.covariate_rasters.find(c.name); it != o.covariate_rasters.end()) {
        in.path = it->second;
      } else if (c.raster) {
        in.path = *c.raster;
        auto [d, fresh] = defaults.emplace(c.name, std::make_pair(*c.raster, m.spec.path));
        if (!fresh && fs::path(d->second.first).lexically_normal() != fs::path(*c.raster).lexically_normal())
          throw UsageError("covariate \"" + c.name + "\" is read from " + d->second.first + " by " + d->second.second +
                           " but from " + *c.raster + " by " + m.spec.path + "; say which with -c " + c.name + "=FILE");
      } else {
        throw UsageError("covariate \"" + c.name + "\" of " + m.spec.path + " has no raster: pass -c " + c.name + "=FILE.tif");
      }
      inputs.push_back(in);
    }
    all.push_back(std::move(inputs));
  }
  return all;
}

struct Outputs {
  std::unique_ptr<OutputRaster> suitability, uncertainty, model_choice, extrapolation;
  std::vector<OutputRaster*> all() const {
    std::vector<OutputRaster*> v;
    for (auto* p : {suitability.get(), uncertainty.get(), model_choice.get(), extrapolation.get()})
      if (p) v.push_back(p);
    return v;
  }
};

const char* form_text(UnconditionalForm form) {
  return form == UnconditionalForm::revised
             ? "sqrt(sum w_i (se_i^2 + (mu_i - mu_bar)^2)) (Burnham & Anderson 2002, revised form, eq. 6.12 from memory)"
             : "sum w_i sqrt(se_i^2 + (mu_i - mu_bar)^2) (Burnham & Anderson 2002, eq. 4.9 from memory)";
}

Outputs create_set_outputs(const ModelSetOptions& options, const ModelSpec& first, const RasterGrid& grid,
                           bool with_flags, const std::string& version, int threads) {
  const fs::path dir(options.predict.output_dir);
  const std::vector<std::string> names{"suitability.tif", "uncertainty.tif", "model_choice.tif", "extrapolation.tif"};

  std::string paths;
  for (const std::string& p : options.model_paths) paths += (paths.empty() ? "" : "; ") + p;
  const std::string units = first.family == Family::binomial ? "probability" : first.response;
  OutputSpec s;
  s.type = OutputType::float32;
  s.nodata = kFloatNodata;
  s.creation_options = options.predict.creation_options;
  s.creation_options.insert(s.creation_options.begin(), "NUM_THREADS=" + std::to_string(threads));
  s.metadata = {{"HABCAST_VERSION", version},
                {"HABCAST_MODEL_SET", paths},
                {"HABCAST_FAMILY", to_string(first.family)},
                {"HABCAST_CAUTION", "Model output, not ground truth. An average of models is only as good as the "
                                    "models averaged; check extrapolation.tif, uncertainty.tif and model_choice.tif."}};
  Outputs out;
  OutputSpec a = s;
  a.final_path = (dir / names[0]).string();
  a.bands = {{"model-averaged " + response_description(first) + " (weighted mean on the response scale)", units}};
  out.suitability = std::make_unique<OutputRaster>(a, grid);
  OutputSpec u = s;
  u.final_path = (dir / names[1]).string();
  char pct[32];
  std::snprintf(pct, sizeof pct, "%g%%", options.predict.level * 100.0);
  u.bands = {{std::string("unconditional standard error: ") + form_text(options.form), units},
             {std::string("lower ") + pct + " confidence limit", units},
             {std::string("upper ") + pct + " confidence limit", units}};
  u.metadata.emplace_back("HABCAST_LIMITS", "formed on the family's canonical link scale from the unconditional se "
                                            "by the delta method, then back-transformed");
  out.uncertainty = std::make_unique<OutputRaster>(u, grid);
  OutputSpec c = s;
  c.final_path = (dir / names[2]).string();
  c.bands = {{"share of the unconditional variance from model choice: sum w_i (mu_i - mu_bar)^2 / sum w_i (se_i^2 + "
              "(mu_i - mu_bar)^2)", "fraction"}};
  out.model_choice = std::make_unique<OutputRaster>(c, grid);
  if (with_flags) {
    OutputSpec e;
    e.final_path = (dir / names[3]).string();
    e.type = OutputType::uint8;
    e.nodata = flag::nodata;
    e.bands = {{"extrapolation flags, union over the models of the set (bit field; see category names)", ""}};
    e.creation_options = s.creation_options;
    e.metadata = s.metadata;
    for (const FlagColour& f : flag_colour_table()) e.colours.push_back({f.value, f.r, f.g, f.b, f.a, f.label});
    out.extrapolation = std::make_unique<OutputRaster>(e, grid);
  }
  return out;
}

/// Members are model i on stack j at index j * models + i (stack 0 the baseline, then one per
/// scenario); one average per stack, one change per scenario and model, one averaged change per
/// scenario.
struct Worker {
  std::unique_ptr<MemberWindow> members;
  std::vector<std::unique_ptr<AverageCombiner>> averages;        ///< per stack
  std::vector<std::vector<const BlockPredictor*>> predictors;    ///< per stack
  std::vector<std::vector<ChangeCombiner>> changes;              ///< [scenario][model]
};

struct BlockResult {
  std::vector<BlockOutputs> members;
  std::vector<PredictionTally> tallies;
  std::vector<AverageOutputs> average;                 ///< per stack
  std::vector<AverageTally> tally;                     ///< per stack
  std::vector<std::vector<ChangeOutputs>> model_changes;  ///< [scenario][model]
  std::vector<ChangeOutputs> changes;                  ///< per scenario, averaged
  std::vector<ChangeTally> change_tallies;             ///< per scenario
};

double share(std::int64_t part, std::int64_t whole) {
  return whole > 0 ? static_cast<double>(part) / static_cast<double>(whole) : 0.0;
}

}  // namespace

std::vector<std::string> model_set_owned_names(const std::vector<Scenario>& scenarios) {
  std::vector<std::string> per_folder;
  for (const char* raster : {"suitability.tif", "uncertainty.tif", "model_choice.tif", "extrapolation.tif"}) {
    per_folder.emplace_back(raster);
    per_folder.push_back(sidecar_of(raster));
  }
  per_folder.emplace_back("report.json");
  if (scenarios.empty()) return per_folder;
  std::vector<std::string> owned{"scenarios.json"};
  for (const std::string& name : per_folder) owned.push_back("baseline/" + name);
  for (const Scenario& s : scenarios) {
    for (const std::string& name : per_folder) owned.push_back(s.name + "/" + name);
    for (const std::string& name : change_owned_names()) owned.push_back(s.name + "/" + name);
  }
  return owned;
}

void check_model_set_compatible(const std::vector<const ModelSpec*>& specs) {
  const ModelSpec& a = *specs.front();
  for (std::size_t i = 1; i < specs.size(); ++i) {
    const ModelSpec& b = *specs[i];
    auto refuse = [&](const std::string& what, const std::string& va, const std::string& vb) {
      throw InputError(b.path + ": " + what + " is " + vb + ", but " + a.path + " has " + va +
                       "; a model set averages models of the same response fitted on the same data");
    };
    if (a.family != b.family) refuse("the family", to_string(a.family), to_string(b.family));
    if (a.response != b.response) refuse("the response", "\"" + a.response + "\"", "\"" + b.response + "\"");
    if (a.observations && b.observations && *a.observations != *b.observations)
      refuse("n (observations)", std::to_string(*a.observations), std::to_string(*b.observations));
    if (a.training_samples && b.training_samples &&
        fs::path(*a.training_samples).lexically_normal() != fs::path(*b.training_samples).lexically_normal())
      refuse("the training table", *a.training_samples, *b.training_samples);
  }
}

std::vector<double> model_set_weights(const std::vector<double>& given, const std::vector<std::string>& paths,
                                      const std::vector<std::optional<double>>& aic) {
  if (!given.empty()) {
    if (given.size() != paths.size())
      throw UsageError("--weights gives " + std::to_string(given.size()) + " weights for " + std::to_string(paths.size()) +
                       " models; give one per model, in the order of the model files");
    double sum = 0.0;
    for (double w : given) {
      if (!(std::isfinite(w) && w >= 0.0)) throw UsageError("--weights must be finite and not negative, got " + format_value(w));
      sum += w;
    }
    if (!(sum > 0.0)) throw UsageError("--weights are all zero; at least one model must carry weight");
    std::vector<double> w = given;
    for (double& v : w) v /= sum;
    return w;
  }
  std::vector<double> values;
  for (std::size_t i = 0; i < paths.size(); ++i) {
    if (!aic[i])
      throw InputError(paths[i] + ": no aic in [model], so no Akaike weight can be formed; add aic = ... (the "
                       "model's AIC) or give --weights W1,W2,... for the whole set");
    values.push_back(*aic[i]);
  }
  return akaike_weights(values);
}

ModelSetSummary run_model_set(const ModelSetOptions& options, Progress& progress, const std::string& tool_version) {
  const auto t0 = std::chrono::steady_clock::now();
  const std::string started = utc_now();
  const PredictOptions& po = options.predict;
  check_prediction_options(po);
  if (options.model_paths.size() < 2) throw UsageError("a model set needs two or more model files");
  if (po.max_error)
    throw UsageError("--max-error is not available for a model set: the averaged outputs are written losslessly");
  if (!options.scenarios.scenarios.empty() && (!po.quicklook_path.empty() || po.max_extrapolated_percent))
    throw UsageError("--quicklook and --max-extrapolated are for one prediction; with scenarios, use --change-quicklook "
                     "and the extrapolated shares in scenarios.json");
  ensure_gdal();

  // Everything that can be wrong with the inputs is found before any output is created.
  std::vector<SetModel> all;
  for (const std::string& p : options.model_paths) {
    SetModel m;
    m.spec = read_model_file(p);
    if (!m.spec.covariance)
      throw InputError(located(p, 0, "a model set needs every model's covariance matrix for the unconditional "
                                     "standard error: add covariance = [[...]] to [coefficients]"));
    all.push_back(std::move(m));
  }
  check_compatible(all);
  std::vector<std::optional<double>> aic;
  for (const SetModel& m : all) aic.push_back(m.spec.aic);
  const std::vector<double> weights = model_set_weights(options.weights, options.model_paths, aic);
  std::vector<double> aic_values;
  for (const auto& a : aic) aic_values.push_back(a.value_or(std::nan("")));
  // Models of weight 0 take no part: two models with weights 1 and 0 are the first model.
  std::vector<SetModel> models;
  std::vector<std::size_t> original;
  for (std::size_t i = 0; i < all.size(); ++i) {
    all[i].weight = weights[i];
    if (weights[i] > 0.0) {
      models.push_back(std::move(all[i]));
      original.push_back(i);
    }
  }
  bool with_flags = true;
  // The averaged intervals are judged by the first model's rule (families and links agree).
  LowCertaintyRule certainty = LowCertaintyRule::for_model(models.front().spec, nullptr);
  for (SetModel& m : models) {
    m.plan = std::make_unique<TermPlan>(m.spec);
    if (m.spec.training_samples) {
      const TrainingSamples samples = read_training_samples(m.spec);
      if (&m == &models.front()) certainty = LowCertaintyRule::for_model(m.spec, &samples);
      m.domain.emplace(m.spec, samples);
      if (po.novelty.any()) m.novelty.emplace(m.spec, *m.plan, samples, po.novelty);
    } else {
      with_flags = false;
    }
  }
  if (po.max_extrapolated_percent && !with_flags)
    throw InputError("--max-extrapolated needs training samples in every model of the set: add [training] samples");
  const std::vector<std::vector<CovariateInput>> inputs = resolve_set_inputs(models, po);
  // Stacks: the baseline, then each scenario's replacements in every model that has the covariate.
  const std::vector<Scenario>& scenarios = options.scenarios.scenarios;
  const std::size_t M = models.size(), stacks = 1 + scenarios.size();
  std::vector<std::vector<std::vector<CovariateInput>>> stack_inputs{inputs};
  for (const Scenario& sc : scenarios) {
    std::vector<std::vector<CovariateInput>> mine = inputs;
    for (const auto& [name, path] : sc.rasters) {
      bool used = false;
      for (std::size_t m = 0; m < M; ++m) {
        const int c = models[m].spec.covariate_index(name);
        if (c < 0) continue;
        mine[m][static_cast<std::size_t>(c)].path = path;
        used = true;
      }
      if (!used)
        throw InputError(sc.source + ": scenario \"" + sc.name + "\" replaces covariate \"" + name +
                         "\", which no model of the set has");
    }
    stack_inputs.push_back(std::move(mine));
  }
  std::vector<PredictionMember> members;
  for (std::size_t j = 0; j < stacks; ++j)
    for (std::size_t m = 0; m < M; ++m)
      members.push_back({&models[m].spec, models[m].plan.get(), models[m].domain ? &*models[m].domain : nullptr,
                         models[m].novelty ? &*models[m].novelty : nullptr, stack_inputs[j][m]});
  const MemberSources sources(members);
  const AlignmentPlan alignment = sources.align(po.alignment);  // covariates on other grids: warped
  const RasterGrid& grid = alignment.target;
  if (!po.quicklook_path.empty()) figure_format(po.quicklook_path);  // .png, .pdf or .svg, checked before the run
  if (!po.quicklook_path.empty()) refuse_to_clobber({po.quicklook_path}, po.overwrite, ", or choose another --quicklook path");
  std::string threshold_source;
  const std::optional<double> threshold =
      choose_threshold(options.threshold, options.threshold_from, options.scenarios, threshold_source);
  if (threshold && scenarios.empty()) throw UsageError("--threshold classifies a change: it needs --scenarios or --scenario");

  const int threads = po.threads > 0 ? po.threads : static_cast<int>(std::max(1u, std::thread::hardware_concurrency()));
  const std::vector<Window> windows = prediction_windows(grid, po.block_size);
  std::int64_t largest_window = 0, terms = 0;
  for (const Window& w : windows) largest_window = std::max(largest_window, w.pixels());
  for (const SetModel& m : models) terms = std::max<std::int64_t>(terms, m.plan->term_count());
  check_working_memory(largest_window * static_cast<std::int64_t>(members.size() + stacks + 2 * scenarios.size()),
                       static_cast<std::int64_t>(sources.sources.size()), terms, threads, po.max_memory_bytes);
  std::vector<double> used_weights;
  for (const SetModel& m : models) used_weights.push_back(m.weight);
  const double z = Evaluator(models.front().spec, po.level).z();
  std::vector<std::unique_ptr<Worker>> workers;
  for (int t = 0; t < threads; ++t) {
    auto w = std::make_unique<Worker>();
    w->members = std::make_unique<MemberWindow>(members, sources, alignment, po.level, 0.0, false);
    for (std::size_t j = 0; j < stacks; ++j) {
      w->averages.push_back(std::make_unique<AverageCombiner>(models.front().spec.family, used_weights, options.form, z, with_flags));
      w->averages.back()->set_certainty(certainty);
      w->predictors.emplace_back();
      for (std::size_t m = 0; m < M; ++m) w->predictors.back().push_back(&w->members->predictor(j * M + m));
    }
    w->changes.resize(scenarios.size());
    for (std::size_t sc = 0; sc < scenarios.size(); ++sc)
      for (const SetModel& m : models) w->changes[sc].emplace_back(m.spec.link, *m.spec.covariance, z, std::nullopt);
    workers.push_back(std::move(w));
  }

  // Every file the run reads and writes is resolved first; the whole tree is locked, and
  // committed as one set.
  const fs::path top(po.output_dir);
  std::vector<std::string> folders{scenarios.empty() ? top.string() : (top / "baseline").string()};
  for (const Scenario& sc : scenarios) folders.push_back((top / sc.name).string());
  const std::string json_path = (top / "scenarios.json").string();
  const std::vector<std::string> owned = model_set_owned_names(scenarios);
  {
    RunFiles files;
    for (const SetModel& m : all) {
      files.input("model file", m.spec.path);
      if (m.spec.training_samples) files.input("training samples of " + m.spec.path, *m.spec.training_samples);
    }
    files.input("scenario file", options.scenarios.path);
    for (std::size_t j = 0; j < stacks; ++j)
      for (std::size_t m = 0; m < M; ++m)
        for (const CovariateInput& in : stack_inputs[j][m])
          files.input((j == 0 ? std::string("baseline") : "scenario " + scenarios[j - 1].name) + " raster of covariate " +
                          in.name,
                      in.path);
    for (const std::string& name : owned) files.output("output " + name, (top / name).string());
    files.output("--quicklook", po.quicklook_path);
    files.check();
  }
  const OutputFolder output_folder(po.output_dir, owned, po.overwrite,
                                   " (the old outputs stay until the new ones are complete, then are replaced as a "
                                   "set), or choose another output folder with -o");
  std::string model_list;
  for (const std::string& p : options.model_paths) model_list += (model_list.empty() ? "" : "; ") + p;
  std::vector<Outputs> outs;
  std::vector<std::string> report_paths;
  for (std::size_t j = 0; j < stacks; ++j) {
    ModelSetOptions fo = options;
    fo.predict.output_dir = folders[j];
    report_paths.push_back((fs::path(folders[j]) / "report.json").string());
    outs.push_back(create_set_outputs(fo, models.front().spec, grid, with_flags, tool_version, threads));
  }
  std::vector<ChangeRasters> change_outputs;
  for (std::size_t sc = 0; sc < scenarios.size(); ++sc)
    change_outputs.push_back(create_change_rasters(po, models.front().spec, model_list, scenarios[sc], folders[sc + 1], grid,
                                                   threshold, tool_version, threads));
  std::vector<OutputRaster*> all_rasters;
  for (const Outputs& o : outs)
    for (OutputRaster* r : o.all()) all_rasters.push_back(r);
  for (ChangeRasters& c : change_outputs) {
    all_rasters.push_back(c.change.get());
    if (c.classes) all_rasters.push_back(c.classes.get());
  }
  set_gdal_cache(po.gdal_cache_bytes > 0 ? po.gdal_cache_bytes
                                         : prediction_cache_bytes(windows, sources.sources.size() + 6 * stacks + 6 * scenarios.size(),
                                                                  static_cast<std::size_t>(threads)));
  std::vector<PredictionTally> totals;
  for (std::size_t j = 0; j < stacks; ++j)
    for (const SetModel& m : models) totals.emplace_back(m.spec.covariates.size());
  std::vector<AverageTally> stack_totals(stacks);
  std::vector<ChangeTally> change_totals(scenarios.size());
  progress.start("model set", static_cast<std::int64_t>(windows.size()));
  run_ordered<BlockResult>(
      windows.size(), threads, 2 * static_cast<std::size_t>(threads),
      [&](std::size_t item, int worker_index) {
        Worker& wk = *workers[static_cast<std::size_t>(worker_index)];
        const Window& w = windows[item];
        const auto n = static_cast<Eigen::Index>(w.pixels());
        BlockResult result;
        result.average.resize(stacks);
        result.tally.resize(stacks);
        for (std::size_t j = 0; j < stacks; ++j) wk.averages[j]->begin(n, result.average[j]);
        result.model_changes.resize(scenarios.size());
        result.changes.resize(scenarios.size());
        result.change_tallies.resize(scenarios.size());
        for (std::size_t sc = 0; sc < scenarios.size(); ++sc) {
          result.model_changes[sc].resize(M);
          for (std::size_t m = 0; m < M; ++m) wk.changes[sc][m].begin(n, result.model_changes[sc][m]);
          begin_change_outputs(n, threshold.has_value(), result.changes[sc]);
        }
        ChangeTally unused;
        wk.members->run(w, result.members, result.tallies, [&](Eigen::Index first, Eigen::Index rows) {
          for (std::size_t j = 0; j < stacks; ++j)
            wk.averages[j]->chunk(first, rows, wk.predictors[j], &result.members[j * M], result.average[j], result.tally[j]);
          for (std::size_t sc = 0; sc < scenarios.size(); ++sc) {
            std::vector<const ChangeOutputs*> per_model;
            for (std::size_t m = 0; m < M; ++m) {
              wk.changes[sc][m].chunk(first, rows, wk.members->predictor(m), wk.members->predictor((sc + 1) * M + m),
                                      result.members[m], result.members[(sc + 1) * M + m],
                                      result.model_changes[sc][m], unused);
              per_model.push_back(&result.model_changes[sc][m]);
            }
            average_changes(used_weights, per_model, result.average[0], result.average[sc + 1], z, threshold, options.form,
                            first, rows, result.changes[sc], result.change_tallies[sc]);
          }
        });
        return result;
      },
      [&](std::size_t item, BlockResult& result) {
        const Window& w = windows[item];
        for (std::size_t j = 0; j < stacks; ++j) {
          const AverageOutputs& a = result.average[j];
          Outputs& o = outs[j];
          o.suitability->write(1, w, a.suitability.data());
          o.uncertainty->write(1, w, a.se.data());
          o.uncertainty->write(2, w, a.lower.data());
          o.uncertainty->write(3, w, a.upper.data());
          o.model_choice->write(1, w, a.between_share.data());
          if (o.extrapolation) o.extrapolation->write(1, w, a.flags.data());
          for (OutputRaster* r : o.all()) r->flush_completed_blocks(w);
          stack_totals[j].merge(result.tally[j]);
        }
        for (std::size_t sc = 0; sc < scenarios.size(); ++sc) {
          change_outputs[sc].write(w, result.changes[sc]);
          change_totals[sc].merge(result.change_tallies[sc]);
        }
        for (std::size_t m = 0; m < totals.size(); ++m) totals[m].merge(result.tallies[m]);
        progress.advance(static_cast<std::int64_t>(item + 1));
      },
      [] { return stop_signal() != 0; });
  throw_if_stopped();
  progress.finish();
  for (OutputRaster* r : all_rasters) {
    if (po.overviews) r->build_overviews();
    throw_if_stopped();
  }
  // Every raster, picture and report of every folder is committed together at the end: a run
  // leaves the complete old set or the complete new one (pipeline/output_set.hpp).
  OutputCommit commit(po.output_dir, "model-set", owned, po.quicklook_path);
  commit.take_rasters(all_rasters);
  std::vector<std::string> quicklook_problems;
  const std::string quicklook_problem = commit.add_outside_picture([&](const std::string& temporary) {
    const Figure quicklook = quicklook_figure(commit.finished(outs[0].suitability->final_path()),
                                              outs[0].extrapolation ? commit.finished(outs[0].extrapolation->final_path()) : "",
                                              "habcast model set (" + std::to_string(models.size()) + " models)");
    write_whole_file(temporary, encode_figure(quicklook, po.quicklook_path), po.quicklook_path);
  });
  if (!quicklook_problem.empty()) quicklook_problems.push_back(quicklook_problem);
  const double best_aic = *std::min_element(aic_values.begin(), aic_values.end());
  std::vector<std::int64_t> missing(sources.sources.size(), 0);
  for (const auto& w : workers)
    for (std::size_t i = 0; i < missing.size(); ++i) missing[i] += w->members->missing()[i];
  const std::int64_t target_pixels = static_cast<std::int64_t>(grid.width) * grid.height;
  ModelSetSummary summary;

  // ---- one report per stack (folder) ----
  auto stack_report = [&](std::size_t j, std::vector<std::string> warnings) {
    const AverageTally& total = stack_totals[j];
    const std::string& report_path = report_paths[j];
    json r;
    r["habcast_version"] = tool_version;
    r["kind"] = "model_set";
    r["started_utc"] = started;
    r["elapsed_seconds"] = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
    r["weights_from"] = options.weights.empty() ? "Akaike weights exp(-dAIC/2) / sum, from each model file's aic"
                                                : "--weights, normalised to sum 1";
    r["unconditional_se"] = form_text(options.form);
    r["confidence_level"] = po.level;
    if (!scenarios.empty()) r["scenario"] = j == 0 ? "baseline" : scenarios[j - 1].name;
    json list = json::array();
    for (std::size_t i = 0; i < all.size(); ++i) {
      json m;
      m["path"] = options.model_paths[i];
      m["aic"] = aic[i] ? json(*aic[i]) : json();
      m["delta_aic"] = aic[i] && std::isfinite(best_aic) ? json(*aic[i] - best_aic) : json();
      m["weight"] = weights[i];
      const auto it = std::find(original.begin(), original.end(), i);
      m["used"] = it != original.end();
      if (it != original.end()) {
        const std::size_t k = static_cast<std::size_t>(it - original.begin());
        const SetModel& sm = models[k];
        m["name"] = sm.spec.name;
        m["terms"] = sm.spec.terms;
        const DomainTally& d = totals[j * M + k].domain;
        if (sm.domain) {
          json e;
          e["flagged_pixels"] = d.flagged;
          e["flagged_share"] = share(d.flagged, d.checked);
          json causes = json::object();
          for (int b = 0; b < flag::cause_count; ++b) causes[flag_name(b)] = {{"pixels", d.cause[b]}, {"share", share(d.cause[b], d.checked)}};
          e["causes"] = causes;
          json cov = json::object();
          for (std::size_t c = 0; c < sm.spec.covariates.size(); ++c)
            cov[sm.spec.covariates[c].name] = {{"below_pixels", d.below[c]}, {"above_pixels", d.above[c]},
                                               {"unseen_level_pixels", d.unseen[c]}};
          e["covariates"] = cov;
          m["extrapolation"] = e;
        }
      }
      list.push_back(m);
    }
    r["models"] = list;
    r["pixels"] = {{"total", total.pixels}, {"predicted", total.predicted}};
    if (total.predicted > 0)
      r["response"] = {{"mean", total.sum_response / static_cast<double>(total.predicted)},
                       {"min", total.min_response},
                       {"max", total.max_response}};
    json dis{{"pixels", total.disagree}, {"share", share(total.disagree, total.predicted)},
             {"meaning", "pixels where more than half of the unconditional variance comes from model choice"}};
    if (grid.has_geotransform && grid.linear_units_to_metre > 0.0)
      dis["area_ha"] = static_cast<double>(total.disagree) * grid.pixel_area() * grid.linear_units_to_metre *
                       grid.linear_units_to_metre / 1e4;
    r["models_disagree"] = dis;
    if (with_flags) {
      r["extrapolation"] = {{"checked_pixels", total.checked}, {"flagged_pixels", total.flagged},
                            {"flagged_share", share(total.flagged, total.checked)},
                            {"rule", "union: a pixel is flagged when any model of the set flags it; the models list "
                                     "says which model's covariates caused which flags"}};
      // As in predict's report: the checked area, from which a batch's region report forms areas.
      if (grid.has_geotransform && grid.linear_units_to_metre > 0.0)
        r["extrapolation"]["checked_area_ha"] = static_cast<double>(total.checked) * grid.pixel_area() *
                                                grid.linear_units_to_metre * grid.linear_units_to_metre / 1e4;
    } else
      warnings.push_back("Not every model names training samples, so the set's pixels are not checked against the "
                         "training data (no extrapolation.tif). Add [training] samples to every model.");
    if (total.disagree > 0)
      warnings.push_back(format_percent(share(total.disagree, total.predicted)) +
                         " of predicted pixels get more than half of their uncertainty from model choice (model_choice.tif "
                         "> 0.5): there the models disagree more than their own standard errors.");
    for (std::size_t i = 0; i < all.size(); ++i)
      if (weights[i] == 0.0) warnings.push_back(options.model_paths[i] + " has weight 0 and takes no part in the average.");
    if (with_flags && total.checked > 0 && total.flagged > 0)
      warnings.push_back(format_percent(share(total.flagged, total.checked)) +
                         " of valid pixels are extrapolated by at least one model of the set (see report.json, models, "
                         "for each model's causes).");
    json files = json::object();
    for (OutputRaster* x : outs[j].all()) files[fs::path(x->final_path()).stem().string()] = x->final_path();
    if (j > 0) {
      files["change"] = change_outputs[j - 1].change->final_path();
      if (change_outputs[j - 1].classes) files["change_class"] = change_outputs[j - 1].classes->final_path();
    }
    if (j == 0 && !po.quicklook_path.empty() && quicklook_problems.empty()) files["quicklook"] = po.quicklook_path;
    files["report"] = report_path;
    r["outputs"] = files;
    std::vector<std::size_t> stack_members;
    for (std::size_t m = 0; m < M; ++m) stack_members.push_back(j * M + m);
    const auto [stack_alignment, stack_missing] = members_alignment(alignment, sources, stack_members, missing);
    for (std::string& w : alignment_warnings(stack_alignment, stack_missing, target_pixels)) warnings.push_back(std::move(w));
    r["alignment"] = alignment_json(stack_alignment, stack_missing, target_pixels);
    r["warnings"] = warnings;
    if (po.max_extrapolated_percent && with_flags) {
      const double pct = 100.0 * share(total.flagged, total.checked);
      r["max_extrapolated_percent"] = *po.max_extrapolated_percent;
      if (pct > *po.max_extrapolated_percent) {
        summary.exit_code = ExitCode::extrapolation;
        warnings.push_back(format_value(pct) + " % of valid pixels are extrapolated by some model, more than "
                           "--max-extrapolated " + format_value(*po.max_extrapolated_percent) +
                           " %; outputs were written but the run reports failure (exit code 5).");
        r["warnings"] = warnings;
      }
    }
    r["exit_code"] = static_cast<int>(summary.exit_code);
    commit.add_file(report_path, r.dump(2) + "\n");
    for (const auto& [role, path] : files.items()) {
      (void)role;
      summary.outputs.push_back(path.get<std::string>());
    }
    return std::make_pair(r, warnings);
  };
  for (std::size_t j = 0; j < stacks; ++j) {
    auto [report, warnings] = stack_report(j, j == 0 ? quicklook_problems : std::vector<std::string>{});
    if (j == 0) {
      summary.report = report;
      summary.warnings = warnings;
    }
  }
  if (scenarios.empty()) {
    commit.commit();
    return summary;
  }

  // ---- the change of the averaged prediction under each scenario: scenarios.json ----
  json r;
  r["habcast_version"] = tool_version;
  r["kind"] = "model_set_scenarios";
  r["models"] = options.model_paths;
  r["weights"] = weights;
  r["confidence_level"] = po.level;
  r["threshold"] = threshold ? json{{"value", *threshold}, {"source", threshold_source}} : json();
  r["methods"] = {{"change", "sum_i w_i (mu_i,scenario - mu_i,baseline): the change of the model-averaged prediction"},
                  {"standard_error", std::string("unconditional, from each model's change and its standard error "
                                                 "sqrt((g_s - g_b)' V_i (g_s - g_b)): ") + form_text(options.form)},
                  {"interval", "change -/+ z se, normal approximation"},
                  {"classes", "from the averaged baseline and scenario predictions at the threshold and the averaged "
                              "change's interval; marked where the union of the models' flags says either side is "
                              "extrapolated"}};
  // Areas as in a single model's scenarios.json: hectares in a CRS with metric units, else square
  // map units; none without a geotransform. Counts beside every share, so that tiles of a batch
  // add up exactly (docs/batch.md).
  auto add_area = [&](json& j, std::int64_t pixels) {
    if (!grid.has_geotransform) return;
    j["area"] = static_cast<double>(pixels) * grid.pixel_area();
    if (grid.linear_units_to_metre > 0.0)
      j["area_ha"] = static_cast<double>(pixels) * grid.pixel_area() * grid.linear_units_to_metre *
                     grid.linear_units_to_metre / 1e4;
  };
  json base;
  base["folder"] = folders[0];
  base["predicted_pixels"] = stack_totals[0].predicted;
  if (with_flags)
    base["extrapolation"] = {{"checked_pixels", stack_totals[0].checked},
                             {"flagged_pixels", stack_totals[0].flagged},
                             {"flagged_share", share(stack_totals[0].flagged, stack_totals[0].checked)}};
  else
    base["extrapolation"] = json();
  r["baseline"] = base;
  json list = json::array();
  for (std::size_t sc = 0; sc < scenarios.size(); ++sc) {
    const ChangeTally& c = change_totals[sc];
    json e;
    e["name"] = scenarios[sc].name;
    e["folder"] = folders[sc + 1];
    e["compared_pixels"] = c.compared;
    e["mean_change"] = c.compared > 0 ? json(c.sum_change / static_cast<double>(c.compared)) : json();
    e["interval_above_zero_pixels"] = c.rose;
    e["interval_below_zero_pixels"] = c.declined;
    if (threshold) {
      json classes;
      for (std::uint8_t cls = 1; cls <= change_class::class_count; ++cls) {
        std::int64_t n = 0;
        for (std::size_t m = 0; m < 4; ++m) n += c.classes[cls][m];
        const std::int64_t x = c.classes[cls][1] + c.classes[cls][2] + c.classes[cls][3];
        json k{{"pixels", n}, {"share", share(n, c.compared)}};
        add_area(k, n);
        k["extrapolated_pixels"] = x;
        k["extrapolated_share"] = share(x, n);
        classes[change_class::class_key(cls)] = k;
      }
      e["classes"] = classes;
    }
    if (with_flags)
      e["extrapolation"] = {{"checked_pixels", stack_totals[sc + 1].checked},
                            {"flagged_pixels", stack_totals[sc + 1].flagged},
                            {"flagged_share", share(stack_totals[sc + 1].flagged, stack_totals[sc + 1].checked)},
                            {"baseline_flagged_share", share(stack_totals[0].flagged, stack_totals[0].checked)},
                            {"rule", "union of the models' flags"}};
    list.push_back(e);
  }
  r["scenarios"] = list;
  r["warnings"] = summary.warnings;
  commit.add_file(json_path, r.dump(2) + "\n");
  commit.commit();
  summary.outputs.push_back(json_path);
  summary.report = r;
  return summary;
}

}  // namespace habcast
