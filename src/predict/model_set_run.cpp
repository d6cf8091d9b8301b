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
#include "pipeline/output_guard.hpp"
#include "pipeline/resource_limits.hpp"
#include "pipeline/stop_signal.hpp"
#include "predict/prediction_folder.hpp"
#include "predict/prediction_members.hpp"
#include "predict/prediction_report.hpp"
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
  const ModelSpec& a = models.front().spec;
  for (std::size_t i = 1; i < models.size(); ++i) {
    const ModelSpec& b = models[i].spec;
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
                           bool with_flags, const std::string& version, int threads, const std::string& report_path) {
  const fs::path dir(options.predict.output_dir);
  const std::vector<std::string> names{"suitability.tif", "uncertainty.tif", "model_choice.tif", "extrapolation.tif"};
  std::vector<std::string> finals{report_path};
  for (std::size_t i = 0; i < names.size(); ++i)
    if (i < 3 || with_flags) finals.push_back((dir / names[i]).string());
  refuse_to_clobber(finals, options.predict.overwrite, ", or choose another output folder with -o");
  std::vector<std::string> short_names;
  for (const std::string& f : finals) short_names.push_back(fs::path(f).filename().string());
  remove_stale_partials(dir.string(), short_names);

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

struct Worker {
  std::unique_ptr<MemberWindow> members;
  std::unique_ptr<AverageCombiner> combiner;
  std::vector<const BlockPredictor*> predictors;
};

struct BlockResult {
  std::vector<BlockOutputs> members;
  std::vector<PredictionTally> tallies;
  AverageOutputs average;
  AverageTally tally;
};

double share(std::int64_t part, std::int64_t whole) {
  return whole > 0 ? static_cast<double>(part) / static_cast<double>(whole) : 0.0;
}

}  // namespace

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
  for (SetModel& m : models) {
    m.plan = std::make_unique<TermPlan>(m.spec);
    if (m.spec.training_samples) {
      const TrainingSamples samples = read_training_samples(m.spec);
      m.domain.emplace(m.spec, samples);
      if (po.novelty.any()) m.novelty.emplace(m.spec, *m.plan, samples, po.novelty);
    } else {
      with_flags = false;
    }
  }
  if (po.max_extrapolated_percent && !with_flags)
    throw InputError("--max-extrapolated needs training samples in every model of the set: add [training] samples");
  const std::vector<std::vector<CovariateInput>> inputs = resolve_set_inputs(models, po);
  std::vector<PredictionMember> members;
  for (std::size_t m = 0; m < models.size(); ++m)
    members.push_back({&models[m].spec, models[m].plan.get(), models[m].domain ? &*models[m].domain : nullptr,
                       models[m].novelty ? &*models[m].novelty : nullptr, inputs[m]});
  const MemberSources sources(members);
  const RasterGrid grid = sources.check_co_registered();
  if (!po.quicklook_path.empty()) figure_format(po.quicklook_path);  // .png, .pdf or .svg, checked before the run
  if (!po.quicklook_path.empty()) refuse_to_clobber({po.quicklook_path}, po.overwrite, ", or choose another --quicklook path");

  const int threads = po.threads > 0 ? po.threads : static_cast<int>(std::max(1u, std::thread::hardware_concurrency()));
  const std::vector<Window> windows = prediction_windows(grid, po.block_size);
  std::int64_t largest_window = 0, terms = 0;
  for (const Window& w : windows) largest_window = std::max(largest_window, w.pixels());
  for (const SetModel& m : models) terms = std::max<std::int64_t>(terms, m.plan->term_count());
  check_working_memory(largest_window * static_cast<std::int64_t>(models.size() + 1),
                       static_cast<std::int64_t>(sources.sources.size()), terms, threads, po.max_memory_bytes);
  std::vector<double> used_weights;
  for (const SetModel& m : models) used_weights.push_back(m.weight);
  const double z = Evaluator(models.front().spec, po.level).z();
  std::vector<std::unique_ptr<Worker>> workers;
  for (int t = 0; t < threads; ++t) {
    auto w = std::make_unique<Worker>();
    w->members = std::make_unique<MemberWindow>(members, sources, po.level, 0.0);
    w->combiner = std::make_unique<AverageCombiner>(models.front().spec.family, used_weights, options.form, z, with_flags);
    for (std::size_t m = 0; m < models.size(); ++m) w->predictors.push_back(&w->members->predictor(m));
    workers.push_back(std::move(w));
  }

  std::error_code ec;
  fs::create_directories(po.output_dir, ec);
  if (ec || !fs::is_directory(po.output_dir))
    throw IoError(po.output_dir + ": cannot create the output folder: " + (ec ? ec.message() : "not a folder"));
  const std::string report_path = (fs::path(po.output_dir) / "report.json").string();
  Outputs out = create_set_outputs(options, models.front().spec, grid, with_flags, tool_version, threads, report_path);
  set_gdal_cache(po.gdal_cache_bytes > 0 ? po.gdal_cache_bytes
                                         : prediction_cache_bytes(windows, sources.sources.size() + 6,
                                                                  static_cast<std::size_t>(threads)));
  std::vector<PredictionTally> totals;
  for (const SetModel& m : models) totals.emplace_back(m.spec.covariates.size());
  AverageTally total;
  progress.start("model set", static_cast<std::int64_t>(windows.size()));
  run_ordered<BlockResult>(
      windows.size(), threads, 2 * static_cast<std::size_t>(threads),
      [&](std::size_t item, int worker_index) {
        Worker& wk = *workers[static_cast<std::size_t>(worker_index)];
        const Window& w = windows[item];
        BlockResult result;
        wk.combiner->begin(static_cast<Eigen::Index>(w.pixels()), result.average);
        wk.members->run(w, result.members, result.tallies, [&](Eigen::Index first, Eigen::Index rows) {
          wk.combiner->chunk(first, rows, wk.predictors, result.members, result.average, result.tally);
        });
        return result;
      },
      [&](std::size_t item, BlockResult& result) {
        const Window& w = windows[item];
        out.suitability->write(1, w, result.average.suitability.data());
        out.uncertainty->write(1, w, result.average.se.data());
        out.uncertainty->write(2, w, result.average.lower.data());
        out.uncertainty->write(3, w, result.average.upper.data());
        out.model_choice->write(1, w, result.average.between_share.data());
        if (out.extrapolation) out.extrapolation->write(1, w, result.average.flags.data());
        for (OutputRaster* r : out.all()) r->flush_completed_blocks(w);
        for (std::size_t m = 0; m < models.size(); ++m) totals[m].merge(result.tallies[m]);
        total.merge(result.tally);
        progress.advance(static_cast<std::int64_t>(item + 1));
      },
      [] { return stop_signal() != 0; });
  throw_if_stopped();
  progress.finish();
  for (OutputRaster* r : out.all()) {
    if (po.overviews) r->build_overviews();
    throw_if_stopped();
    r->close();
  }
  for (OutputRaster* r : out.all()) r->commit();
  std::vector<std::string> warnings;
  if (!po.quicklook_path.empty()) {
    try {
      const Figure quicklook = quicklook_figure(out.suitability->final_path(),
                                                out.extrapolation ? out.extrapolation->final_path() : "",
                                                "habcast model set (" + std::to_string(models.size()) + " models)");
      write_file_atomically(po.quicklook_path, encode_figure(quicklook, po.quicklook_path));
    } catch (const Error& e) {
      warnings.push_back(std::string("no quicklook was written: ") + e.what());
    }
  }

  // ---- report ----
  json r;
  r["habcast_version"] = tool_version;
  r["kind"] = "model_set";
  r["started_utc"] = started;
  r["elapsed_seconds"] = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  r["weights_from"] = options.weights.empty() ? "Akaike weights exp(-dAIC/2) / sum, from each model file's aic"
                                              : "--weights, normalised to sum 1";
  r["unconditional_se"] = form_text(options.form);
  r["confidence_level"] = po.level;
  const double best_aic = *std::min_element(aic_values.begin(), aic_values.end());
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
      const DomainTally& d = totals[k].domain;
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
  if (with_flags)
    r["extrapolation"] = {{"checked_pixels", total.checked}, {"flagged_pixels", total.flagged},
                          {"flagged_share", share(total.flagged, total.checked)},
                          {"rule", "union: a pixel is flagged when any model of the set flags it; the models list "
                                   "says which model's covariates caused which flags"}};
  else
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
  json outs = json::object();
  for (OutputRaster* x : out.all()) outs[fs::path(x->final_path()).stem().string()] = x->final_path();
  if (!po.quicklook_path.empty()) outs["quicklook"] = po.quicklook_path;
  outs["report"] = report_path;
  r["outputs"] = outs;
  r["warnings"] = warnings;
  ModelSetSummary summary;
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
  write_file_atomically(report_path, r.dump(2) + "\n");
  summary.report = r;
  summary.warnings = warnings;
  for (const auto& [role, path] : outs.items()) {
    (void)role;
    summary.outputs.push_back(path.get<std::string>());
  }
  return summary;
}

}  // namespace habcast
