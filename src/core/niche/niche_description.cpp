#include "core/niche/niche_description.hpp"

#include <algorithm>
#include <cmath>

#include "core/base/error.hpp"
#include "core/model/model_values.hpp"

namespace habcast {

namespace {


std::string continuous_names(const ModelSpec& spec) {
  std::string s;
  for (const Covariate& c : spec.covariates)
    if (!c.categorical) s += (s.empty() ? "" : ", ") + c.name;
  return s;
}

int find_covariate(const ModelSpec& spec, const std::string& name, const std::string& option) {
  const int c = spec.covariate_index(name);
  if (c < 0) {
    std::string all;
    for (const Covariate& cov : spec.covariates) all += (all.empty() ? "" : ", ") + cov.name;
    throw UsageError(option + " " + name + ": the model has no covariate \"" + name + "\"; its covariates are " + all);
  }
  return c;
}

int find_level(const Covariate& cov, const std::string& level) {
  const LevelLookup found = cov.find_level(level);
  if (found.ambiguous()) throw UsageError("--level " + cov.name + "=" + level + ": " + found.ambiguity(cov, level));
  if (found.found()) return found.index;
  throw UsageError("--level " + cov.name + "=" + level + ": \"" + level + "\" is not a level of \"" + cov.name +
                   "\" (by name or by code); its levels are " + cov.level_list());
}

/// Applies --at and --level to the default reference; returns the continuous covariates held.
std::vector<int> apply_settings(const ModelSpec& spec, const DescribeSettings& settings, ReferencePoint& ref) {
  std::vector<int> held;
  for (const auto& [name, raw] : settings.at) {
    const int c = find_covariate(spec, name, "--at");
    const Covariate& cov = spec.covariates[static_cast<std::size_t>(c)];
    if (cov.categorical)
      throw UsageError("--at " + name + "=...: \"" + name + "\" is categorical; choose its level with --level " + name +
                       "=LEVEL");
    const double v = model_value(cov, raw);
    if (!std::isfinite(v))
      throw UsageError("--at " + name + "=" + std::to_string(raw) + ": outside the domain of the covariate's " +
                       to_string(cov.transform) + " transform");
    ref.values[c] = v;
    ref.sources[static_cast<std::size_t>(c)] = "--at";
    held.push_back(c);
  }
  for (const auto& [name, level] : settings.levels) {
    const int c = find_covariate(spec, name, "--level");
    const Covariate& cov = spec.covariates[static_cast<std::size_t>(c)];
    if (!cov.categorical)
      throw UsageError("--level " + name + "=...: \"" + name + "\" is continuous; hold it at a value with --at " + name +
                       "=VALUE");
    ref.values[c] = find_level(cov, level);
    ref.sources[static_cast<std::size_t>(c)] = "--level";
  }
  std::sort(held.begin(), held.end());
  return held;
}

bool enters_through_function(const TermPlan& plan, int covariate) {
  for (const Term& t : plan.terms())
    for (const TermFactor& f : t.factors)
      if (f.covariate == covariate && f.function != TermFunction::none) return true;
  return false;
}

std::pair<int, int> choose_pair(const ModelSpec& spec, const TermPlan& plan, const DescribeSettings& settings,
                                const std::vector<int>& focus, const std::vector<int>& held) {
  if (!settings.pair) return focus.size() >= 2 ? std::pair{focus[0], focus[1]} : std::pair{-1, -1};
  const auto& [a, b] = *settings.pair;
  int idx[2] = {find_covariate(spec, a, "--pair"), find_covariate(spec, b, "--pair")};
  for (int c : idx) {
    const Covariate& cov = spec.covariates[static_cast<std::size_t>(c)];
    if (cov.categorical || !plan.uses_covariate(c) || plan.offset_only(c))
      throw UsageError("--pair " + a + "," + b + ": \"" + cov.name + "\" is " +
                       (cov.categorical ? "categorical"
                                        : (plan.offset_only(c) ? "used only by the offset" : "not used by any term")) +
                       "; choose two continuous covariates of the model (" + continuous_names(spec) + ")");
    if (holds_index(held, c))
      throw UsageError("--pair " + a + "," + b + ": \"" + cov.name + "\" is held fixed by --at; drop one of the two");
  }
  if (idx[0] == idx[1]) throw UsageError("--pair needs two different covariates, got " + a + "," + b);
  return {idx[0], idx[1]};
}

PairDescription describe_pair(const ModelSpec& spec, const TermPlan& plan, const TrainingSamples* samples,
                              const ReferencePoint& ref, const CanonicalOptions& options, int first, int second) {
  PairDescription p;
  p.first = first;
  p.second = second;
  std::vector<int> focus{first, second};
  p.form = extract_quadratic_form(spec, plan, ref, focus);
  p.analysis = analyse_surface(p.form, spec.link, spec.covariance, options);
  p.first_given_second = conditional_optimum(p.form, 0, 1, spec.covariance);
  p.second_given_first = conditional_optimum(p.form, 1, 0, spec.covariance);
  if (samples) {
    p.training = training_points(spec, *samples, first, second);
    p.hull = convex_hull(p.training);
    if (p.analysis.shape != SurfaceShape::ridge && p.hull.size() >= 3)
      p.stationary_inside_hull = inside_hull(p.hull, {p.analysis.stationary[0], p.analysis.stationary[1]});
  }
  return p;
}

}  // namespace

double raw_value_derivative(const Covariate& c, double value) {
  const double t = value * c.scale + c.center;
  switch (c.transform) {
    case Transform::none: return c.scale;
    case Transform::log: return std::exp(t) * c.scale;
    case Transform::log1p: return std::exp(t) * c.scale;
    case Transform::sqrt: return 2.0 * t * c.scale;
  }
  return c.scale;
}

NicheDescription describe_niche(const ModelSpec& spec, const TermPlan& plan, const TrainingSamples* samples,
                                const DescribeSettings& settings) {
  NicheDescription d;
  d.has_samples = samples != nullptr;
  d.reference = default_reference(spec, samples);
  d.held = apply_settings(spec, settings, d.reference);
  const std::vector<int> focus = curved_covariates(spec, plan, d.held);

  for (std::size_t c = 0; c < spec.covariates.size(); ++c) {
    const int ci = static_cast<int>(c);
    if (spec.covariates[c].categorical || !plan.uses_covariate(ci) || holds_index(focus, ci) || holds_index(d.held, ci))
      continue;
    if (plan.offset_only(ci)) {
      // Effort, area, exposure: not part of the niche. Held like any other covariate (at its
      // training mean, or --at), it only shifts the surface through the offset.
      d.reference.sources[c] += "; enters only the offset";
      continue;
    }
    if (enters_through_function(plan, ci)) {
      d.through_function.push_back(ci);
      continue;
    }
    d.linear.push_back({ci, extract_quadratic_form(spec, plan, d.reference, {ci}).b[0]});
  }

  d.beyond_second_order = beyond_second_order(spec, plan);
  if (!focus.empty() && d.beyond_second_order) {
    // Canonical analysis applies to the second-order part only: held covariates (splines, term
    // functions) fold into its coefficients at the reference; a term of higher degree in the
    // curved covariates leaves no second-order surface to analyse.
    try {
      d.form = extract_quadratic_form(spec, plan, d.reference, focus);
      d.canonical_note = "the canonical analysis covers the second-order part in the curved covariates, with the "
                         "covariates that enter through splines or term functions held at the reference";
    } catch (const InputError& e) {
      d.canonical_note = std::string("no canonical analysis: ") + e.what();
    }
  } else if (!focus.empty()) {
    d.form = extract_quadratic_form(spec, plan, d.reference, focus);
  } else if (d.beyond_second_order) {
    d.canonical_note = "no canonical analysis: no covariate enters through squared or product terms alone";
  }
  if (d.beyond_second_order)
    d.numerical = numerical_optimum(spec, plan, samples, d.reference, d.held, settings.canonical.confidence,
                                    d.numerical_note);
  if (settings.curves) {
    CurveOptions options = settings.curve_options;
    options.confidence = settings.canonical.confidence;
    d.curves = response_curves(spec, plan, samples, d.reference, d.held, options);
  }
  if (d.form) {
    d.analysis = analyse_surface(*d.form, spec.link, spec.covariance, settings.canonical);
    if (samples && d.analysis->shape != SurfaceShape::ridge) {
      Eigen::VectorXd raw(static_cast<Eigen::Index>(focus.size()));
      for (std::size_t i = 0; i < focus.size(); ++i)
        raw[static_cast<Eigen::Index>(i)] = raw_value(spec.covariates[static_cast<std::size_t>(focus[i])],
                                                      d.analysis->stationary[static_cast<Eigen::Index>(i)]);
      d.support = check_training_support(spec, *samples, focus, raw);
    }
  }

  const auto [first, second] = choose_pair(spec, plan, settings, focus, d.held);
  if (first >= 0 && (d.form || !d.beyond_second_order || settings.pair)) {
    try {
      d.pair = describe_pair(spec, plan, samples, d.reference, settings.canonical, first, second);
    } catch (const InputError& e) {
      if (!d.beyond_second_order) throw;
      d.canonical_note += std::string(d.canonical_note.empty() ? "" : "; ") + "no pair analysis: " + e.what();
    }
  }
  return d;
}

}  // namespace habcast
