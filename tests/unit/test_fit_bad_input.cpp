// Inputs that cannot give a model: each must stop with a message that says what is wrong and what
// to do, never with a silently wrong model file.
#include <catch2/catch.hpp>

#include "core/base/error.hpp"
#include "core/model/formula.hpp"
#include "fit_reference_support.hpp"

using namespace habcast;
using namespace habcast::test;

namespace {

GlmProblem simple_problem(const Eigen::VectorXd& x, const Eigen::VectorXd& y, Family family) {
  GlmProblem p;
  p.X.resize(x.size(), 2);
  p.X.col(0).setOnes();
  p.X.col(1) = x;
  p.y = y;
  p.term_names = {"(Intercept)", "x"};
  p.intercept_column = 0;
  p.family = family;
  p.link = family == Family::binomial ? Link::logit : (family == Family::poisson ? Link::log : Link::identity);
  return p;
}

Eigen::VectorXd vec(std::initializer_list<double> v) {
  Eigen::VectorXd out(static_cast<Eigen::Index>(v.size()));
  Eigen::Index i = 0;
  for (double d : v) out[i++] = d;
  return out;
}

}  // namespace

TEST_CASE("Perfectly separated presences and absences are reported as separation, naming the term", "[fit]") {
  // x < 3.5 only absences, x > 3.5 only presences: the maximum-likelihood slope is infinite
  // (complete separation; Albert & Anderson 1984, Biometrika 71:1-10).
  const GlmProblem p = simple_problem(vec({1, 2, 3, 4, 5, 6}), vec({0, 0, 0, 1, 1, 1}), Family::binomial);
  CHECK_THROWS_WITH(fit_glm(p), Catch::Contains("separated") && Catch::Contains("numerically 0 or 1") &&
                                    Catch::Contains("\"x\"") && Catch::Contains("Drop or merge"));
}

TEST_CASE("Quasi-complete separation by a categorical level is reported as separation", "[fit]") {
  // Level "b" has only presences; the rest is mixed, so only the indicator diverges.
  GlmProblem p = simple_problem(vec({0, 0, 0, 0, 1, 1, 1, 0, 0, 0}), vec({0, 1, 0, 1, 1, 1, 1, 0, 1, 0}), Family::binomial);
  p.term_names = {"(Intercept)", "soil[b]"};
  CHECK_THROWS_WITH(fit_glm(p), Catch::Contains("separated") && Catch::Contains("soil[b]"));
}

TEST_CASE("A level with only zero counts makes a Poisson fit fail with a clear message", "[fit]") {
  GlmProblem p = simple_problem(vec({0, 0, 0, 0, 1, 1, 1}), vec({3, 1, 4, 2, 0, 0, 0}), Family::poisson);
  p.term_names = {"(Intercept)", "soil[b]"};
  CHECK_THROWS_WITH(fit_glm(p), Catch::Contains("numerically 0") && Catch::Contains("soil[b]"));
}

TEST_CASE("A constant covariate is reported by name, whether standardised or not", "[fit]") {
  ModelSpec spec;
  spec.covariates = {continuous("x"), continuous("ph")};
  Eigen::ArrayXXd raw(5, 2);
  raw << 1, 5.5, 2, 5.5, 3, 5.5, 4, 5.5, 5, 5.5;
  CHECK_THROWS_WITH(standardise_covariates(spec, raw, std::vector<std::uint8_t>(5, 1)),
                    Catch::Contains("\"ph\" is constant (5.5) at all 5") && Catch::Contains("drop it"));

  spec.terms = {"(Intercept)", "x", "ph"};
  const Design d = build_design(spec, raw);
  GlmProblem p;
  p.X = d.X;
  p.y = vec({0, 1, 0, 1, 1});
  p.term_names = spec.terms;
  p.intercept_column = 0;
  CHECK_THROWS_WITH(fit_glm(p), Catch::Contains("aliased") && Catch::Contains("term \"ph\" is constant") &&
                                    Catch::Contains("repeats the intercept"));
}

TEST_CASE("Aliased terms are named together with the terms they repeat", "[fit]") {
  GlmProblem p;
  p.X.resize(6, 4);
  p.X << 1, 1, 2, 3, 1, 2, 1, 3, 1, 3, 5, 8, 1, 4, 2, 6, 1, 5, 1, 6, 1, 6, 0, 6;  // col 3 = col 1 + col 2
  p.y = vec({0, 1, 0, 1, 1, 0});
  p.term_names = {"(Intercept)", "a", "b", "a_plus_b"};
  p.intercept_column = 0;
  CHECK_THROWS_WITH(fit_glm(p), Catch::Contains("rank 3 < 4") &&
                                    Catch::Contains("term \"a_plus_b\" is a linear combination of \"a\", \"b\""));
}

TEST_CASE("Responses that do not fit the family are refused with the observation and a remedy", "[fit]") {
  const Eigen::VectorXd x = vec({1, 2, 3, 4, 5, 6});
  CHECK_THROWS_WITH(fit_glm(simple_problem(x, vec({0, 1, 2, 0, 1, 1}), Family::binomial)),
                    Catch::Contains("observation 3") && Catch::Contains("does not fit family binomial") &&
                        Catch::Contains("--family poisson"));
  CHECK_THROWS_WITH(fit_glm(simple_problem(x, vec({0, 0.5, 1, 0, 1, 1}), Family::binomial)),
                    Catch::Contains("observation 2") && Catch::Contains("whole number of successes"));
  CHECK_THROWS_WITH(fit_glm(simple_problem(x, vec({0, 1, 2, -1, 1, 1}), Family::poisson)),
                    Catch::Contains("observation 4") && Catch::Contains("whole counts"));
  CHECK_THROWS_WITH(fit_glm(simple_problem(x, vec({0, 1, 2.5, 1, 1, 1}), Family::poisson)),
                    Catch::Contains("observation 3") && Catch::Contains("--family gaussian"));
  GlmProblem weighted = simple_problem(x, vec({0, 1, 0, 1, 1, 0}), Family::binomial);
  weighted.weights = vec({1, 1, 0, 1, 1, 1});
  CHECK_THROWS_WITH(fit_glm(weighted), Catch::Contains("observation 3") && Catch::Contains("not a positive number"));
  GlmProblem log_gauss = simple_problem(x, vec({1, 2, 0, 4, 5, 6}), Family::gaussian);
  log_gauss.link = Link::log;
  CHECK_THROWS_WITH(fit_glm(log_gauss), Catch::Contains("observation 3") && Catch::Contains("not positive"));
}

TEST_CASE("A fit that runs out of iterations says so and how to continue", "[fit]") {
  const GlmProblem p = simple_problem(vec({1, 2, 3, 4, 5, 6, 7, 8}), vec({0, 0, 1, 0, 1, 0, 1, 1}), Family::binomial);
  IrlsOptions o;
  o.max_iterations = 2;
  CHECK_THROWS_WITH(fit_glm(p, o), Catch::Contains("did not converge") && Catch::Contains("after 2 iterations") &&
                                       Catch::Contains("--max-iterations"));
  CHECK_NOTHROW(fit_glm(p));
}

TEST_CASE("Fewer observations than terms are refused before fitting", "[fit]") {
  CHECK_THROWS_WITH(fit_glm(simple_problem(vec({1, 2}), vec({0, 1}), Family::binomial)),
                    Catch::Contains("2 observations for 2 terms"));
}

TEST_CASE("Formulas in the usual notation become habcast terms; mistakes are explained", "[fit]") {
  ModelSpec spec;
  spec.covariates = {continuous("tmin"), continuous("precip"),
                     categorical("soil", {{1, "peat"}, {2, "loam"}, {3, "sand"}}, "peat")};
  const Formula f = parse_formula("presence ~ tmin + tmin^2 + precip + precip^2 + tmin:precip + soil", spec);
  CHECK(f.response == "presence");
  CHECK(f.terms == std::vector<std::string>{"(Intercept)", "tmin", "tmin^2", "precip", "precip^2", "tmin:precip",
                                            "soil[loam]", "soil[sand]"});
  CHECK(parse_formula("tmin:soil - 1", spec).terms == std::vector<std::string>{"tmin:soil[loam]", "tmin:soil[sand]"});
  CHECK(parse_formula("0 + I(tmin^2) + log(precip)", spec).terms == std::vector<std::string>{"tmin^2", "log(precip)"});
  CHECK(formula_covariates("y ~ tmin + log(precip) + soil[peat]:tmin") == std::vector<std::string>{"tmin", "precip", "soil"});
  CHECK_THROWS_WITH(parse_formula("tmin*precip", spec), Catch::Contains("a + b + a:b"));
  CHECK_THROWS_WITH(parse_formula("tmin + precip:tmin + tmin:precip", spec), Catch::Contains("appears twice"));
  CHECK_THROWS_WITH(parse_formula("tmin + + precip", spec), Catch::Contains("empty term"));
  CHECK_THROWS_WITH(parse_formula("tmin + elev", spec), Catch::Contains("--formula") && Catch::Contains("\"elev\""));
}
