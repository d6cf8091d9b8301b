// IRLS against R's glm(): the reference numbers in tests/reference/glm/ were computed by R's
// stats::glm on open data from Debian packages, in two conventions:
//  - tight: glm.control(epsilon = 1e-14) (tests/reference/glm_fit_references.R), compared with
//    IrlsOptions::tight() (`habcast fit --tight`) to 1e-6;
//  - R's default: glm.control() = epsilon 1e-8, maxit 25, vcov() from the last iteration's weights
//    (tests/reference/glm_default_control.R), compared with the default IrlsOptions to 1e-9, with
//    the same number of iterations.
#include <catch2/catch.hpp>
#include <cmath>

#include "core/stats/coefficient_table.hpp"
#include "fit_reference_support.hpp"

using namespace habcast;
using namespace habcast::test;

namespace {

constexpr double kRelative = 1e-6;  // the tolerance: 1e-6 relative

void require_matches_r(const GlmFit& fit, const std::vector<std::string>& terms, const ReferenceCase& ref) {
  REQUIRE(terms.size() == ref.coefficients.size());
  const auto table = coefficient_table(fit, terms);
  for (const CoefficientRow& row : table) {
    INFO("term " << row.term);
    REQUIRE(ref.coefficients.count(row.term) == 1);
    const ReferenceCoefficient& r = ref.coefficients.at(row.term);
    CHECK(row.estimate == Approx(r.estimate).epsilon(kRelative));
    CHECK(row.std_error == Approx(r.std_error).epsilon(kRelative));
    CHECK(row.statistic == Approx(r.statistic).epsilon(kRelative));
    // p-values to 1e-5: R's SEs use the weights of the iteration before its last update (about
    // 1e-7 away at R's 1e-14 tolerance), ours the converged weights, and a p-value magnifies a
    // relative change of z by about z^2 (up to ~10 here).
    CHECK(row.p_value == Approx(r.p_value).epsilon(1e-5).margin(1e-14));
  }
  CHECK(fit.deviance == Approx(ref.statistics.at("deviance")).epsilon(kRelative));
  CHECK(fit.null_deviance == Approx(ref.statistics.at("null_deviance")).epsilon(kRelative));
  CHECK(fit.aic == Approx(ref.statistics.at("aic")).epsilon(kRelative));
  CHECK(fit.log_likelihood == Approx(ref.statistics.at("log_likelihood")).epsilon(kRelative));
  CHECK(fit.dispersion == Approx(ref.statistics.at("dispersion")).epsilon(kRelative));
  CHECK(static_cast<double>(fit.df_residual) == ref.statistics.at("df_residual"));
  CHECK(static_cast<double>(fit.df_null) == ref.statistics.at("df_null"));
}

/// The default options reproduce R's default glm(): same iterations, estimates and standard errors
/// to 1e-9 relative (the two conventions differ by up to 2e-6 on these cases, so this tells them apart).
void require_matches_r_default(const GlmProblem& p, const std::vector<std::string>& terms, const std::string& name) {
  const ReferenceCase ref = load_r_default_case(name);
  const GlmFit fit = fit_glm(p);
  CHECK(fit.covariance_weights == CovarianceWeights::last_iteration);
  CHECK(static_cast<double>(fit.iterations) == ref.statistics.at("iterations"));
  for (const CoefficientRow& row : coefficient_table(fit, terms)) {
    INFO("R default control, term " << row.term);
    REQUIRE(ref.coefficients.count(row.term) == 1);
    const ReferenceCoefficient& r = ref.coefficients.at(row.term);
    CHECK(row.estimate == Approx(r.estimate).epsilon(1e-9));
    CHECK(row.std_error == Approx(r.std_error).epsilon(1e-9));
    CHECK(row.p_value == Approx(r.p_value).epsilon(1e-8).margin(1e-14));
  }
  CHECK(fit.deviance == Approx(ref.statistics.at("deviance")).epsilon(1e-12));
  CHECK(fit.null_deviance == Approx(ref.statistics.at("null_deviance")).epsilon(1e-12));
  CHECK(fit.aic == Approx(ref.statistics.at("aic")).epsilon(1e-12));
  CHECK(fit.dispersion == Approx(ref.statistics.at("dispersion")).epsilon(1e-9));
}

}  // namespace

TEST_CASE("IRLS equals R's glm() for a binomial model with quadratic and interaction terms (vegan mite data)", "[fit]") {
  // Source: R 4.2.2 stats::glm on vegan's mite/mite.env (Debian r-cran-vegan), see
  // tests/reference/glm_fit_references.R, case mite_binomial.
  const ReferenceCase ref = load_reference_case("mite_binomial");
  ModelSpec spec;
  spec.family = Family::binomial;
  spec.link = Link::logit;
  spec.covariates = {continuous("WatrCont"), continuous("SubsDens"),
                     categorical("Topo", {{1, "Blanket"}, {2, "Hummock"}}, "Blanket")};
  const GlmProblem p = build_problem(
      spec, ref.data, "present ~ WatrCont + WatrCont^2 + SubsDens + SubsDens^2 + WatrCont:SubsDens + Topo", "present", true);
  const GlmFit fit = fit_glm(p, IrlsOptions::tight());
  require_matches_r(fit, spec.terms, ref);
  require_matches_r_default(p, spec.terms, "mite_binomial");
}

TEST_CASE("IRLS equals R's glm() for a Poisson model with an offset (vegan mite counts)", "[fit]") {
  // Source: R 4.2.2 stats::glm, case mite_poisson of tests/reference/glm_fit_references.R.
  const ReferenceCase ref = load_reference_case("mite_poisson");
  ModelSpec spec;
  spec.family = Family::poisson;
  spec.link = Link::log;
  spec.covariates = {continuous("WatrCont"), continuous("SubsDens"),
                     categorical("Topo", {{1, "Blanket"}, {2, "Hummock"}}, "Blanket")};
  GlmProblem p = build_problem(spec, ref.data, "WatrCont + WatrCont^2 + SubsDens + Topo", "count", true);
  p.offset = column_vector(ref.data, "total").array().log().matrix();
  const GlmFit fit = fit_glm(p, IrlsOptions::tight());
  require_matches_r(fit, spec.terms, ref);
  require_matches_r_default(p, spec.terms, "mite_poisson");
}

TEST_CASE("IRLS equals R's glm() for a Poisson model of two factors (R's warpbreaks)", "[fit]") {
  // Source: R 4.2.2 stats::glm on datasets::warpbreaks (r-base-core), case warpbreaks_poisson.
  const ReferenceCase ref = load_reference_case("warpbreaks_poisson");
  ModelSpec spec;
  spec.family = Family::poisson;
  spec.link = Link::log;
  spec.covariates = {categorical("wool", {{1, "A"}, {2, "B"}}, "A"),
                     categorical("tension", {{1, "L"}, {2, "M"}, {3, "H"}}, "L")};
  const GlmProblem p = build_problem(spec, ref.data, "breaks ~ wool + tension", "breaks", false);
  CHECK(spec.terms == std::vector<std::string>{"(Intercept)", "wool[B]", "tension[M]", "tension[H]"});
  require_matches_r(fit_glm(p, IrlsOptions::tight()), spec.terms, ref);
  require_matches_r_default(p, spec.terms, "warpbreaks_poisson");
}

TEST_CASE("IRLS equals R's glm() for a weighted gaussian model, dispersion and t p-values included (R's cars)", "[fit]") {
  // Source: R 4.2.2 stats::glm on datasets::cars with weights 1/speed, case cars_gaussian.
  const ReferenceCase ref = load_reference_case("cars_gaussian");
  ModelSpec spec;
  spec.family = Family::gaussian;
  spec.link = Link::identity;
  spec.covariates = {continuous("speed")};
  GlmProblem p = build_problem(spec, ref.data, "dist ~ speed + speed^2", "dist", false);
  p.weights = column_vector(ref.data, "weight");
  const GlmFit fit = fit_glm(p, IrlsOptions::tight());
  CHECK(fit.dispersion_estimated);
  require_matches_r(fit, spec.terms, ref);
  require_matches_r_default(p, spec.terms, "cars_gaussian");
}

TEST_CASE("IRLS reproduces the low birth weight logistic regression of Hosmer & Lemeshow", "[fit]") {
  // Data: MASS's birthwt (Debian r-cran-mass). Full-precision reference: R 4.2.2 stats::glm, case
  // birthwt_binomial of tests/reference/glm_fit_references.R.
  const ReferenceCase ref = load_reference_case("birthwt_binomial");
  ModelSpec spec;
  spec.family = Family::binomial;
  spec.link = Link::logit;
  spec.covariates = {continuous("age"), continuous("lwt"), categorical("race", {{1, "1"}, {2, "2"}, {3, "3"}}, "1"),
                     continuous("ftv")};
  const GlmProblem p = build_problem(spec, ref.data, "low ~ age + lwt + race + ftv", "low", false);
  const GlmFit fit = fit_glm(p, IrlsOptions::tight());
  require_matches_r(fit, spec.terms, ref);
  require_matches_r_default(p, spec.terms, "birthwt_binomial");

  // The printed table: Hosmer & Lemeshow, Applied Logistic Regression, 2nd ed. (2000), Table 2.2
  // (estimates to 3 decimals, standard errors to 4; values from memory, confirmed by the R fit
  // above): constant 1.295 (1.0714), AGE -0.024 (0.0337), LWT -0.014 (0.0065),
  // RACE_2 1.004 (0.4979), RACE_3 0.433 (0.3622), FTV -0.049 (0.1672); log-likelihood -111.286.
  const double book_estimates[] = {1.295, -0.024, -0.014, 1.004, 0.433, -0.049};
  const double book_se[] = {1.0714, 0.0337, 0.0065, 0.4979, 0.3622, 0.1672};
  for (Eigen::Index j = 0; j < 6; ++j) {
    INFO("term " << spec.terms[static_cast<std::size_t>(j)]);
    CHECK(std::fabs(fit.coefficients[j] - book_estimates[j]) <= 0.0005);
    CHECK(std::fabs(fit.std_errors[j] - book_se[j]) <= 0.00005);
  }
  CHECK(std::fabs(fit.log_likelihood - -111.286) <= 0.0005);
}
