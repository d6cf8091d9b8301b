// Models fitted elsewhere reach habcast through scripts/export_habcast_model.R (R's glm()) and
// scripts/export_habcast_model.py (statsmodels): habcast's predictions from the exported files
// must equal the fitting package's own predict() to 1e-6.
#include <catch2/catch.hpp>
#include <cstdlib>
#include <filesystem>

#include "core/base/csv_table.hpp"
#include "core/domain/training_samples.hpp"
#include "core/model/design_matrix.hpp"
#include "core/model/evaluator.hpp"
#include "core/model/model_file.hpp"
#include "test_support.hpp"

using namespace habcast;

namespace {

/// Compares habcast's eta, se(eta) and mu with the package's, for the rows of predictions.csv.
void require_predictions_match(const std::string& model_path, const std::string& predictions_path) {
  const ModelSpec spec = read_model_file(model_path);
  CHECK(read_training_samples(spec).raw.rows() > 0);  // the exported samples table reads too
  const CsvTable t = read_csv_table(predictions_path);
  const auto n = static_cast<Eigen::Index>(t.rows.size());
  Eigen::ArrayXXd raw(n, static_cast<Eigen::Index>(spec.covariates.size()));
  for (std::size_t c = 0; c < spec.covariates.size(); ++c) {
    const std::size_t col = t.require_column(spec.covariates[c].name, "covariate");
    for (std::size_t r = 0; r < t.rows.size(); ++r) raw(static_cast<Eigen::Index>(r), static_cast<Eigen::Index>(c)) = t.number(r, col);
  }
  const Design d = build_design(spec, raw);
  REQUIRE(std::all_of(d.usable.begin(), d.usable.end(), [](std::uint8_t u) { return u == 1; }));
  const Evaluator evaluator(spec, 0.95);
  Prediction p;
  Eigen::VectorXd offset = d.offset.array() - spec.offset_constant;  // the evaluator adds the constant itself
  evaluator.evaluate(d.X, n, offset, p);
  const std::size_t eta = t.require_column("eta", "reference"), se = t.require_column("se_eta", "reference"),
                    mu = t.require_column("mu", "reference");
  for (std::size_t r = 0; r < t.rows.size(); ++r) {
    const auto i = static_cast<Eigen::Index>(r);
    INFO(predictions_path << " row " << r + 1);
    CHECK(p.eta[i] == Approx(t.number(r, eta)).epsilon(1e-6).margin(1e-12));
    CHECK(p.se_eta[i] == Approx(t.number(r, se)).epsilon(1e-6));
    CHECK(p.mu[i] == Approx(t.number(r, mu)).epsilon(1e-6).margin(1e-14));
  }
}

bool tool_available(const std::string& probe) { return std::system((probe + " >/dev/null 2>&1").c_str()) == 0; }

}  // namespace

TEST_CASE("A glm() exported by the R exporter predicts like R's predict() (MASS birthwt)", "[fit]") {
  // Source: R 4.2.2 predict.glm, written by tests/reference/export_roundtrip.R.
  require_predictions_match(test::source_path("tests/reference/export_r/model.toml"),
                            test::source_path("tests/reference/export_r/predictions.csv"));
}

TEST_CASE("A statsmodels GLM exported by the Python exporter predicts like statsmodels (Spector & Mazzeo data)", "[fit]") {
  // Source: statsmodels 0.13.5 GLM, written by tests/reference/export_roundtrip.py.
  require_predictions_match(test::source_path("tests/reference/export_py/model.toml"),
                            test::source_path("tests/reference/export_py/predictions.csv"));
}

TEST_CASE("The R exporter, run now, writes a model that predicts like R", "[fit]") {
  if (!tool_available("Rscript -e 'library(MASS)'")) {
    WARN("SKIPPED: Rscript with MASS is not installed (scripts/install-deps.sh --with-reference-tools), so the R "
         "exporter itself was not run; the stored round trip above still checks its output");
    return;
  }
  test::TempDir dir("export-r");
  const std::string cmd = "cd '" + std::string(HABCAST_SOURCE_DIR) + "' && Rscript tests/reference/export_roundtrip.R '" +
                          dir.path().string() + "' >/dev/null 2>&1";
  REQUIRE(std::system(cmd.c_str()) == 0);
  require_predictions_match(dir.file("model.toml"), test::source_path("tests/reference/export_r/predictions.csv"));
}

TEST_CASE("The Python exporter, run now, writes a model that predicts like statsmodels", "[fit]") {
  if (!tool_available("/usr/bin/python3 -c 'import statsmodels, patsy'")) {
    WARN("SKIPPED: /usr/bin/python3 with statsmodels is not installed (Debian python3-statsmodels), so the Python "
         "exporter itself was not run; the stored round trip above still checks its output");
    return;
  }
  test::TempDir dir("export-py");
  const std::string cmd = "cd '" + std::string(HABCAST_SOURCE_DIR) + "' && /usr/bin/python3 tests/reference/export_roundtrip.py '" +
                          dir.path().string() + "' >/dev/null 2>&1";
  REQUIRE(std::system(cmd.c_str()) == 0);
  require_predictions_match(dir.file("model.toml"), test::source_path("tests/reference/export_py/predictions.csv"));
}

TEST_CASE("Models written as practitioners write them export and predict like R (airquality, MASS Insurance)", "[fit]") {
  // Source: R 4.2.2 predict.glm, written by tests/reference/export_practice.R.
  const std::string base = "tests/reference/export_practice/";
  for (const char* c : {"airquality", "insurance_formula", "insurance_argument"}) {
    INFO(c);
    require_predictions_match(test::source_path(base + c + "/model.toml"), test::source_path(base + c + "/predictions.csv"));
  }
  // airquality: Solar.R renamed, and the rename recorded; log(Wind) became a transform; scale(Temp)
  // became Temp's center and scale (mean and sd of the 111 complete rows), I(Month - 7) Month's
  // center; no deparse padding.
  const ModelSpec aq = read_model_file(test::source_path(base + "airquality/model.toml"));
  CHECK(aq.covariates[0].name == "Solar_R");
  CHECK_THAT(aq.description, Catch::Contains("covariates renamed: Solar.R -> Solar_R"));
  CHECK(aq.description.find("  ") == std::string::npos);
  CHECK(aq.covariates[1].transform == Transform::log);
  CHECK(aq.terms == std::vector<std::string>{"(Intercept)", "Solar_R", "Wind", "Temp", "Month", "Month^2"});
  CHECK(aq.covariates[2].center == Approx(77.792792792792795).epsilon(1e-15));  // mean(na.omit(airquality)$Temp)
  CHECK(aq.covariates[3].center == 7.0);                                         // I(Month - 7)
  // Insurance: the offsets reached [coefficients] offset, from the formula and from glm's argument.
  for (const char* c : {"insurance_formula", "insurance_argument"}) {
    const ModelSpec ins = read_model_file(test::source_path(base + c + "/model.toml"));
    REQUIRE(ins.offset_term);
    CHECK(*ins.offset_term == "log(Holders)");
  }
}

TEST_CASE("The R exporter, run now on practitioners' models, writes models that predict like R", "[fit]") {
  if (!tool_available("Rscript -e 'library(MASS)'")) {
    WARN("SKIPPED: Rscript with MASS is not installed, so the R exporter itself was not run");
    return;
  }
  test::TempDir dir("export-practice");
  const std::string cmd = "cd '" + std::string(HABCAST_SOURCE_DIR) + "' && Rscript tests/reference/export_practice.R '" +
                          dir.path().string() + "' >/dev/null 2>&1";
  REQUIRE(std::system(cmd.c_str()) == 0);
  for (const char* c : {"airquality", "insurance_formula", "insurance_argument"})
    require_predictions_match(dir.file(std::string(c) + "/model.toml"),
                              test::source_path(std::string("tests/reference/export_practice/") + c + "/predictions.csv"));
}

TEST_CASE("The R exporter refuses level codes that would make a level name ambiguous", "[fit][levels]") {
  if (!tool_available("Rscript -e 'library(MASS)'")) {
    WARN("SKIPPED: Rscript with MASS is not installed, so the R exporter itself was not run");
    return;
  }
  // factor(smoke) has levels "0", "1"; codes 1, 2 would make "1" both the name of one level and
  // the code of the other (MASS birthwt, Debian r-cran-mass).
  test::TempDir dir("export-collide");
  const std::string script = dir.file("collide.R");
  test::write_text(script,
                   "suppressPackageStartupMessages(library(MASS)); source('scripts/export_habcast_model.R')\n"
                   "d <- data.frame(low = birthwt$low, lwt = birthwt$lwt, smoke = factor(birthwt$smoke))\n"
                   "fit <- glm(low ~ lwt + smoke, binomial, data = d)\n"
                   "export_habcast_model(fit, '" + dir.file("m.toml") + "', training_data = d,\n"
                   "                     categorical = list(smoke = c('0' = 1, '1' = 2)))\n");
  const std::string cmd = "cd '" + std::string(HABCAST_SOURCE_DIR) + "' && Rscript '" + script + "' 2>'" +
                          dir.file("err.txt") + "' >/dev/null";
  CHECK(std::system(cmd.c_str()) != 0);
  const std::string err = test::read_text(dir.file("err.txt"));
  CHECK_THAT(err, Catch::Contains("the level named \"1\" (code 2) and the level with code 1 (named \"0\")"));
}

TEST_CASE("statsmodels models with np.log terms, a quoted dotted name and an exposure export and predict like statsmodels",
          "[fit]") {
  // Source: statsmodels 0.13.5 GLM, written by tests/reference/export_practice.py (cpunish data
  // shipped with Debian python3-statsmodels; MASS::Insurance via export_practice.R).
  const std::string base = "tests/reference/export_practice/";
  for (const char* c : {"py_cpunish", "py_cpunish_dotted", "py_cpunish_std", "py_insurance"}) {
    INFO(c);
    require_predictions_match(test::source_path(base + c + "/model.toml"), test::source_path(base + c + "/predictions.csv"));
  }
  const ModelSpec cp = read_model_file(test::source_path(base + "py_cpunish/model.toml"));
  CHECK(cp.covariates[3].name == "VC100k96");
  CHECK(cp.covariates[3].transform == Transform::log);
  // Q("PER.BLACK") in the formula: renamed to a valid habcast name, and the rename recorded.
  const ModelSpec dotted = read_model_file(test::source_path(base + "py_cpunish_dotted/model.toml"));
  CHECK(dotted.covariates[2].name == "PER_BLACK");
  CHECK_THAT(dotted.description, Catch::Contains("covariates renamed: PER.BLACK -> PER_BLACK"));
  const ModelSpec ins = read_model_file(test::source_path(base + "py_insurance/model.toml"));
  REQUIRE(ins.offset_term);
  CHECK(*ins.offset_term == "log(Holders)");  // found from exposure=Holders
  // patsy's standardize(): mean and population standard deviation (ddof = 0) of the 17 states.
  const ModelSpec st = read_model_file(test::source_path(base + "py_cpunish_std/model.toml"));
  CHECK(st.terms == std::vector<std::string>{"(Intercept)", "INCOME", "PERPOVERTY", "PERPOVERTY^2", "VC100k96"});
  CHECK(st.covariates[1].center == Approx(13.494117647058824).epsilon(1e-12));
  CHECK(st.covariates[1].scale == Approx(3.3535706323498196).epsilon(1e-12));
}

TEST_CASE("The Python exporter, run now on practitioners' models, writes models that predict like statsmodels", "[fit]") {
  if (!tool_available("/usr/bin/python3 -c 'import statsmodels, patsy, pandas'")) {
    WARN("SKIPPED: /usr/bin/python3 with statsmodels is not installed, so the Python exporter itself was not run");
    return;
  }
  test::TempDir dir("export-practice-py");
  std::filesystem::copy_file(test::source_path("tests/reference/export_practice/insurance.csv"), dir.file("insurance.csv"));
  const std::string cmd = "cd '" + std::string(HABCAST_SOURCE_DIR) + "' && /usr/bin/python3 tests/reference/export_practice.py '" +
                          dir.path().string() + "' >/dev/null 2>&1";
  REQUIRE(std::system(cmd.c_str()) == 0);
  for (const char* c : {"py_cpunish", "py_cpunish_dotted", "py_cpunish_std", "py_insurance"})
    require_predictions_match(dir.file(std::string(c) + "/model.toml"),
                              test::source_path(std::string("tests/reference/export_practice/") + c + "/predictions.csv"));
}
