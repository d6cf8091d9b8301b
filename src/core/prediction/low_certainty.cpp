#include "core/prediction/low_certainty.hpp"

#include <algorithm>
#include <cmath>
#include <limits>

#include "core/base/number_text.hpp"
#include "core/model/design_matrix.hpp"
#include "core/model/evaluator.hpp"

namespace habcast {

namespace {

/// Largest minus smallest fitted mean over the training samples that the model can predict.
double fitted_spread(const ModelSpec& spec, const TrainingSamples& samples) {
  const Design d = build_design(spec, samples.raw);
  const Evaluator evaluator(spec, 0.95);
  Prediction p;
  Eigen::VectorXd offset = d.offset.array() - spec.offset_constant;  // the evaluator adds the constant itself
  evaluator.evaluate(d.X, d.X.rows(), offset, p);
  double lo = std::numeric_limits<double>::infinity(), hi = -lo;
  for (Eigen::Index i = 0; i < d.X.rows(); ++i) {
    if (!d.usable[static_cast<std::size_t>(i)] || !std::isfinite(p.mu[i])) continue;
    lo = std::min(lo, p.mu[i]);
    hi = std::max(hi, p.mu[i]);
  }
  return hi > lo ? hi - lo : 0.0;
}

}  // namespace

LowCertaintyRule LowCertaintyRule::for_model(const ModelSpec& spec, const TrainingSamples* samples) {
  LowCertaintyRule rule;
  if (spec.family == Family::binomial) {
    rule.kind_ = Kind::probability_width;
  } else if (spec.link == Link::log || spec.family == Family::poisson) {
    // Log links give positive limits; a poisson mean is positive whatever the link.
    rule.kind_ = Kind::ratio;
  } else if (samples) {
    rule.spread_ = fitted_spread(spec, *samples);
    rule.kind_ = rule.spread_ > 0.0 ? Kind::spread_width : Kind::unavailable;
  }
  return rule;
}

std::string LowCertaintyRule::description() const {
  switch (kind_) {
    case Kind::probability_width: return "a confidence interval wider than 0.5 in probability";
    case Kind::ratio: return "a confidence interval whose upper limit is more than three times the lower";
    case Kind::spread_width:
      return "a confidence interval wider than half the spread of the fitted mean over the training samples (" +
             significant(kShareOfScale * spread_, 4) + ")";
    case Kind::unavailable:
      return "none: a mean of any sign (identity link) is judged against the spread of the fitted mean over the "
             "training samples, and the model file names none (or the fitted mean is the same at every sample)";
  }
  return "";
}

}  // namespace habcast
