#include "core/model/link.hpp"

#include <cmath>

#include "core/base/pixel_loops.hpp"
#include "core/numeric/normal_distribution.hpp"
#include "core/numeric/portable_exp.hpp"

namespace habcast {

namespace {

// Logistic function without overflow: exp() only ever sees a non-positive argument,
// t = exp(-|eta|); 1 / (1 + t) for eta >= 0, t / (1 + t) below. The numerator is selected and one
// division made, so that a loop of calls has no branch and vectorises (the same quotient, bit for
// bit, as dividing both and keeping one, which cost a division more per call).
inline double logistic(double eta) {
  const double t = portable_exp(-std::fabs(eta));
  const double d = 1.0 + t;
  return (eta >= 0.0 ? 1.0 : t) / d;
}

// mu (1 - mu) for the logistic, computed from exp(-|eta|) so it does not cancel to 0 in the tails.
inline double logistic_derivative(double eta) {
  const double t = portable_exp(-std::fabs(eta));
  const double d = 1.0 + t;
  return t / (d * d);
}

// Both at once, sharing t = exp(-|eta|): the same operations as logistic() and
// logistic_derivative(), so the same bits as calling them one by one.
inline void logistic_with_derivative(double eta, double& mu, double& derivative) {
  const double t = portable_exp(-std::fabs(eta));
  const double d = 1.0 + t;
  mu = (eta >= 0.0 ? 1.0 : t) / d;
  derivative = t / (d * d);
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
    case Link::log: return portable_exp(eta);
    case Link::identity: return eta;
  }
  return eta;
}

double link_inverse_derivative(Link link, double eta) {
  switch (link) {
    case Link::logit: return logistic_derivative(eta);
    case Link::probit: return normal_pdf(eta);
    case Link::cloglog: return complementary_log_log_derivative(eta);
    case Link::log: return portable_exp(eta);
    case Link::identity: return 1.0;
  }
  return 1.0;
}

HABCAST_PIXEL_LOOPS void link_inverse_with_derivative(Link link, const double* eta, double* mu, double* derivative,
                                                     long n) {
  if (link == Link::logit) {
    for (long i = 0; i < n; ++i) logistic_with_derivative(eta[i], mu[i], derivative[i]);
    return;
  }
  if (link == Link::log) {
    for (long i = 0; i < n; ++i) mu[i] = derivative[i] = portable_exp(eta[i]);
    return;
  }
  for (long i = 0; i < n; ++i) {
    mu[i] = link_inverse(link, eta[i]);
    derivative[i] = link_inverse_derivative(link, eta[i]);
  }
}

namespace {

/// out[i] = f(eta[i]); inlined into each caller with its own f, so the loop vectorises where f does.
template <class F>
inline void map_loop(F f, const double* eta, double* out, long n) {
  for (long i = 0; i < n; ++i) out[i] = f(eta[i]);
}

}  // namespace

HABCAST_PIXEL_LOOPS void link_inverse_derivative_all(Link link, const double* eta, double* derivative, long n) {
  if (link == Link::logit)
    map_loop([](double x) { return logistic_derivative(x); }, eta, derivative, n);
  else if (link == Link::log)
    map_loop([](double x) { return portable_exp(x); }, eta, derivative, n);
  else
    map_loop([link](double x) { return link_inverse_derivative(link, x); }, eta, derivative, n);
}

HABCAST_PIXEL_LOOPS void link_inverse_all(Link link, const double* eta, double* mu, long n) {
  if (link == Link::logit)
    map_loop([](double x) { return logistic(x); }, eta, mu, n);
  else if (link == Link::log)
    map_loop([](double x) { return portable_exp(x); }, eta, mu, n);
  else
    map_loop([link](double x) { return link_inverse(link, x); }, eta, mu, n);
}

namespace {

/// lower[i] = inverse(eta[i] - z se[i]), upper[i] = inverse(eta[i] + z se[i]); inlined into each
/// caller with its own inverse, so the loop vectorises where the inverse does.
template <class Inverse>
inline void interval_loop(Inverse inverse, const double* __restrict eta, const double* __restrict se, double z,
                          double* __restrict lower, double* __restrict upper, long n) {
  for (long i = 0; i < n; ++i) {
    const double w = z * se[i];
    lower[i] = inverse(eta[i] - w);
    upper[i] = inverse(eta[i] + w);
  }
}

}  // namespace

HABCAST_PIXEL_LOOPS void link_inverse_interval(Link link, const double* __restrict eta, const double* __restrict se,
                                              double z, double* __restrict lower, double* __restrict upper, long n) {
  if (link == Link::logit)
    interval_loop([](double x) { return logistic(x); }, eta, se, z, lower, upper, n);
  else if (link == Link::log)
    interval_loop([](double x) { return portable_exp(x); }, eta, se, z, lower, upper, n);
  else
    interval_loop([link](double x) { return link_inverse(link, x); }, eta, se, z, lower, upper, n);
}

namespace {

/// One pass of the response with its standard error (see link_response() in link.hpp). `both`
/// gives g^-1 and its derivative at eta, `inverse` g^-1 alone. Always inlined: link_response() is
/// compiled once per instruction set, and a loop left out of line would get the baseline's.
template <bool Limits, class Both, class Inverse>
__attribute__((always_inline)) inline void response_loop(Both both, Inverse inverse, const double* __restrict eta,
                                                         const double* __restrict variance, double z,
                                                         double* __restrict se_eta, double* __restrict mu,
                                                         double* __restrict se_mu, double* __restrict lower,
                                                         double* __restrict upper, long n) {
  for (long i = 0; i < n; ++i) {
    // max(v, 0) as Eigen's array max forms it: v unless v < 0 (a NaN and -0 stay).
    const double v = variance[i];
    const double se = std::sqrt(v < 0.0 ? 0.0 : v);
    se_eta[i] = se;
    double m, d;
    both(eta[i], m, d);
    mu[i] = m;
    se_mu[i] = d * se;
    if constexpr (Limits) {
      const double w = z * se;
      lower[i] = inverse(eta[i] - w);
      upper[i] = inverse(eta[i] + w);
    }
  }
}

template <class Both, class Inverse>
__attribute__((always_inline)) inline void response_loops(Both both, Inverse inverse, const double* eta,
                                                          const double* variance, double z, double* se_eta, double* mu,
                                                          double* se_mu, double* lower, double* upper, long n) {
  if (lower)
    response_loop<true>(both, inverse, eta, variance, z, se_eta, mu, se_mu, lower, upper, n);
  else
    response_loop<false>(both, inverse, eta, variance, z, se_eta, mu, se_mu, lower, upper, n);
}

}  // namespace

HABCAST_PIXEL_LOOPS void link_response(Link link, const double* eta, const double* variance, double z, double* se_eta,
                                       double* mu, double* se_mu, double* lower, double* upper, long n) {
  if (link == Link::logit) {
    const auto both = [](double x, double& m, double& d) { logistic_with_derivative(x, m, d); };
    response_loops(both, [](double x) { return logistic(x); }, eta, variance, z, se_eta, mu, se_mu, lower, upper, n);
  } else if (link == Link::log) {
    const auto both = [](double x, double& m, double& d) { m = d = portable_exp(x); };
    response_loops(both, [](double x) { return portable_exp(x); }, eta, variance, z, se_eta, mu, se_mu, lower, upper,
                   n);
  } else {
    const auto both = [link](double x, double& m, double& d) {
      m = link_inverse(link, x);
      d = link_inverse_derivative(link, x);
    };
    response_loops(both, [link](double x) { return link_inverse(link, x); }, eta, variance, z, se_eta, mu, se_mu, lower,
                   upper, n);
  }
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
