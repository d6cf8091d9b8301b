#include "core/model/glm_family.hpp"
#include "core/base/number_text.hpp"

#include <cmath>
#include <numbers>
#include <sstream>

namespace habcast {

namespace {

// y log(y / mu), taken as 0 at y = 0 (its limit), as R's binomial and poisson dev.resids do.
double y_log_y_over(double y, double mu) { return y > 0.0 ? y * std::log(y / mu) : 0.0; }

double unit_deviance(Family family, double y, double mu) {
  switch (family) {
    case Family::binomial: return 2.0 * (y_log_y_over(y, mu) + y_log_y_over(1.0 - y, 1.0 - mu));
    case Family::poisson: return 2.0 * (y_log_y_over(y, mu) - (y - mu));
    case Family::gaussian: return (y - mu) * (y - mu);
  }
  return 0.0;
}

double log_choose(double n, double k) { return std::lgamma(n + 1.0) - std::lgamma(k + 1.0) - std::lgamma(n - k + 1.0); }

// log dbinom(k; n, p) with 0 log 0 = 0, so fitted probabilities of exactly 0 or 1 at matching
// outcomes contribute 0 rather than NaN.
double log_binomial_density(double k, double n, double p) {
  double v = log_choose(n, k);
  if (k > 0.0) v += k * std::log(p);
  if (n - k > 0.0) v += (n - k) * std::log1p(-p);
  return v;
}

double log_poisson_density(double y, double mu) {
  if (y == 0.0) return -mu;
  return y * std::log(mu) - mu - std::lgamma(y + 1.0);
}

}  // namespace

double family_variance(Family family, double mu) {
  switch (family) {
    case Family::binomial: return mu * (1.0 - mu);
    case Family::poisson: return mu;
    case Family::gaussian: return 1.0;
  }
  return 1.0;
}

double family_deviance(Family family, const Eigen::VectorXd& y, const Eigen::VectorXd& mu, const Eigen::VectorXd& weights) {
  double sum = 0.0;
  for (Eigen::Index i = 0; i < y.size(); ++i) sum += weights[i] * unit_deviance(family, y[i], mu[i]);
  return sum;
}

double family_aic(Family family, const Eigen::VectorXd& y, const Eigen::VectorXd& mu, const Eigen::VectorXd& weights,
                  double deviance) {
  double sum = 0.0;
  const auto n = static_cast<double>(y.size());
  switch (family) {
    case Family::binomial:
      // R: m = weights (one trial per row unless weights say otherwise);
      // -2 sum (wt/m) dbinom(round(m y), round(m), mu, log = TRUE), and wt/m = 1.
      for (Eigen::Index i = 0; i < y.size(); ++i)
        sum += log_binomial_density(std::round(weights[i] * y[i]), std::round(weights[i]), mu[i]);
      return -2.0 * sum;
    case Family::poisson:
      for (Eigen::Index i = 0; i < y.size(); ++i) sum += weights[i] * log_poisson_density(y[i], mu[i]);
      return -2.0 * sum;
    case Family::gaussian:
      // R: nobs (log(2 pi dev / nobs) + 1) + 2 - sum(log(wt)); the 2 counts the dispersion.
      for (Eigen::Index i = 0; i < y.size(); ++i) sum += std::log(weights[i]);
      return n * (std::log(2.0 * std::numbers::pi * deviance / n) + 1.0) + 2.0 - sum;
  }
  return 0.0;
}

Eigen::VectorXd family_starting_mu(Family family, const Eigen::VectorXd& y, const Eigen::VectorXd& weights) {
  switch (family) {
    // R's binomial initialize: (weights y + 0.5) / (weights + 1), strictly inside (0, 1).
    case Family::binomial: return ((weights.array() * y.array() + 0.5) / (weights.array() + 1.0)).matrix();
    // R's poisson initialize: y + 0.1, strictly positive.
    case Family::poisson: return (y.array() + 0.1).matrix();
    case Family::gaussian: return y;
  }
  return y;
}

std::optional<ResponseProblem> check_response(Family family, Link link, const Eigen::VectorXd& y,
                                              const Eigen::VectorXd& weights) {
  for (Eigen::Index i = 0; i < y.size(); ++i) {
    const double v = y[i];
    const double w = weights[i];
    if (!std::isfinite(w) || w <= 0.0)
      return ResponseProblem{i, "weight " + significant(w, 10) + " is not a positive number; drop the row instead of giving it weight 0"};
    if (!std::isfinite(v)) return ResponseProblem{i, "the response is missing or not a finite number"};
    switch (family) {
      case Family::binomial:
        if (v < 0.0 || v > 1.0)
          return ResponseProblem{i, "response " + significant(v, 10) +
                                        " does not fit family binomial, which needs 0 (absent) or 1 (present), or a "
                                        "proportion with the number of trials as weight; for counts use --family poisson"};
        if (std::fabs(w * v - std::round(w * v)) > 1e-3)  // R warns at the same tolerance
          return ResponseProblem{i, "response " + significant(v, 10) + " times weight " + significant(w, 10) +
                                        " is not a whole number of successes; binomial needs 0/1 responses (weight 1) "
                                        "or proportions of whole numbers of trials"};
        break;
      case Family::poisson:
        if (v < 0.0 || v != std::floor(v))
          return ResponseProblem{i, "response " + significant(v, 10) +
                                        " does not fit family poisson, which needs whole counts 0, 1, 2, ...; for a "
                                        "continuous response use --family gaussian"};
        break;
      case Family::gaussian:
        if (link == Link::log && v <= 0.0)
          return ResponseProblem{i, "response " + significant(v, 10) +
                                        " is not positive, so the log link has no starting value; use --link identity"};
        break;
    }
  }
  return std::nullopt;
}

}  // namespace habcast
