#include "core/niche/response_curves.hpp"

#include <algorithm>
#include <cmath>
#include <limits>

#include "core/base/error.hpp"
#include "core/domain/training_hull.hpp"
#include "core/model/evaluator.hpp"
#include "core/model/model_values.hpp"

namespace habcast {

namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

bool held_here(const std::vector<int>& v, int x) { return std::find(v.begin(), v.end(), x) != v.end(); }

/// Rows of model values: the reference in every column, then `fill_row` sets what varies.
ModelValues reference_rows(const ReferencePoint& reference, Eigen::Index rows) {
  ModelValues values(rows, reference.values.size());
  for (Eigen::Index r = 0; r < rows; ++r) values.row(r) = reference.values.transpose().array();
  return values;
}

/// Evaluates the rows as predict does: TermPlan -> X, offset, Evaluator.
std::vector<CurvePoint> evaluate_rows(const ModelSpec& spec, const TermPlan& plan, const ModelValues& values,
                                      double confidence) {
  const Eigen::Index n = values.rows();
  std::vector<std::uint8_t> valid(static_cast<std::size_t>(n), 1);
  Eigen::MatrixXd X;
  plan.fill(values, n, X, valid.data());
  Eigen::VectorXd offset;
  plan.fill_offset(values, n, offset, valid.data());
  const Evaluator evaluator(spec, confidence);
  Prediction p;
  evaluator.evaluate(X, n, offset, p);
  std::vector<CurvePoint> out(static_cast<std::size_t>(n));
  for (Eigen::Index r = 0; r < n; ++r) {
    CurvePoint& c = out[static_cast<std::size_t>(r)];
    c.valid = valid[static_cast<std::size_t>(r)] != 0;
    if (!c.valid) {
      c.eta = c.se_eta = c.mu = c.lower = c.upper = kNaN;
      continue;
    }
    c.eta = p.eta[r];
    c.mu = p.mu[r];
    const bool se = evaluator.has_covariance();
    c.se_eta = se ? p.se_eta[r] : kNaN;
    c.lower = se ? p.lower[r] : kNaN;
    c.upper = se ? p.upper[r] : kNaN;
  }
  return out;
}

std::vector<double> training_model_values(const Covariate& cov, const TrainingSamples& samples, int c) {
  std::vector<double> v;
  const auto col = samples.raw.col(c);
  for (Eigen::Index i = 0; i < col.size(); ++i) {
    const double m = model_value(cov, col[i]);
    if (std::isfinite(m)) v.push_back(m);
  }
  return v;
}

}  // namespace

std::vector<CurvePoint> predict_along(const ModelSpec& spec, const TermPlan& plan, const ReferencePoint& reference,
                                      int covariate, const std::vector<double>& raw, double confidence) {
  const Covariate& cov = spec.covariates[static_cast<std::size_t>(covariate)];
  if (cov.categorical) throw UsageError("\"" + cov.name + "\" is categorical; its response is one value per level");
  ModelValues values = reference_rows(reference, static_cast<Eigen::Index>(raw.size()));
  for (std::size_t i = 0; i < raw.size(); ++i) values(static_cast<Eigen::Index>(i), covariate) = model_value(cov, raw[i]);
  std::vector<CurvePoint> out = evaluate_rows(spec, plan, values, confidence);
  for (std::size_t i = 0; i < raw.size(); ++i) {
    out[i].raw = raw[i];
    out[i].model = values(static_cast<Eigen::Index>(i), covariate);
  }
  return out;
}

std::vector<CurvePoint> predict_levels(const ModelSpec& spec, const TermPlan& plan, const ReferencePoint& reference,
                                       int covariate, double confidence) {
  const Covariate& cov = spec.covariates[static_cast<std::size_t>(covariate)];
  const Eigen::Index n = static_cast<Eigen::Index>(cov.levels.size());
  ModelValues values = reference_rows(reference, n);
  for (Eigen::Index l = 0; l < n; ++l) values(l, covariate) = static_cast<double>(l);
  std::vector<CurvePoint> out = evaluate_rows(spec, plan, values, confidence);
  for (Eigen::Index l = 0; l < n; ++l) {
    out[static_cast<std::size_t>(l)].raw = static_cast<double>(cov.levels[static_cast<std::size_t>(l)].code);
    out[static_cast<std::size_t>(l)].model = static_cast<double>(l);
  }
  return out;
}

std::vector<ResponseCurve> response_curves(const ModelSpec& spec, const TermPlan& plan, const TrainingSamples* samples,
                                           const ReferencePoint& reference, const std::vector<int>& held,
                                           const CurveOptions& options) {
  std::vector<ResponseCurve> curves;
  for (std::size_t ci = 0; ci < spec.covariates.size(); ++ci) {
    const int c = static_cast<int>(ci);
    if (!plan.uses_covariate(c) || held_here(held, c)) continue;
    const Covariate& cov = spec.covariates[ci];
    ResponseCurve curve;
    curve.covariate = c;
    curve.categorical = cov.categorical;
    if (cov.categorical) {
      curve.points = predict_levels(spec, plan, reference, c, options.confidence);
      for (const Level& l : cov.levels) {
        curve.labels.push_back(l.name);
        bool seen = samples == nullptr;
        if (samples)
          for (Eigen::Index i = 0; i < samples->raw.rows() && !seen; ++i) seen = samples->raw(i, c) == static_cast<double>(l.code);
        curve.level_seen.push_back(seen);
      }
      curves.push_back(std::move(curve));
      continue;
    }
    for (const auto* d : {&cov.natural_spline, &cov.bspline})
      if (*d) curve.spline_boundaries.emplace_back(raw_value(cov, (*d)->lower), raw_value(cov, (*d)->upper));
    // The grid is uniform in model units (so a log covariate is sampled evenly on its log scale),
    // over the training range (or the spline's boundary knots, or two scales about the centre)
    // widened by the margin on each side, so the extrapolated ends of the curve show.
    double lo = -2.0, hi = 2.0;
    std::vector<double> train;
    if (samples) train = training_model_values(cov, *samples, c);
    if (!train.empty()) {
      lo = *std::min_element(train.begin(), train.end());
      hi = *std::max_element(train.begin(), train.end());
      curve.training_min = raw_value(cov, lo);
      curve.training_max = raw_value(cov, hi);
      for (Eigen::Index i = 0; i < samples->raw.rows(); ++i)
        if (std::isfinite(model_value(cov, samples->raw(i, c)))) curve.rug.push_back(samples->raw(i, c));
      std::sort(curve.rug.begin(), curve.rug.end());
    } else if (!curve.spline_boundaries.empty()) {
      const SplineDefinition& d = cov.natural_spline ? *cov.natural_spline : *cov.bspline;
      lo = d.lower;
      hi = d.upper;
    }
    if (!(hi > lo)) {
      lo -= 1.0;
      hi += 1.0;
    }
    const double pad = options.margin * (hi - lo);
    const int n = std::max(options.points, 2);
    std::vector<double> raw(static_cast<std::size_t>(n));
    for (int i = 0; i < n; ++i) {
      const double m = (lo - pad) + (hi - lo + 2.0 * pad) * static_cast<double>(i) / static_cast<double>(n - 1);
      raw[static_cast<std::size_t>(i)] = raw_value(cov, m);
    }
    curve.points = predict_along(spec, plan, reference, c, raw, options.confidence);
    for (CurvePoint& p : curve.points)
      p.inside_training = !curve.training_min || (p.raw >= *curve.training_min && p.raw <= *curve.training_max);
    curves.push_back(std::move(curve));
  }
  return curves;
}

bool beyond_second_order(const ModelSpec& spec, const TermPlan& plan) {
  for (const Term& t : plan.terms()) {
    int degree = 0;
    for (const TermFactor& f : t.factors) {
      if (spec.covariates[static_cast<std::size_t>(f.covariate)].categorical) continue;
      if (f.function != TermFunction::none) return true;
      degree += f.power;
    }
    if (degree > 2) return true;
  }
  return false;
}

std::optional<NumericalOptimum> numerical_optimum(const ModelSpec& spec, const TermPlan& plan,
                                                  const TrainingSamples* samples, const ReferencePoint& reference,
                                                  const std::vector<int>& held, double confidence, std::string& why) {
  NumericalOptimum opt;
  for (std::size_t ci = 0; ci < spec.covariates.size(); ++ci) {
    const int c = static_cast<int>(ci);
    if (!spec.covariates[ci].categorical && plan.uses_covariate(c) && !held_here(held, c)) opt.covariates.push_back(c);
  }
  if (opt.covariates.empty()) {
    why = "no continuous covariate is left to vary";
    return std::nullopt;
  }
  if (!samples) {
    why = "the model names no training samples, so there is no training hull to search in";
    return std::nullopt;
  }
  const auto k = static_cast<Eigen::Index>(opt.covariates.size());
  // Training points (model units) with every analysed covariate recorded and inside its transform.
  std::vector<Eigen::VectorXd> rows;
  for (Eigen::Index i = 0; i < samples->raw.rows(); ++i) {
    Eigen::VectorXd x(k);
    bool ok = true;
    for (Eigen::Index j = 0; j < k; ++j) {
      const int c = opt.covariates[static_cast<std::size_t>(j)];
      x[j] = model_value(spec.covariates[static_cast<std::size_t>(c)], samples->raw(i, c));
      ok = ok && std::isfinite(x[j]);
    }
    if (ok) rows.push_back(x);
  }
  if (rows.empty()) {
    why = "no training sample records every analysed covariate";
    return std::nullopt;
  }
  Eigen::MatrixXd points(static_cast<Eigen::Index>(rows.size()), k);
  for (std::size_t i = 0; i < rows.size(); ++i) points.row(static_cast<Eigen::Index>(i)) = rows[i].transpose();
  const TrainingHull hull(points);

  auto eta_at = [&](const Eigen::VectorXd& x) {
    ModelValues v = reference_rows(reference, 1);
    for (Eigen::Index j = 0; j < k; ++j) v(0, opt.covariates[static_cast<std::size_t>(j)]) = x[j];
    ++opt.evaluations;
    const CurvePoint p = evaluate_rows(spec, plan, v, confidence)[0];
    return p.valid ? p.eta : -std::numeric_limits<double>::infinity();
  };
  std::size_t best_row = 0;
  double best = -std::numeric_limits<double>::infinity();
  for (std::size_t i = 0; i < rows.size(); ++i) {
    const double e = eta_at(rows[i]);
    if (e > best) {
      best = e;
      best_row = i;
    }
  }
  Eigen::VectorXd x = rows[best_row];
  Eigen::VectorXd step(k), floor_step(k);
  for (Eigen::Index j = 0; j < k; ++j) {
    const double range = points.col(j).maxCoeff() - points.col(j).minCoeff();
    const double r = range > 0.0 ? range : 1.0;
    step[j] = 0.25 * r;
    floor_step[j] = 1e-7 * r;
  }
  constexpr int kMaxEvaluations = 20000;
  bool blocked_at_last = false;
  while (opt.evaluations < kMaxEvaluations) {
    bool moved = false;
    blocked_at_last = false;
    for (Eigen::Index j = 0; j < k && !moved; ++j)
      for (double sign : {1.0, -1.0}) {
        Eigen::VectorXd trial = x;
        trial[j] += sign * step[j];
        const double e = eta_at(trial);
        if (!(e > best)) continue;
        if (!hull.contains_by_scan(trial.data())) {
          blocked_at_last = true;
          continue;
        }
        x = trial;
        best = e;
        moved = true;
        break;
      }
    if (moved) continue;
    if ((step.array() <= floor_step.array()).all()) break;
    step = (step * 0.5).cwiseMax(floor_step);
  }
  opt.at_hull_edge = blocked_at_last;
  ModelValues v = reference_rows(reference, 1);
  for (Eigen::Index j = 0; j < k; ++j) {
    const int c = opt.covariates[static_cast<std::size_t>(j)];
    v(0, c) = x[j];
    opt.model.push_back(x[j]);
    opt.raw.push_back(raw_value(spec.covariates[static_cast<std::size_t>(c)], x[j]));
  }
  const CurvePoint p = evaluate_rows(spec, plan, v, confidence)[0];
  opt.eta = p.eta;
  opt.se_eta = p.se_eta;
  opt.mu = p.mu;
  opt.lower = p.lower;
  opt.upper = p.upper;
  opt.method =
      "compass search for the largest eta inside the convex hull of the training points (model units), from the "
      "best training point; steps from 1/4 of each training range, halved to 1e-7 of it";
  return opt;
}

}  // namespace habcast
