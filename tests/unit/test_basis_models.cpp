// Models with orthogonal polynomials and spline terms, fitted by R's glm() on vegan's mite data and
// written by scripts/export_habcast_model.R (tests/reference/mite_basis_glm.R): habcast's linear
// predictor and its delta-method standard error equal R's predict(..., se.fit = TRUE), inside and
// beyond the training range and the boundary knots.
#include <catch2/catch.hpp>
#include <algorithm>
#include <cmath>
#include <cstdlib>
#include <string>

#include "core/base/csv_table.hpp"
#include "core/model/evaluator.hpp"
#include "core/model/model_file.hpp"
#include "core/model/model_values.hpp"
#include "core/model/term_plan.hpp"
#include "core/domain/training_samples.hpp"
#include "core/niche/niche_description.hpp"
#include "test_support.hpp"

using namespace habcast;

namespace {

struct Compared {
  double eta = 0.0;  ///< worst relative difference of eta
  double se = 0.0;   ///< ... of se(eta)
  std::size_t rows = 0;
};

// Paths as given (absolute, or relative to the working directory).
Compared compare_files(const std::string& model, const std::string& predictions) {
  const ModelSpec spec = read_model_file(model);
  const TermPlan plan(spec);
  const CsvTable ref = read_csv_table(predictions);
  const Eigen::Index n = static_cast<Eigen::Index>(ref.rows.size());
  Eigen::ArrayXXd raw(n, static_cast<Eigen::Index>(spec.covariates.size()));
  for (Eigen::Index r = 0; r < n; ++r)
    for (std::size_t c = 0; c < spec.covariates.size(); ++c)
      raw(r, static_cast<Eigen::Index>(c)) =
          ref.number(static_cast<std::size_t>(r), ref.require_column(spec.covariates[c].name, "covariate"));
  ModelValues values;
  std::vector<std::uint8_t> valid(static_cast<std::size_t>(n), 1);
  ModelValueCounts counts;
  to_model_values(spec, plan, raw, 0, n, values, valid.data(), counts);
  Eigen::MatrixXd X;
  plan.fill(values, n, X, valid.data());
  Eigen::VectorXd offset;
  plan.fill_offset(values, n, offset, valid.data());
  Prediction p;
  Evaluator(spec, 0.95).evaluate(X, n, offset, p);
  Compared out;
  const std::size_t eta_col = ref.require_column("eta", "R"), se_col = ref.require_column("se_eta", "R");
  for (Eigen::Index r = 0; r < n; ++r) {
    REQUIRE(valid[static_cast<std::size_t>(r)] == 1);
    const double eta = ref.number(static_cast<std::size_t>(r), eta_col);
    const double se = ref.number(static_cast<std::size_t>(r), se_col);
    out.eta = std::max(out.eta, std::fabs(p.eta[r] - eta) / std::max(1.0, std::fabs(eta)));
    out.se = std::max(out.se, std::fabs(p.se_eta[r] - se) / se);
    ++out.rows;
  }
  return out;
}

// Paths relative to the source tree.
Compared compare_with(const std::string& model, const std::string& predictions) {
  return compare_files(test::source_path(model), test::source_path(predictions));
}

bool tool_available(const std::string& probe) { return std::system((probe + " >/dev/null 2>&1").c_str()) == 0; }

Compared compare_with_r(const std::string& name) {
  return compare_with("tests/reference/mite_basis/" + name + ".toml",
                      "tests/reference/mite_basis/" + name + "_predictions.csv");
}

}  // namespace

TEST_CASE("A glm with poly() and ns() and a spline-by-covariate product predicts as R does", "[spline][reference]") {
  // Source: R 4.2.2 stats::glm + predict(se.fit = TRUE) on vegan's mite data (r-cran-vegan);
  // y ~ poly(WatrCont, 2) + ns(SubsDens, df = 3) + ns(SubsDens, df = 3):WatrCont + Topo.
  const Compared c = compare_with_r("binomial_poly_ns");
  CHECK(c.rows == 12);
  CHECK(c.eta <= 1e-9);  // poly() converted exactly: agreement to rounding, far inside 1e-6
  CHECK(c.se <= 1e-6);
}

TEST_CASE("A two-covariate orthogonal polynomial converts exactly to powers and products", "[spline][reference]") {
  // Source: as above; count ~ poly(WatrCont, SubsDens, degree = 2) + Topo, poisson, raw covariates
  // (the exporter re-centres them on the polynomial's own centre).
  const Compared c = compare_with_r("poisson_poly2d");
  CHECK(c.eta <= 1e-9);
  CHECK(c.se <= 1e-6);
}

TEST_CASE("A glm with bs() of given knots and ns() predicts as R does beyond the boundary knots too",
          "[spline][reference]") {
  // Source: as above; y ~ bs(WatrCont, knots = c(300, 450), degree = 2) + ns(SubsDens, df = 2) + Topo.
  const Compared c = compare_with_r("binomial_bs_raw");
  CHECK(c.eta <= 1e-9);
  CHECK(c.se <= 1e-6);
}

TEST_CASE("A statsmodels GLM with patsy's bs() and a spline-by-covariate product round-trips", "[spline][reference]") {
  // Source: statsmodels 0.13.5 / patsy 0.5.3 (Debian python3-statsmodels, python3-patsy) on the mite
  // training table, tests/reference/export_bs_roundtrip.py; eta = X b and sqrt(x'Vx) from patsy's design.
  const Compared c = compare_with("tests/reference/export_py_bs/model.toml", "tests/reference/export_py_bs/predictions.csv");
  CHECK(c.rows == 9);
  CHECK(c.eta <= 1e-9);
  CHECK(c.se <= 1e-6);
}

TEST_CASE("The R exporter, run now on poly(), ns() and bs() models, writes models that predict like R",
          "[spline][fit]") {
  if (!tool_available("Rscript -e 'library(vegan); library(splines)'")) {
    WARN("SKIPPED: Rscript with vegan (Debian r-cran-vegan) is not installed, so the R exporter itself was not "
         "run; the stored files above still check its output");
    return;
  }
  // Source: R's glm() + predict(se.fit = TRUE), committed by tests/reference/mite_basis_glm.R; the
  // models are written again now by the current scripts/export_habcast_model.R.
  test::TempDir dir("export-r-basis");
  const std::string cmd = "cd '" + std::string(HABCAST_SOURCE_DIR) + "' && Rscript tests/reference/mite_basis_glm.R '" +
                          dir.path().string() + "' >/dev/null 2>&1";
  REQUIRE(std::system(cmd.c_str()) == 0);
  for (const std::string name : {"binomial_poly_ns", "poisson_poly2d", "binomial_bs_raw"}) {
    INFO(name);
    const Compared c =
        compare_files(dir.file(name + ".toml"), test::source_path("tests/reference/mite_basis/" + name + "_predictions.csv"));
    CHECK(c.rows > 0);
    CHECK(c.eta <= 1e-9);
    CHECK(c.se <= 1e-6);
  }
}

TEST_CASE("The Python exporter, run now on a patsy bs() model, writes a model that predicts like statsmodels",
          "[spline][fit]") {
  if (!tool_available("/usr/bin/python3 -c 'import statsmodels, patsy'")) {
    WARN("SKIPPED: /usr/bin/python3 with statsmodels is not installed (Debian python3-statsmodels), so the Python "
         "exporter itself was not run; the stored round trip above still checks its output");
    return;
  }
  // Source: statsmodels' eta and se, committed by tests/reference/export_bs_roundtrip.py; the model is
  // written again now by the current scripts/export_habcast_model.py.
  test::TempDir dir("export-py-bs");
  const std::string cmd = "cd '" + std::string(HABCAST_SOURCE_DIR) +
                          "' && /usr/bin/python3 tests/reference/export_bs_roundtrip.py '" + dir.path().string() +
                          "' >/dev/null 2>&1";
  REQUIRE(std::system(cmd.c_str()) == 0);
  const Compared c = compare_files(dir.file("model.toml"),
                                   test::source_path("tests/reference/export_py_bs/predictions.csv"));
  CHECK(c.rows == 9);
  CHECK(c.eta <= 1e-9);
  CHECK(c.se <= 1e-6);
}

TEST_CASE("poly() converted to powers gives the estimates and covariance of R's own raw-power fit",
          "[spline][reference]") {
  // Source: R 4.2.2 glm(count ~ u + I(u^2) + v + I(u * v) + I(v^2) + Topo, poisson) on vegan's mite
  // data, u and v re-centred as the exporter re-centres them (tests/reference/mite_basis_glm.R): the
  // same model as poly(WatrCont, SubsDens, degree = 2), so b' = M'b and V' = M'VM must equal its
  // estimates and vcov() up to R's convergence tolerance.
  const ModelSpec spec = read_model_file(test::source_path("tests/reference/mite_basis/poisson_poly2d.toml"));
  const CsvTable ref = read_csv_table(test::source_path("tests/reference/mite_basis/poisson_poly2d_raw_refit.csv"));
  REQUIRE(ref.rows.size() == spec.terms.size());
  std::vector<Eigen::Index> at;
  for (std::size_t r = 0; r < ref.rows.size(); ++r) {
    const auto it = std::find(spec.terms.begin(), spec.terms.end(), ref.rows[r][0]);
    REQUIRE(it != spec.terms.end());
    at.push_back(it - spec.terms.begin());
  }
  double worst_b = 0.0, worst_v = 0.0;
  const double vmax = spec.covariance->cwiseAbs().maxCoeff();
  for (std::size_t r = 0; r < ref.rows.size(); ++r) {
    const double b = ref.number(r, 1);
    worst_b = std::max(worst_b, std::fabs(spec.estimates[static_cast<std::size_t>(at[r])] - b) / std::fabs(b));
    for (std::size_t c = 0; c < ref.rows.size(); ++c)
      worst_v = std::max(worst_v, std::fabs((*spec.covariance)(at[r], at[c]) - ref.number(r, 2 + c)) / vmax);
  }
  CHECK(worst_b <= 1e-7);
  CHECK(worst_v <= 1e-7);
  WARN("poly() conversion vs R's raw refit: estimates " << worst_b << ", covariance " << worst_v);
}

TEST_CASE("describe sees the quadratic niche of a poly() model", "[spline][describe]") {
  const ModelSpec spec = read_model_file(test::source_path("tests/reference/mite_basis/poisson_poly2d.toml"));
  const TermPlan plan(spec);
  const TrainingSamples samples = read_training_samples(spec);
  const NicheDescription d = describe_niche(spec, plan, &samples, {});
  CHECK_FALSE(d.beyond_second_order);
  REQUIRE(d.form.has_value());
  CHECK(d.form->covariates == std::vector<int>{0, 1});
  REQUIRE(d.analysis.has_value());
  CHECK(d.pair.has_value());
  CHECK_FALSE(d.numerical.has_value());
}
