// `habcast fit` with spline factors in the formula: knots placed as R's ns()/bs() place them
// (quantiles of the training values) and the fitted coefficients equal R's glm().
#include <catch2/catch.hpp>

#include <cmath>
#include <map>

#include "core/base/csv_table.hpp"
#include "core/base/error.hpp"
#include "core/model/design_matrix.hpp"
#include "core/model/formula.hpp"
#include "core/model/model_values.hpp"
#include "core/stats/irls.hpp"
#include "fit_reference_support.hpp"

namespace habcast {
namespace {

TEST_CASE("A formula with ns(), bs() and a spline-by-covariate product fits as R's glm() does", "[spline][fit]") {
  // Source: R 4.2.2 stats::glm with splines::ns(df = 3) and splines::bs(df = 4, degree = 2) on
  // vegan's mite data (r-cran-vegan), tests/reference/mite_spline_fit.R.
  const CsvTable data = read_csv_table(test::reference_path("mite_basis/fit_data.csv"));
  ModelSpec spec;
  spec.family = Family::binomial;
  spec.link = Link::logit;
  spec.covariates = {test::continuous("WatrCont"), test::continuous("SubsDens"),
                     test::categorical("Topo", {{1, "Blanket"}, {2, "Hummock"}}, "Blanket")};
  const Eigen::Index n = static_cast<Eigen::Index>(data.rows.size());
  Eigen::ArrayXXd raw(n, 3);
  for (std::size_t c = 0; c < 3; ++c)
    for (Eigen::Index r = 0; r < n; ++r)
      raw(r, static_cast<Eigen::Index>(c)) = data.number(static_cast<std::size_t>(r), c);
  standardise_covariates(spec, raw, std::vector<std::uint8_t>(static_cast<std::size_t>(n), 1));
  const std::string formula =
      "present ~ ns(WatrCont, df = 3) + bs(SubsDens, df = 4, degree = 2) + ns(WatrCont, df = 3):SubsDens + Topo";
  declare_formula_splines(formula, spec, [&](int c) {
    std::vector<double> v;
    for (Eigen::Index r = 0; r < n; ++r) v.push_back(model_value(spec.covariates[static_cast<std::size_t>(c)], raw(r, c)));
    return v;
  });

  // The knots R chose, to rounding.
  const CsvTable knots = read_csv_table(test::reference_path("mite_basis/fit_knots.csv"));
  std::map<std::string, std::vector<double>> interior;
  for (std::size_t r = 0; r < knots.rows.size(); ++r) {
    const SplineDefinition& d = knots.rows[r][0] == "ns" ? *spec.covariates[0].natural_spline : *spec.covariates[1].bspline;
    const std::string& kind = knots.rows[r][2];
    const double value = knots.number(r, 3);
    if (kind == "lower") CHECK(d.lower == Approx(value).margin(1e-13));
    else if (kind == "upper") CHECK(d.upper == Approx(value).margin(1e-13));
    else interior[knots.rows[r][0]].push_back(value);
  }
  REQUIRE(spec.covariates[0].natural_spline->knots.size() == interior["ns"].size());
  REQUIRE(spec.covariates[1].bspline->knots.size() == interior["bs"].size());
  for (std::size_t i = 0; i < interior["ns"].size(); ++i)
    CHECK(spec.covariates[0].natural_spline->knots[i] == Approx(interior["ns"][i]).margin(1e-13));
  for (std::size_t i = 0; i < interior["bs"].size(); ++i)
    CHECK(spec.covariates[1].bspline->knots[i] == Approx(interior["bs"][i]).margin(1e-13));
  CHECK(spec.covariates[1].bspline->degree == 2);

  spec.terms = parse_formula(formula, spec).terms;
  REQUIRE(spec.terms.size() == 12);
  CHECK(spec.terms[8] == "ns(WatrCont)[1]:SubsDens");
  const Design design = build_design(spec, raw);
  GlmProblem p;
  p.X = design.X;
  p.term_names = spec.terms;
  p.intercept_column = 0;
  p.family = spec.family;
  p.link = spec.link;
  p.y = test::column_vector(data, "present");
  const GlmFit fit = fit_glm(p);
  const CsvTable co = read_csv_table(test::reference_path("mite_basis/fit_coefficients.csv"));
  REQUIRE(co.rows.size() == spec.terms.size());
  for (std::size_t r = 0; r < co.rows.size(); ++r) {
    const auto it = std::find(spec.terms.begin(), spec.terms.end(), co.rows[r][0]);
    INFO("term " << co.rows[r][0]);
    REQUIRE(it != spec.terms.end());
    const Eigen::Index j = it - spec.terms.begin();
    CHECK(fit.coefficients[j] == Approx(co.number(r, 1)).epsilon(1e-6));
    CHECK(fit.std_errors[j] == Approx(co.number(r, 2)).epsilon(1e-6));
  }
}

TEST_CASE("Spline factors in a formula that cannot be built are refused with the reason", "[spline][fit]") {
  ModelSpec spec;
  spec.covariates = {test::continuous("x")};
  auto values = [](int) { return std::vector<double>{1, 2, 3, 4, 5, 6}; };
  CHECK_THROWS_WITH(declare_formula_splines("y ~ ns(x)", spec, values), Catch::Contains("give df = N"));
  CHECK_THROWS_WITH(declare_formula_splines("y ~ ns(x, df = 3, knots = [2])", spec, values), Catch::Contains("not both"));
  CHECK_THROWS_WITH(declare_formula_splines("y ~ ns(x, span = 3)", spec, values), Catch::Contains("unknown argument"));
  CHECK_THROWS_WITH(declare_formula_splines("y ~ bs(x, df = 2)", spec, values), Catch::Contains("too small"));
  CHECK_THROWS_WITH(declare_formula_splines("y ~ ns(x, df = 2) + ns(x, df = 3)", spec, values),
                    Catch::Contains("already has a different"));
  CHECK(formula_covariates("y ~ ns(x, df = 4, boundary = c(0, 9)) + z") == std::vector<std::string>{"x", "z"});
}

}  // namespace
}  // namespace habcast
