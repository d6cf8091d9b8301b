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
