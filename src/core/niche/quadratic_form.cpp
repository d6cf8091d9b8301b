#include "core/niche/quadratic_form.hpp"

#include <algorithm>
#include <cmath>
#include <cstdint>

#include "core/base/error.hpp"
#include "core/model/model_values.hpp"

namespace habcast {

bool holds_index(const std::vector<int>& v, int x) { return std::find(v.begin(), v.end(), x) != v.end(); }

namespace {


std::string term_label(const ModelSpec& spec, std::size_t j) { return "term \"" + spec.terms[j] + "\""; }

long term_line(const ModelSpec& spec, std::size_t j) { return j < spec.term_lines.size() ? spec.term_lines[j] : 0; }

/// Powers of the focus covariates in a term (by focus position); throws when a focus covariate sits
/// inside a term function, which no second-order polynomial can represent.
std::vector<int> focus_powers(const ModelSpec& spec, const Term& term, const std::vector<int>& focus, std::size_t j) {
  std::vector<int> powers(focus.size(), 0);
  for (const TermFactor& f : term.factors) {
    const auto it = std::find(focus.begin(), focus.end(), f.covariate);
    if (it == focus.end()) continue;
    if (f.function != TermFunction::none)
      throw InputError(located(spec.path, term_line(spec, j),
                               term_label(spec, j) + " applies " + to_string(f.function) + "() to \"" +
                                   spec.covariates[static_cast<std::size_t>(f.covariate)].name +
                                   "\"; describe analyses second-order surfaces (linear, squared and product "
                                   "terms). Hold that covariate fixed with --at " +
                                   spec.covariates[static_cast<std::size_t>(f.covariate)].name + "=VALUE"));
    powers[static_cast<std::size_t>(it - focus.begin())] += f.power;
  }
  return powers;
}

std::string focus_names(const ModelSpec& spec, const std::vector<int>& focus) {
  std::string s;
  for (int c : focus) s += (s.empty() ? "" : ", ") + spec.covariates[static_cast<std::size_t>(c)].name;
  return s;
}

}  // namespace

ReferencePoint default_reference(const ModelSpec& spec, const TrainingSamples* samples) {
  const std::size_t k = spec.covariates.size();
  ReferencePoint ref;
  ref.values = Eigen::VectorXd::Zero(static_cast<Eigen::Index>(k));
  ref.sources.assign(k, "");
  for (std::size_t c = 0; c < k; ++c) {
    const Covariate& cov = spec.covariates[c];
    if (cov.categorical) {
      int level = 0;
      for (std::size_t l = 0; l < cov.levels.size(); ++l)
        if (cov.levels[l].name == cov.reference_level) level = static_cast<int>(l);
      ref.values[static_cast<Eigen::Index>(c)] = level;
      ref.sources[c] = "reference level";
      continue;
    }
    // The mean of model values, not of raw values: for a log transform that is the geometric mean,
    // the value the model itself treats as typical.
    double sum = 0.0;
    std::int64_t n = 0;
    if (samples) {
      const auto col = samples->raw.col(static_cast<Eigen::Index>(c));
      for (Eigen::Index i = 0; i < col.size(); ++i) {
        const double v = model_value(cov, col[i]);
        if (std::isfinite(v)) {
          sum += v;
          ++n;
        }
      }
    }
    if (n > 0) {
      ref.values[static_cast<Eigen::Index>(c)] = sum / static_cast<double>(n);
      ref.sources[c] = "training mean";
    } else {
      ref.sources[c] = "model centre";
    }
  }
  return ref;
}

Eigen::Index quadratic_coefficient_count(Eigen::Index k) { return 1 + k + k * (k + 1) / 2; }

Eigen::Index quadratic_index(Eigen::Index k, Eigen::Index i, Eigen::Index j) {
  if (i > j) std::swap(i, j);
  // Rows 0..i-1 of the upper triangle hold k, k-1, ..., k-i+1 entries.
  return 1 + k + i * k - i * (i - 1) / 2 + (j - i);
}

double QuadraticForm::eta(const Eigen::VectorXd& x) const { return constant + b.dot(x) + x.dot(B * x); }

Eigen::RowVectorXd QuadraticForm::monomials(const Eigen::VectorXd& x) const {
  const Eigen::Index k = size();
  Eigen::RowVectorXd m(quadratic_coefficient_count(k));
  m[0] = 1.0;
  for (Eigen::Index i = 0; i < k; ++i) m[1 + i] = x[i];
  for (Eigen::Index i = 0; i < k; ++i)
    for (Eigen::Index j = i; j < k; ++j) m[quadratic_index(k, i, j)] = x[i] * x[j];
  return m;
}

std::vector<int> curved_covariates(const ModelSpec& spec, const TermPlan& plan, const std::vector<int>& held) {
  std::vector<int> curved;
  for (const Term& term : plan.terms()) {
    // Degree of the term in the continuous, not-held covariates that enter without a function.
    int degree = 0;
    for (const TermFactor& f : term.factors) {
      const Covariate& c = spec.covariates[static_cast<std::size_t>(f.covariate)];
      if (!c.categorical && f.function == TermFunction::none && !holds_index(held, f.covariate)) degree += f.power;
    }
    if (degree != 2) continue;
    for (const TermFactor& f : term.factors) {
      const Covariate& c = spec.covariates[static_cast<std::size_t>(f.covariate)];
      if (!c.categorical && f.function == TermFunction::none && !holds_index(held, f.covariate) &&
          !holds_index(curved, f.covariate))
        curved.push_back(f.covariate);
    }
  }
  std::sort(curved.begin(), curved.end());
  return curved;
}

QuadraticForm extract_quadratic_form(const ModelSpec& spec, const TermPlan& plan, const ReferencePoint& reference,
                                     const std::vector<int>& focus) {
  const Eigen::Index k = static_cast<Eigen::Index>(focus.size());
  const Eigen::Index p = plan.term_count();
  QuadraticForm form;
  form.covariates = focus;
  form.b = Eigen::VectorXd::Zero(k);
  form.B = Eigen::MatrixXd::Zero(k, k);
  form.coefficient_map = Eigen::MatrixXd::Zero(quadratic_coefficient_count(k), p);

  // Each term's factor on the held covariates is its value at the reference with the focus
  // covariates set to 1: the TermPlan computes it, so held terms mean exactly what predict means.
  ModelValues row = reference.values.transpose().array();
  for (int c : focus) row(0, c) = 1.0;
  Eigen::MatrixXd X;
  std::uint8_t valid = 1;
  plan.fill(row, 1, X, &valid);
  if (!valid)
    throw InputError(located(spec.path, 0,
                             "a term is undefined at the reference point (a term function outside its domain); "
                             "choose other reference values with --at NAME=VALUE"));

  for (std::size_t j = 0; j < static_cast<std::size_t>(p); ++j) {
    const Term& term = plan.terms()[j];
    const std::vector<int> powers = focus_powers(spec, term, focus, j);
    int degree = 0;
    for (int d : powers) degree += d;
    if (degree > 2)
      throw InputError(located(spec.path, term_line(spec, j),
                               term_label(spec, j) + " has degree " + std::to_string(degree) + " in " +
                                   focus_names(spec, focus) +
                                   "; describe analyses second-order surfaces. Hold a covariate fixed with --at "
                                   "NAME=VALUE to reduce the degree"));
    const double multiplier = X(0, static_cast<Eigen::Index>(j));
    Eigen::Index slot = 0;
    if (degree == 1) {
      for (Eigen::Index i = 0; i < k; ++i)
        if (powers[static_cast<std::size_t>(i)] == 1) slot = 1 + i;
    } else if (degree == 2) {
      Eigen::Index a = -1, c = -1;
      for (Eigen::Index i = 0; i < k; ++i) {
        const int pw = powers[static_cast<std::size_t>(i)];
        if (pw == 2) a = c = i;
        if (pw == 1) (a < 0 ? a : c) = i;
      }
      slot = quadratic_index(k, a, c);
    }
    form.coefficient_map(slot, static_cast<Eigen::Index>(j)) = multiplier;
  }

  const Eigen::VectorXd beta = Eigen::Map<const Eigen::VectorXd>(spec.estimates.data(), p);
  const Eigen::VectorXd theta = form.coefficient_map * beta;
  form.constant = theta[0];
  form.b = theta.segment(1, k);
  for (Eigen::Index i = 0; i < k; ++i)
    for (Eigen::Index j = i; j < k; ++j) {
      const double q = theta[quadratic_index(k, i, j)];
      if (i == j) form.B(i, i) = q;
      else form.B(i, j) = form.B(j, i) = q / 2.0;
    }

  if (const auto& offset = plan.offset_term()) {
    for (const TermFactor& f : offset->factors)
      if (holds_index(focus, f.covariate))
        throw InputError(located(spec.path, spec.offset_line,
                                 "the offset \"" + *spec.offset_term + "\" depends on \"" +
                                     spec.covariates[static_cast<std::size_t>(f.covariate)].name +
                                     "\"; describe needs an offset that does not involve the analysed covariates"));
    Eigen::VectorXd off;
    std::uint8_t ok = 1;
    plan.fill_offset(row, 1, off, &ok);
    if (!ok)
      throw InputError(located(spec.path, spec.offset_line, "the offset \"" + *spec.offset_term +
                                                 "\" is undefined at the reference point; choose --at values"));
    form.offset = off[0];
  }
  form.offset += spec.offset_constant;
  form.constant += form.offset;
  return form;
}

}  // namespace habcast
