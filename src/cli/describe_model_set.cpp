#include "cli/describe_model_set.hpp"

#include <cmath>
#include <map>
#include <optional>
#include <ostream>
#include <sstream>

#include "cli/describe_report.hpp"
#include "cli/describe_values.hpp"
#include "core/domain/training_samples.hpp"
#include "core/model/model_file.hpp"
#include "core/model/term_plan.hpp"
#include "core/prediction/model_average.hpp"
#include "predict/model_set_run.hpp"

namespace habcast::cli {

namespace {

using json = nlohmann::ordered_json;

constexpr const char* kAveragedRule =
    "Akaike-weighted mean of the models' stationary points, covariate by covariate in raw units, with the "
    "unconditional standard error sqrt(sum w_i (se_i^2 + (x_i - x_bar)^2)) (Burnham & Anderson 2002, revised form; "
    "from memory) from each model's delta-method standard error. It averages the models' optima; it is not the "
    "peak of the averaged suitability surface, which has no closed form.";

struct Described {
  ModelSpec spec;
  NicheDescription niche;
  std::vector<std::string> warnings;
};

/// The averaged optimum, or the reason there is none.
json averaged_optimum(const std::vector<Described>& models, const std::vector<double>& w, std::string& why_not) {
  std::vector<std::string> names;
  for (std::size_t m = 0; m < models.size(); ++m) {
    const Described& d = models[m];
    if (!d.niche.form || !d.niche.analysis) {
      why_not = d.spec.path + " has no squared or product terms, so no optimum";
      return json();
    }
    if (d.niche.analysis->shape != SurfaceShape::peak) {
      why_not = d.spec.path + " has no single peak (its surface is a " + std::string(to_string(d.niche.analysis->shape)) + ")";
      return json();
    }
    if (!d.niche.analysis->stationary_covariance) {
      why_not = d.spec.path + " has no covariance matrix, so its optimum has no standard error";
      return json();
    }
    std::vector<std::string> mine;
    for (int c : d.niche.form->covariates) mine.push_back(d.spec.covariates[static_cast<std::size_t>(c)].name);
    if (m == 0) names = mine;
    else if (mine != names) {
      why_not = "the models' curved covariates differ (" + models[0].spec.path + " and " + d.spec.path + ")";
      return json();
    }
  }
  json point;
  for (std::size_t k = 0; k < names.size(); ++k) {
    std::vector<double> x, se;
    for (const Described& d : models) {
      const Covariate& c = d.spec.covariates[static_cast<std::size_t>(d.niche.form->covariates[k])];
      const RawCoordinate r = raw_coordinate(c, *d.niche.analysis, static_cast<Eigen::Index>(k));
      x.push_back(r.raw);
      se.push_back(r.se_raw.value_or(0.0));
    }
    const AveragedValue a = average_models(w.data(), x.data(), se.data(), x.size(), UnconditionalForm::revised);
    point[names[k]] = {{"raw", a.mean}, {"se_raw", a.se}, {"between_share", a.between_share}};
  }
  return json{{"stationary_point", point}, {"rule", kAveragedRule}};
}

}  // namespace

int run_describe_model_set(const std::vector<std::string>& paths, const std::vector<double>& given,
                           const DescribeSettings& settings, bool as_json, std::ostream& out) {
  std::vector<Described> models;
  std::vector<std::optional<double>> aic;
  for (const std::string& p : paths) {
    Described d;
    d.spec = read_model_file(p);
    const TermPlan plan(d.spec);
    std::optional<TrainingSamples> samples;
    if (d.spec.training_samples) samples = read_training_samples(d.spec);
    d.niche = describe_niche(d.spec, plan, samples ? &*samples : nullptr, settings);
    d.warnings = describe_warnings(d.spec, d.niche, settings);
    aic.push_back(d.spec.aic);
    models.push_back(std::move(d));
  }
  const std::vector<double> w = model_set_weights(given, paths, aic);
  double best = INFINITY;
  for (const auto& a : aic)
    if (a) best = std::min(best, *a);
  std::string why_not;
  const json averaged = averaged_optimum(models, w, why_not);

  if (as_json) {
    json r;
    r["kind"] = "model_set";
    r["weights_from"] = given.empty() ? "Akaike weights from each model file's aic" : "--weights, normalised";
    json list = json::array();
    for (std::size_t m = 0; m < models.size(); ++m) {
      json e;
      e["path"] = paths[m];
      e["weight"] = w[m];
      e["aic"] = aic[m] ? json(*aic[m]) : json();
      e["delta_aic"] = aic[m] ? json(*aic[m] - best) : json();
      e["description"] = describe_json(models[m].spec, models[m].niche, settings, models[m].warnings);
      list.push_back(e);
    }
    r["models"] = list;
    r["averaged_optimum"] = averaged;
    if (averaged.is_null()) r["averaged_optimum_not_formed"] = why_not;
    out << r.dump(2) << "\n";
    return 0;
  }
  // Side by side: one column per model, then the average, for the optimum; the full description
  // of each model follows.
  std::ostringstream t;
  t << "Model set of " << models.size() << " models (" << (given.empty() ? "Akaike weights" : "weights from --weights") << ")\n";
  for (std::size_t m = 0; m < models.size(); ++m)
    t << "  [" << m + 1 << "] " << paths[m] << ": weight " << num(w[m])
      << (aic[m] ? ", AIC " + num(*aic[m]) + ", dAIC " + num(*aic[m] - best) : std::string()) << "\n";
  t << "\nOptimum (raw units, +- standard error)\n";
  std::vector<std::string> names;
  if (models[0].niche.form)
    for (int c : models[0].niche.form->covariates) names.push_back(models[0].spec.covariates[static_cast<std::size_t>(c)].name);
  for (const std::string& name : names) {
    t << "  " << name << ":";
    for (std::size_t m = 0; m < models.size(); ++m) {
      const Described& d = models[m];
      t << "  [" << m + 1 << "] ";
      const int c = d.spec.covariate_index(name);
      bool found = false;
      if (d.niche.form && d.niche.analysis && c >= 0)
        for (std::size_t k = 0; k < d.niche.form->covariates.size(); ++k)
          if (d.niche.form->covariates[k] == c) {
            const RawCoordinate r = raw_coordinate(d.spec.covariates[static_cast<std::size_t>(c)], *d.niche.analysis,
                                                   static_cast<Eigen::Index>(k));
            t << num(r.raw) << (r.se_raw ? " +- " + num(*r.se_raw) : std::string());
            found = true;
          }
      if (!found) t << "-";
    }
    if (!averaged.is_null() && averaged["stationary_point"].contains(name))
      t << "  average " << num(averaged["stationary_point"][name]["raw"].get<double>()) << " +- "
        << num(averaged["stationary_point"][name]["se_raw"].get<double>());
    t << "\n";
  }
  if (averaged.is_null()) t << "  No averaged optimum: " << why_not << ".\n";
  else t << "  The average: " << kAveragedRule << "\n";
  for (std::size_t m = 0; m < models.size(); ++m)
    t << "\n==== [" << m + 1 << "] " << paths[m] << " ====\n" << describe_text(models[m].spec, models[m].niche, settings, models[m].warnings);
  out << t.str();
  return 0;
}

}  // namespace habcast::cli
