// Link functions and the normal distribution against published and reference values.
#include <catch2/catch.hpp>
#include <Eigen/Core>
#include <cmath>
#include <cstring>
#include <limits>
#include <vector>

#include "core/model/link.hpp"
#include "core/numeric/normal_distribution.hpp"

using habcast::Link;
using Catch::Matchers::WithinRel;

TEST_CASE("normal CDF matches the published table and R's pnorm", "[link]") {
  // Abramowitz & Stegun (1964), Handbook of Mathematical Functions, Table 26.1 (values from memory),
  // each cross-checked with R 4.2.2's pnorm() (digits = 17), which is the number compared here.
  CHECK_THAT(habcast::normal_cdf(0.5), WithinRel(6.9146246127401301e-01, 1e-14));
  CHECK_THAT(habcast::normal_cdf(1.0), WithinRel(8.4134474606854293e-01, 1e-14));
  CHECK_THAT(habcast::normal_cdf(1.96), WithinRel(9.7500210485177963e-01, 1e-14));
  CHECK_THAT(habcast::normal_cdf(2.0), WithinRel(9.7724986805182079e-01, 1e-14));
  CHECK_THAT(habcast::normal_cdf(3.0), WithinRel(9.9865010196836990e-01, 1e-14));
  // Lower tail, where 1 - Phi(-x) would cancel: R 4.2.2 pnorm(-5), pnorm(-10), pnorm(-30).
  CHECK_THAT(habcast::normal_cdf(-5.0), WithinRel(2.8665157187919391e-07, 1e-12));
  CHECK_THAT(habcast::normal_cdf(-10.0), WithinRel(7.6198530241605269e-24, 1e-12));
  CHECK_THAT(habcast::normal_cdf(-30.0), WithinRel(4.9067139271481872e-198, 1e-10));
}

TEST_CASE("normal quantile matches published percentage points and R's qnorm", "[link]") {
  // Percentage points of the normal distribution, Abramowitz & Stegun Table 26.5 (from memory:
  // 1.959963985, 2.575829304, 3.290526731, 1.644853627), compared at R 4.2.2 qnorm()'s 17 digits.
  CHECK_THAT(habcast::normal_quantile(0.975), WithinRel(1.95996398454005361, 1e-14));
  CHECK_THAT(habcast::normal_quantile(0.995), WithinRel(2.57582930354889994, 1e-14));
  CHECK_THAT(habcast::normal_quantile(0.9995), WithinRel(3.29052673149192554, 1e-14));
  CHECK_THAT(habcast::normal_quantile(0.95), WithinRel(1.64485362695147153, 1e-14));
  CHECK_THAT(habcast::normal_quantile(0.3), WithinRel(-0.52440051270804067, 1e-14));
  // Far tails (AS 241's third region): R 4.2.2 qnorm(1e-10), qnorm(1e-300).
  CHECK_THAT(habcast::normal_quantile(1e-10), WithinRel(-6.36134090240405570, 1e-14));
  CHECK_THAT(habcast::normal_quantile(1e-300), WithinRel(-37.04709629936120052, 1e-14));
  CHECK(habcast::normal_quantile(0.0) == -std::numeric_limits<double>::infinity());
  CHECK(habcast::normal_quantile(1.0) == std::numeric_limits<double>::infinity());
  CHECK(std::isnan(habcast::normal_quantile(1.5)));
  // Round trip over the whole range (a property of the pair, no outside source).
  for (double p = 0.001; p < 1.0; p += 0.0137) CHECK_THAT(habcast::normal_cdf(habcast::normal_quantile(p)), WithinRel(p, 1e-13));
}

TEST_CASE("logit inverse is exact in both tails and never overflows", "[link]") {
  // R 4.2.2 plogis(-30), plogis(30) (R's plogis does not clamp; binomial()$linkinv does).
  CHECK_THAT(habcast::link_inverse(Link::logit, -30.0), WithinRel(9.3576229688392989e-14, 1e-14));
  CHECK_THAT(habcast::link_inverse(Link::logit, 30.0), WithinRel(9.9999999999990652e-01, 1e-15));
  // Closed form 1/(1 + exp(700)) = exp(-700)/(1 + exp(-700)); the naive form overflows exp(700).
  CHECK_THAT(habcast::link_inverse(Link::logit, -700.0), WithinRel(std::exp(-700.0) / (1.0 + std::exp(-700.0)), 1e-14));
  CHECK(habcast::link_inverse(Link::logit, 700.0) == 1.0);
  CHECK(habcast::link_inverse(Link::logit, -1000.0) == 0.0);
  CHECK(habcast::link_inverse(Link::logit, 1000.0) == 1.0);
  // Derivative mu(1-mu) = exp(-|eta|)/(1+exp(-|eta|))^2: finite and positive far out.
  CHECK_THAT(habcast::link_inverse_derivative(Link::logit, -700.0), WithinRel(std::exp(-700.0), 1e-13));
  CHECK_THAT(habcast::link_inverse_derivative(Link::logit, 0.0), WithinRel(0.25, 1e-15));
  CHECK(habcast::link_inverse_derivative(Link::logit, 1000.0) == 0.0);
}

TEST_CASE("complementary log-log and probit tails follow the closed form", "[link]") {
  // 1 - exp(-exp(eta)) = exp(eta) - exp(2 eta)/2 + ...; at eta = -40 the series gives exp(-40) to
  // 1e-17 relative (R's binomial("cloglog")$linkinv clamps to 2.2e-16 there, so R is not used).
  CHECK_THAT(habcast::link_inverse(Link::cloglog, -40.0), WithinRel(std::exp(-40.0), 1e-15));
  // R 4.2.2 binomial("cloglog")$linkinv(c(-5, 0, 3)), where R's clamp does not bite.
  CHECK_THAT(habcast::link_inverse(Link::cloglog, -5.0), WithinRel(6.7152979321585104e-03, 1e-14));
  CHECK_THAT(habcast::link_inverse(Link::cloglog, 0.0), WithinRel(6.3212055882855767e-01, 1e-14));
  CHECK_THAT(habcast::link_inverse(Link::cloglog, 3.0), WithinRel(9.9999999810782125e-01, 1e-14));
  // R 4.2.2 binomial("cloglog")$mu.eta(c(0, 3)).
  CHECK_THAT(habcast::link_inverse_derivative(Link::cloglog, 0.0), WithinRel(3.6787944117144233e-01, 1e-14));
  CHECK_THAT(habcast::link_inverse_derivative(Link::cloglog, 3.0), WithinRel(3.8005425040443575e-08, 1e-12));
  for (double eta : {-1000.0, -700.0, 700.0, 1000.0}) {
    for (Link link : {Link::logit, Link::probit, Link::cloglog}) {
      const double mu = habcast::link_inverse(link, eta);
      const double d = habcast::link_inverse_derivative(link, eta);
      CHECK(std::isfinite(mu));
      CHECK(mu >= 0.0);
      CHECK(mu <= 1.0);
      CHECK(std::isfinite(d));
      CHECK(d >= 0.0);
    }
  }
  // probit tail: Phi(-30) against R 4.2.2 pnorm(-30).
  CHECK_THAT(habcast::link_inverse(Link::probit, -30.0), WithinRel(4.9067139271481872e-198, 1e-10));
}

TEST_CASE("log and identity links", "[link]") {
  CHECK_THAT(habcast::link_inverse(Link::log, 2.0), WithinRel(std::exp(2.0), 1e-15));
  CHECK(std::isfinite(habcast::link_inverse(Link::log, 700.0)));
  CHECK(std::isinf(habcast::link_inverse(Link::log, 1000.0)));  // documented: +inf, never NaN
  CHECK(habcast::link_inverse(Link::log, -1000.0) == 0.0);
  CHECK(habcast::link_inverse(Link::identity, -3.5) == -3.5);
  CHECK(habcast::link_inverse_derivative(Link::identity, 9.0) == 1.0);
  for (Link link : {Link::logit, Link::probit, Link::cloglog, Link::log, Link::identity})
    for (double mu : {0.01, 0.3, 0.5, 0.9})
      CHECK_THAT(habcast::link_inverse(link, habcast::link_function(link, mu)), WithinRel(mu, 1e-13));
}

TEST_CASE("the batched link evaluation gives the same bits as one call per value", "[link]") {
  // predict evaluates whole chunks with link_inverse_with_derivative / link_inverse_all (the logit
  // shares one exp() between mu and its derivative); outputs must not change by a single bit.
  std::vector<double> eta = {0.0, -0.0, 1e-300, -1e-300, 0.25, -0.25, 3.0, -3.0, 36.7, -36.7, 40.0, -40.0,
                             700.0, -700.0, 745.2, -745.2, 1000.0, -1000.0,
                             std::numeric_limits<double>::infinity(), -std::numeric_limits<double>::infinity(),
                             std::numeric_limits<double>::quiet_NaN()};
  for (double x = -50.0; x <= 50.0; x += 0.173) eta.push_back(x);
  const auto n = static_cast<long>(eta.size());
  const auto same = [](double a, double b) { return (std::isnan(a) && std::isnan(b)) || std::memcmp(&a, &b, sizeof a) == 0; };
  for (Link link : {Link::logit, Link::probit, Link::cloglog, Link::log, Link::identity}) {
    std::vector<double> mu(eta.size()), derivative(eta.size()), only_mu(eta.size());
    habcast::link_inverse_with_derivative(link, eta.data(), mu.data(), derivative.data(), n);
    habcast::link_inverse_all(link, eta.data(), only_mu.data(), n);
    for (std::size_t i = 0; i < eta.size(); ++i) {
      INFO("link " << static_cast<int>(link) << ", eta " << eta[i]);
      CHECK(same(mu[i], habcast::link_inverse(link, eta[i])));
      CHECK(same(only_mu[i], habcast::link_inverse(link, eta[i])));
      CHECK(same(derivative[i], habcast::link_inverse_derivative(link, eta[i])));
    }
  }
}

TEST_CASE("the one-pass response gives the same bits as the separate steps it replaces", "[link]") {
  // predict forms se(eta), mu, se(mu) and the limits in one pass (link_response); before, they came
  // from Eigen's sqrt(max(x'Vx, 0)), link_inverse_with_derivative, a product and
  // link_inverse_interval, one pass each. Variances include what rounding can give near 0 (-0, a
  // tiny negative) and what a broken model gives (NaN, inf).
  std::vector<double> eta, variance;
  const std::vector<double> variances = {0.0, -0.0, -1e-19, 1e-300, 2.5e-7, 0.04, 1.0, 81.0, 1e6,
                                         std::numeric_limits<double>::infinity(),
                                         std::numeric_limits<double>::quiet_NaN()};
  std::size_t k = 0;
  for (double x = -60.0; x <= 60.0; x += 0.137) {
    eta.push_back(x);
    variance.push_back(variances[k++ % variances.size()]);
  }
  eta.push_back(-0.0);
  variance.push_back(0.3);
  eta.push_back(std::numeric_limits<double>::quiet_NaN());
  variance.push_back(0.3);
  const auto n = static_cast<Eigen::Index>(eta.size());
  const double z = 1.959963984540054;
  const auto same = [](double a, double b) { return (std::isnan(a) && std::isnan(b)) || std::memcmp(&a, &b, sizeof a) == 0; };
  for (Link link : {Link::logit, Link::probit, Link::cloglog, Link::log, Link::identity}) {
    // The steps as Evaluator ran them before.
    const Eigen::Map<const Eigen::VectorXd> v(variance.data(), n);
    const Eigen::VectorXd se_eta = v.array().max(0.0).sqrt().matrix();
    Eigen::VectorXd mu(n), se_mu(n), lower(n), upper(n);
    habcast::link_inverse_with_derivative(link, eta.data(), mu.data(), se_mu.data(), n);
    se_mu.array() *= se_eta.array();
    habcast::link_inverse_interval(link, eta.data(), se_eta.data(), z, lower.data(), upper.data(), n);
    for (bool limits : {true, false}) {
      Eigen::VectorXd se1(n), mu1(n), se_mu1(n), lower1 = Eigen::VectorXd::Constant(n, 7.0), upper1 = lower1;
      habcast::link_response(link, eta.data(), variance.data(), z, se1.data(), mu1.data(), se_mu1.data(),
                             limits ? lower1.data() : nullptr, limits ? upper1.data() : nullptr, n);
      int differ = 0;
      for (Eigen::Index i = 0; i < n; ++i) {
        differ += same(se1[i], se_eta[i]) && same(mu1[i], mu[i]) && same(se_mu1[i], se_mu[i]) ? 0 : 1;
        if (limits)
          differ += same(lower1[i], lower[i]) && same(upper1[i], upper[i]) ? 0 : 1;
        else
          differ += lower1[i] == 7.0 && upper1[i] == 7.0 ? 0 : 1;  // not written without limits
      }
      INFO("link " << static_cast<int>(link) << ", limits " << limits);
      CHECK(differ == 0);
    }
  }
}
