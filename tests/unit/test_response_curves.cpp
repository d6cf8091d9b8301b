// Response curves and the numerical optimum of `describe` on models with splines and orthogonal
// polynomials. Values and bands against R's predict() on a newdata grid
// (tests/reference/mite_basis_glm.R, vegan's mite data); the picture and the JSON through the CLI.
#include <catch2/catch.hpp>
#include <nlohmann/json.hpp>

#include <cmath>
#include <fstream>
#include <sstream>

#include "core/base/csv_table.hpp"
#include "core/domain/training_samples.hpp"
#include "core/model/model_file.hpp"
#include "core/model/model_values.hpp"
#include "core/model/term_plan.hpp"
#include "core/niche/niche_description.hpp"
#include "core/niche/response_curves.hpp"
#include "figure_file_check.hpp"
#include "render/figure_file.hpp"
#include "render/response_curves_figure.hpp"
#include "test_support.hpp"

namespace habcast {
namespace {

std::string basis_model_path(const std::string& name) { return test::source_path("tests/reference/mite_basis/" + name + ".toml"); }

double relative_difference(double a, double b) { return std::fabs(a - b) / std::max(std::fabs(b), 1e-300); }

std::string file_bytes(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  std::ostringstream s;
  s << in.rdbuf();
  return s.str();
}

TEST_CASE("Response curves and their bands equal R's predict() on a newdata grid", "[curves][reference]") {
  // Source: R 4.2.2 predict(fit, newdata, type = "link", se.fit = TRUE) for three glm fits on vegan's
  // mite data (poly, ns, bs, a spline times a covariate); band = linkinv(eta -+ qnorm(0.975) se).
  const CsvTable ref = read_csv_table(test::source_path("tests/reference/mite_basis/curves.csv"));
  std::size_t checked = 0;
  double worst = 0.0;
  for (const std::string name : {"binomial_poly_ns", "poisson_poly2d", "binomial_bs_raw"}) {
    const ModelSpec spec = read_model_file(basis_model_path(name));
    const TermPlan plan(spec);
    const TrainingSamples samples = read_training_samples(spec);
    const ReferencePoint reference = default_reference(spec, &samples);  // as describe holds them
    for (std::size_t r = 0; r < ref.rows.size(); ++r) {
      if (ref.rows[r][0] != name) continue;
      const std::string covariate = ref.rows[r][1];
      const int c = spec.covariate_index(covariate);
      REQUIRE(c >= 0);
      CurvePoint p;
      if (spec.covariates[static_cast<std::size_t>(c)].categorical) {
        const auto levels = predict_levels(spec, plan, reference, c, 0.95);
        p = levels[static_cast<std::size_t>(ref.number(r, 4)) - 1];
      } else {
        p = predict_along(spec, plan, reference, c, {ref.number(r, ref.require_column(covariate, "x"))}, 0.95)[0];
      }
      REQUIRE(p.valid);
      INFO(name << " " << covariate << " row " << r);
      const double errs[] = {relative_difference(p.eta, ref.number(r, 5)), relative_difference(p.se_eta, ref.number(r, 6)),
                             relative_difference(p.mu, ref.number(r, 7)), relative_difference(p.lower, ref.number(r, 8)),
                             relative_difference(p.upper, ref.number(r, 9))};
      for (double e : errs) {
        CHECK(e <= 1e-6);
        worst = std::max(worst, e);
      }
      ++checked;
    }
  }
  CHECK(checked == 3 * 20);
  WARN("worst relative difference from R along the curves: " << worst);
}

TEST_CASE("describe finds the optimum of a spline model numerically inside the training hull", "[curves]") {
  const ModelSpec spec = read_model_file(basis_model_path("binomial_poly_ns"));
  const TermPlan plan(spec);
  const TrainingSamples samples = read_training_samples(spec);
  DescribeSettings settings;
  settings.curves = true;
  const NicheDescription d = describe_niche(spec, plan, &samples, settings);
  CHECK(d.beyond_second_order);
  REQUIRE(d.numerical.has_value());
  CHECK_THAT(d.numerical->method, Catch::Contains("compass search"));
  CHECK(d.numerical->covariates.size() == 2);
  // No training point has a larger linear predictor than the optimum found among and between them.
  const ReferencePoint reference = default_reference(spec, &samples);
  for (Eigen::Index i = 0; i < samples.raw.rows(); ++i) {
    ModelValues v(1, static_cast<Eigen::Index>(spec.covariates.size()));
    v.row(0) = reference.values.transpose().array();
    for (int c : d.numerical->covariates) v(0, c) = model_value(spec.covariates[static_cast<std::size_t>(c)], samples.raw(i, c));
    Eigen::MatrixXd X;
    std::uint8_t ok = 1;
    plan.fill(v, 1, X, &ok);
    const double eta = (X.row(0) * Eigen::Map<const Eigen::VectorXd>(spec.estimates.data(), X.cols()))(0);
    CHECK(eta <= d.numerical->eta + 1e-12);
  }
  // WatrCont enters as a (converted) quadratic and in products with the spline: the canonical
  // analysis covers that part only, and says so.
  CHECK_THAT(d.canonical_note, Catch::Contains("second-order part"));
  REQUIRE(d.curves.size() == 3);
  CHECK(d.curves[2].categorical);
  CHECK(d.curves[1].spline_boundaries.size() == 1);
  CHECK(d.curves[0].rug.size() == 70);
}

TEST_CASE("describe --curves writes the curves as JSON and as a picture", "[curves]") {
  test::TempDir dir("curves");
  const std::string json = dir.file("curves.json"), svg = dir.file("curves.svg"), pdf = dir.file("curves.pdf");
  std::string out, err;
  REQUIRE(test::run_cli({"describe", basis_model_path("binomial_poly_ns"), "--curves", json, "--curves", svg, "--curves", pdf,
                         "--curve-points", "41"},
                        &out, &err) == 0);
  CHECK_THAT(out, Catch::Contains("numerical optimum inside the training hull"));
  CHECK_THAT(out, Catch::Contains("extrapolation by construction"));
  const auto j = nlohmann::json::parse(file_bytes(json));
  REQUIRE(j["curves"].size() == 3);
  CHECK(j["curves"][0]["covariate"] == "WatrCont");
  CHECK(j["curves"][0]["points"].size() == 41);
  CHECK(j["curves"][0]["points"][0]["inside_training"] == false);  // the grid reaches 15 % beyond the data
  CHECK(j["curves"][1]["spline_boundary_knots"].size() == 1);
  CHECK(j["curves"][2]["points"][1]["level"] == "Hummock");
  CHECK(test::parses_as_svg(file_bytes(svg)));
  CHECK(test::looks_like_pdf(file_bytes(pdf)));

  const ModelSpec spec = read_model_file(basis_model_path("binomial_poly_ns"));
  const TermPlan plan(spec);
  const TrainingSamples samples = read_training_samples(spec);
  DescribeSettings settings;
  settings.curves = true;
  const Figure fig = response_curves_figure(spec, describe_niche(spec, plan, &samples, settings), 0.95);
  CHECK(fig.marks_with_role("confidence-band").size() == 2);
  CHECK(fig.marks_with_role("response-extrapolated").size() == 4);  // both ends of both continuous curves
  CHECK(fig.marks_with_role("training-range").size() == 2);
  CHECK(fig.marks_with_role("rug").size() == 140);
  CHECK(fig.marks_with_role("level").size() == 1);
  CHECK(fig.marks_with_role("level-interval").size() == 2);

  CHECK(test::run_cli({"describe", basis_model_path("binomial_poly_ns"), "--curves", dir.file("curves.txt")}, &out, &err) == 2);
}

}  // namespace
}  // namespace habcast

namespace habcast {
namespace {

TEST_CASE("The numerical optimum reaches the best of R's predictions on a grid inside the training hull",
          "[curves][reference]") {
  // Source: R 4.2.2 predict(type = "link") on a 301 x 301 grid of (WatrCont, SubsDens) clipped to the
  // convex hull of the 70 mite cores (grDevices::chull), Topo = Blanket (tests/reference/mite_basis_glm.R).
  const CsvTable ref = read_csv_table(test::source_path("tests/reference/mite_basis/optimum_grid.csv"));
  REQUIRE(ref.rows.size() == 2);
  for (std::size_t r = 0; r < ref.rows.size(); ++r) {
    const ModelSpec spec = read_model_file(basis_model_path(ref.rows[r][0]));
    const TermPlan plan(spec);
    const TrainingSamples samples = read_training_samples(spec);
    const NicheDescription d = describe_niche(spec, plan, &samples, {});
    REQUIRE(d.numerical.has_value());
    INFO(ref.rows[r][0]);
    CHECK(d.numerical->eta >= ref.number(r, 1) - 1e-12);  // at least as high as the best grid point
    // ... and next to it: within two grid steps in each covariate (range / 300).
    CHECK(std::fabs(d.numerical->raw[0] - ref.number(r, 2)) <= 2.0 * (826.96 - 134.13) / 300.0);
    CHECK(std::fabs(d.numerical->raw[1] - ref.number(r, 3)) <= 2.0 * (80.59 - 21.17) / 300.0);
    CHECK_FALSE(d.numerical->at_hull_edge);
  }
}

}  // namespace
}  // namespace habcast
