#include "core/model/link.hpp"

#include <cmath>

#include "core/numeric/normal_distribution.hpp"

namespace habcast {

namespace {

// Logistic function without overflow: exp() only ever sees a non-positive argument.
double logistic(double eta) {
  if (eta >= 0.0) return 1.0 / (1.0 + std::exp(-eta));
  const double t = std::exp(eta);
  return t / (1.0 + t);
}

// mu (1 - mu) for the logistic, computed from exp(-|eta|) so it does not cancel to 0 in the tails.
double logistic_derivative(double eta) {
  const double t = std::exp(-std::fabs(eta));
  const double d = 1.0 + t;
  return t / (d * d);
}

// 1 - exp(-exp(eta)). For very negative eta, -expm1(-exp(eta)) keeps all digits; for large eta
// exp(eta) becomes +inf and the result is exactly 1, not NaN.
double complementary_log_log_inverse(double eta) { return -std::expm1(-std::exp(eta)); }

// exp(eta - exp(eta)); for large eta the exponent goes to -inf and the result to 0.
double complementary_log_log_derivative(double eta) {
  const double e = std::exp(eta);
  return std::exp(eta - e);
}

}  // namespace

double link_inverse(Link link, double eta) {
  switch (link) {
    case Link::logit: return logistic(eta);
    case Link::probit: return normal_cdf(eta);
    case Link::cloglog: return complementary_log_log_inverse(eta);
    case Link::log: return std::exp(eta);
    case Link::identity: return eta;
  }
  return eta;
}

double link_inverse_derivative(Link link, double eta) {
  switch (link) {
    case Link::logit: return logistic_derivative(eta);
    case Link::probit: return normal_pdf(eta);
    case Link::cloglog: return complementary_log_log_derivative(eta);
    case Link::log: return std::exp(eta);
    case Link::identity: return 1.0;
  }
  return 1.0;
}

void link_inverse_with_derivative(Link link, const double* eta, double* mu, double* derivative, long n) {
  if (link == Link::logit) {
    // The same operations as logistic() and logistic_derivative(): t = exp(-|eta|) is what each
    // of them computes, so the results are identical to calling them one by one.
    for (long i = 0; i < n; ++i) {
      const double t = std::exp(-std::fabs(eta[i]));
      const double d = 1.0 + t;
      mu[i] = eta[i] >= 0.0 ? 1.0 / d : t / d;
      derivative[i] = t / (d * d);
    }
    return;
  }
  for (long i = 0; i < n; ++i) {
    mu[i] = link_inverse(link, eta[i]);
    derivative[i] = link_inverse_derivative(link, eta[i]);
  }
}

void link_inverse_all(Link link, const double* eta, double* mu, long n) {
  if (link == Link::logit) {
    for (long i = 0; i < n; ++i) mu[i] = logistic(eta[i]);
    return;
  }
  for (long i = 0; i < n; ++i) mu[i] = link_inverse(link, eta[i]);
}

double link_function(Link link, double mu) {
  switch (link) {
    case Link::logit: return std::log(mu) - std::log1p(-mu);
    case Link::probit: return normal_quantile(mu);
    case Link::cloglog: return std::log(-std::log1p(-mu));
    case Link::log: return std::log(mu);
    case Link::identity: return mu;
  }
  return mu;
}

}  // namespace habcast
