// Canonical analysis of describe: analytic surfaces with known answers, a textbook worked
// example, the special shapes, and the delta method checked against finite differences and R.
#include <catch2/catch.hpp>
#include <Eigen/LU>
#include <cmath>

#include "core/domain/training_samples.hpp"
#include "core/model/link.hpp"
#include "core/model/model_file.hpp"
#include "core/model/model_values.hpp"
#include "core/model/term_plan.hpp"
#include "core/niche/canonical_analysis.hpp"
#include "core/niche/niche_description.hpp"
#include "core/niche/quadratic_form.hpp"
#include "describe_test_support.hpp"

namespace habcast {
namespace {

using test::model_with_terms;

const double kPi = std::acos(-1.0);

/// A surface eta = eta0 + (x - c)' B (x - c) in (u, v) whose response falls to `fraction` of its
/// peak at distance L1 along the axis at `angle` from u and L2 along the perpendicular axis, built
/// from those numbers alone. Returns its model (log link unless `family` says otherwise).
struct KnownSurface {
  double cu, cv, eta0, angle, L1, L2, fraction;
  std::string family = "poisson";

  [[nodiscard]] ModelSpec model() const {
    const Link link = family == "binomial" ? Link::logit : Link::log;
    const double mu0 = link_inverse(link, eta0);
    const double drop = link_function(link, fraction * mu0) - eta0;  // < 0
    const double l1 = drop / (L1 * L1), l2 = drop / (L2 * L2);
    const double c = std::cos(angle), s = std::sin(angle);
    // B = R diag(l1, l2) R', R = [[c, -s], [s, c]].
    const double B11 = l1 * c * c + l2 * s * s;
    const double B22 = l1 * s * s + l2 * c * c;
    const double B12 = (l1 - l2) * c * s;
    const double b1 = -2.0 * (B11 * cu + B12 * cv);
    const double b2 = -2.0 * (B12 * cu + B22 * cv);
    const double constant = eta0 + B11 * cu * cu + 2.0 * B12 * cu * cv + B22 * cv * cv;
    return model_with_terms({"(Intercept)", "u", "u^2", "v", "v^2", "u:v"}, {constant, b1, B11, b2, B22, 2.0 * B12},
                            family);
  }
};

CanonicalAnalysis analyse(const ModelSpec& spec, std::vector<int> focus = {0, 1}, CanonicalOptions options = {}) {
  const TermPlan plan(spec);
  const QuadraticForm form = extract_quadratic_form(spec, plan, default_reference(spec, nullptr), focus);
  return analyse_surface(form, spec.link, spec.covariance, options);
}

TEST_CASE("A surface built from a known centre, axis lengths and rotation gives them back", "[describe]") {
  // Tolerance 1e-9: the construction and the analysis differ only by rounding.
  const KnownSurface known = GENERATE(KnownSurface{0.7, -1.2, 1.3, 0.52, 2.0, 0.8, 0.5},
                                      KnownSurface{-0.4, 0.3, -0.2, -1.1, 1.5, 0.6, 0.25},
                                      KnownSurface{1.5, 2.0, 0.4, 0.3, 3.0, 1.0, 0.5, "binomial"},
                                      KnownSurface{0.0, 0.0, 2.0, 1.4, 1.2, 0.9, 0.8, "binomial"});
  const ModelSpec spec = known.model();
  CanonicalOptions options;
  options.fraction = known.fraction;
  const CanonicalAnalysis a = analyse(spec, {0, 1}, options);

  CHECK(a.shape == SurfaceShape::peak);
  CHECK(a.stationary[0] == Approx(known.cu).margin(1e-9));
  CHECK(a.stationary[1] == Approx(known.cv).margin(1e-9));
  CHECK(a.eta == Approx(known.eta0).margin(1e-9));
  REQUIRE(a.axes[0].half_width.has_value());
  REQUIRE(a.axes[1].half_width.has_value());
  CHECK(*a.axes[0].half_width == Approx(known.L1).margin(1e-9));
  CHECK(*a.axes[1].half_width == Approx(known.L2).margin(1e-9));
  REQUIRE(a.rotations.size() == 1);
  // The long axis (larger, less negative eigenvalue) lies at the construction angle, folded into (-pi/2, pi/2].
  double expected = known.angle;
  if (expected > kPi / 2) expected -= kPi;
  CHECK(a.rotations[0].major_axis == Approx(expected).margin(1e-9));
  // The tilt is the same angle measured from the nearest covariate axis.
  double tilt = expected;
  if (tilt > kPi / 4) tilt -= kPi / 2;
  if (tilt < -kPi / 4) tilt += kPi / 2;
  CHECK(a.rotations[0].tilt == Approx(tilt).margin(1e-9));
  // The raw-unit optimum is centre + scale * model value (no transform here).
  CHECK(raw_value(spec.covariates[0], a.stationary[0]) == Approx(2.5 + 1.5 * known.cu).margin(1e-9));
}

TEST_CASE("A rotation in one pair of three covariates leaves the other pairs untilted", "[describe]") {
  // u, v rotated by 0.4 rad; w on its own axis with eigenvalue -2.
  const double c = std::cos(0.4), s = std::sin(0.4), l1 = -0.5, l2 = -1.5;
  const double B11 = l1 * c * c + l2 * s * s, B22 = l1 * s * s + l2 * c * c, B12 = (l1 - l2) * c * s;
  const ModelSpec spec = model_with_terms({"(Intercept)", "u", "v", "w", "u^2", "v^2", "w^2", "u:v"},
                                          {0.1, 0.2, -0.3, 0.4, B11, B22, -2.0, 2.0 * B12}, "poisson",
                                          "[covariates.w]\ncenter = 0\nscale = 1\n");
  const CanonicalAnalysis a = analyse(spec, {0, 1, 2});
  REQUIRE(a.rotations.size() == 3);
  CHECK(a.rotations[0].major_axis == Approx(0.4).margin(1e-12));  // (u, v)
  CHECK(a.rotations[1].tilt == 0.0);                              // (u, w): no u:w term
  CHECK(a.rotations[2].tilt == 0.0);                              // (v, w)
  CHECK(a.axes[0].eigenvalue == Approx(l1).margin(1e-12));
  CHECK(a.axes[1].eigenvalue == Approx(l2).margin(1e-12));
  CHECK(a.axes[2].eigenvalue == Approx(-2.0).margin(1e-12));
  CHECK(a.axes[2].direction[2] == Approx(1.0).margin(1e-12));
}

TEST_CASE("Without an interaction term the tilt is exactly zero", "[describe]") {
  const ModelSpec spec = model_with_terms({"(Intercept)", "u", "u^2", "v", "v^2"}, {0.5, 0.3, -0.8, -0.2, -0.4});
  const CanonicalAnalysis a = analyse(spec);
  CHECK(a.shape == SurfaceShape::peak);
  CHECK(a.rotations[0].tilt == 0.0);
  // q_uu = -0.8 < q_vv = -0.4: the long axis of the peak is the v axis.
  CHECK(a.rotations[0].major_axis == Approx(kPi / 2).margin(1e-15));
  CHECK(a.stationary[0] == Approx(0.3 / 1.6).margin(1e-15));
  CHECK(a.stationary[1] == Approx(-0.2 / 0.8).margin(1e-15));
}

TEST_CASE("Eigenvalues of both signs make a saddle, with no niche breadth", "[describe]") {
  // B = [[0.5, 0.25], [0.25, -1]]: determinant < 0, so its eigenvalues have both signs.
  const ModelSpec spec = model_with_terms({"(Intercept)", "u", "u^2", "v", "v^2", "u:v"}, {0.0, 1.0, 0.5, 1.0, -1.0, 0.5});
  const CanonicalAnalysis a = analyse(spec);
  CHECK(a.shape == SurfaceShape::saddle);
  CHECK(a.axes[0].eigenvalue > 0.0);
  CHECK(a.axes[1].eigenvalue < 0.0);
  CHECK_FALSE(a.axes[0].half_width.has_value());
  // The gradient vanishes at the stationary point: b + 2 B x_s = 0.
  CHECK(1.0 + 2.0 * (0.5 * a.stationary[0] + 0.25 * a.stationary[1]) == Approx(0.0).margin(1e-12));
  CHECK(1.0 + 2.0 * (0.25 * a.stationary[0] - 1.0 * a.stationary[1]) == Approx(0.0).margin(1e-12));
}

TEST_CASE("A zero eigenvalue is a ridge: stationary when the gradient is flat along it, rising otherwise", "[describe]") {
  // B = -1 * d d' with d = (cos 0.6, sin 0.6): flat along n = (-sin 0.6, cos 0.6).
  const double c = std::cos(0.6), s = std::sin(0.6);
  const double B11 = -c * c, B22 = -s * s, B12 = -c * s;
  SECTION("gradient along the curved axis only: a line of optima") {
    const ModelSpec spec = model_with_terms({"(Intercept)", "u", "u^2", "v", "v^2", "u:v"},
                                            {0.2, 0.8 * c, B11, 0.8 * s, B22, 2.0 * B12});
    const CanonicalAnalysis a = analyse(spec);
    CHECK(a.shape == SurfaceShape::ridge);
    CHECK_FALSE(a.rising_ridge);
    CHECK(a.axes[0].near_zero);  // eigenvalues 0 and -1, largest first
    // The ridge point nearest the origin: 0.4 d (where -1 * t^2 + 0.8 t peaks).
    CHECK(a.stationary[0] == Approx(0.4 * c).margin(1e-12));
    CHECK(a.stationary[1] == Approx(0.4 * s).margin(1e-12));
  }
  SECTION("gradient along the flat axis: eta rises without bound") {
    const ModelSpec spec = model_with_terms({"(Intercept)", "u", "u^2", "v", "v^2", "u:v"},
                                            {0.2, 0.8 * c - 0.3 * s, B11, 0.8 * s + 0.3 * c, B22, 2.0 * B12});
    const CanonicalAnalysis a = analyse(spec);
    CHECK(a.shape == SurfaceShape::ridge);
    CHECK(a.rising_ridge);
  }
}

TEST_CASE("The textbook central composite design gives the book's and R's canonical analysis", "[describe]") {
  // Montgomery, Design and Analysis of Experiments, 8th ed. (Wiley 2013), Example 11.2: yield
  // against reaction time and temperature. The runs are recalled from memory and refitted with R's
  // lm() by tests/reference/describe_canonical.R, which also computes the reference numbers with
  // solve() and eigen() (tests/reference/describe/textbook.csv).
  const ModelSpec spec = read_model_file(test::source_path("tests/reference/describe/textbook-model.toml"));
  const auto r = test::read_reference(test::source_path("tests/reference/describe/textbook.csv"));
  const CanonicalAnalysis a = analyse(spec);

  // The book's printed values (from memory): x_s = (0.389, 0.306), i.e. 86.95 min and 176.53 degF,
  // predicted yield 80.21, eigenvalues -0.9634 and -1.4141. Printed to 3-4 decimals, so the
  // tolerance is half a unit of the last printed digit (or, for the eigenvalues, 2e-4: the book
  // works from its rounded coefficients).
  CHECK(a.shape == SurfaceShape::peak);
  CHECK(a.stationary[0] == Approx(0.389).margin(5e-4));
  CHECK(a.stationary[1] == Approx(0.306).margin(5e-4));
  CHECK(raw_value(spec.covariates[0], a.stationary[0]) == Approx(86.95).margin(5e-3));
  CHECK(raw_value(spec.covariates[1], a.stationary[1]) == Approx(176.53).margin(5e-3));
  CHECK(a.eta == Approx(80.21).margin(5e-3));
  CHECK(a.axes[0].eigenvalue == Approx(-0.9634).margin(2e-4));
  CHECK(a.axes[1].eigenvalue == Approx(-1.4141).margin(2e-4));

  // R, same coefficients: agreement to rounding (1e-10).
  CHECK(a.stationary[0] == Approx(r.at("xs_time")).margin(1e-10));
  CHECK(a.stationary[1] == Approx(r.at("xs_temperature")).margin(1e-10));
  CHECK(raw_value(spec.covariates[1], a.stationary[1]) == Approx(r.at("raw_temperature")).margin(1e-9));
  CHECK(a.eta == Approx(r.at("eta_s")).margin(1e-10));
  CHECK(a.axes[0].eigenvalue == Approx(r.at("lambda1")).margin(1e-10));
  CHECK(a.axes[1].eigenvalue == Approx(r.at("lambda2")).margin(1e-10));
  CHECK(a.rotations[0].major_axis == Approx(r.at("major_axis")).margin(1e-10));

  // Delta-method errors against R's central differences (relative 1e-6: finite-difference error).
  REQUIRE(a.stationary_covariance.has_value());
  CHECK(std::sqrt((*a.stationary_covariance)(0, 0)) == Approx(r.at("se_xs_time")).epsilon(1e-6));
  CHECK(std::sqrt((*a.stationary_covariance)(1, 1)) == Approx(r.at("se_xs_temperature")).epsilon(1e-6));
  CHECK(*a.axes[0].eigenvalue_se == Approx(r.at("se_lambda1")).epsilon(1e-6));
  CHECK(*a.axes[1].eigenvalue_se == Approx(r.at("se_lambda2")).epsilon(1e-6));
  CHECK(*a.rotations[0].se == Approx(r.at("se_major_axis")).epsilon(1e-6));
}

/// Everything the delta method differentiates, as one vector, for the finite-difference check.
Eigen::VectorXd derived_quantities(const ModelSpec& spec) {
  const CanonicalAnalysis a = analyse(spec);
  Eigen::VectorXd q(6);
  q << a.stationary[0], a.stationary[1], a.eta, a.axes[0].eigenvalue, a.axes[1].eigenvalue, a.rotations[0].tilt;
  return q;
}

TEST_CASE("Delta-method standard errors match a finite-difference Jacobian and R on the demo model", "[describe]") {
  ModelSpec spec = read_model_file(test::source_path("sample-rasters/demo-model.toml"));
  const TrainingSamples samples = read_training_samples(spec);
  const TermPlan plan(spec);
  const QuadraticForm form = extract_quadratic_form(spec, plan, default_reference(spec, &samples), {0, 1});
  const CanonicalAnalysis a = analyse_surface(form, spec.link, spec.covariance);
  const Eigen::MatrixXd& V = *spec.covariance;

  // Central differences in the test itself; the step 1e-6 gives ~1e-9 relative error here.
  const Eigen::Index p = static_cast<Eigen::Index>(spec.estimates.size());
  Eigen::MatrixXd J(6, p);
  const std::vector<double> beta = spec.estimates;
  for (Eigen::Index j = 0; j < p; ++j) {
    const double h = 1e-6 * std::max(1.0, std::fabs(beta[static_cast<std::size_t>(j)]));
    spec.estimates[static_cast<std::size_t>(j)] = beta[static_cast<std::size_t>(j)] + h;
    const Eigen::VectorXd up = derived_quantities(spec);
    spec.estimates[static_cast<std::size_t>(j)] = beta[static_cast<std::size_t>(j)] - h;
    const Eigen::VectorXd down = derived_quantities(spec);
    spec.estimates[static_cast<std::size_t>(j)] = beta[static_cast<std::size_t>(j)];
    J.col(j) = (up - down) / (2.0 * h);
  }
  const Eigen::MatrixXd numeric = J * V * J.transpose();
  CHECK((*a.stationary_covariance)(0, 0) == Approx(numeric(0, 0)).epsilon(1e-6));
  CHECK((*a.stationary_covariance)(1, 1) == Approx(numeric(1, 1)).epsilon(1e-6));
  CHECK((*a.stationary_covariance)(0, 1) == Approx(numeric(0, 1)).epsilon(1e-6));
  CHECK(*a.eta_se == Approx(std::sqrt(numeric(2, 2))).epsilon(1e-6));
  CHECK(*a.axes[0].eigenvalue_se == Approx(std::sqrt(numeric(3, 3))).epsilon(1e-6));
  CHECK(*a.axes[1].eigenvalue_se == Approx(std::sqrt(numeric(4, 4))).epsilon(1e-6));
  CHECK(*a.rotations[0].se == Approx(std::sqrt(numeric(5, 5))).epsilon(1e-6));

  // R (tests/reference/describe/demo.csv): point values to rounding, errors to 1e-6 relative.
  const auto r = test::read_reference(test::source_path("tests/reference/describe/demo.csv"));
  CHECK(a.stationary[0] == Approx(r.at("xs_tmin")).margin(1e-10));
  CHECK(a.stationary[1] == Approx(r.at("xs_precip")).margin(1e-10));
  CHECK(raw_value(spec.covariates[1], a.stationary[1]) == Approx(r.at("raw_precip")).epsilon(1e-12));
  CHECK(a.eta == Approx(r.at("eta_s")).margin(1e-10));
  CHECK(a.response == Approx(r.at("mu_s")).margin(1e-10));
  CHECK(a.axes[0].eigenvalue == Approx(r.at("lambda1")).margin(1e-10));
  CHECK(a.axes[1].eigenvalue == Approx(r.at("lambda2")).margin(1e-10));
  CHECK(a.rotations[0].major_axis == Approx(r.at("major_axis")).margin(1e-10));
  CHECK(a.rotations[0].tilt == Approx(r.at("tilt")).margin(1e-10));
  CHECK(*a.axes[0].half_width == Approx(r.at("half_width1")).margin(1e-10));
  CHECK(*a.axes[1].half_width == Approx(r.at("half_width2")).margin(1e-10));
  CHECK(std::sqrt((*a.stationary_covariance)(0, 0)) == Approx(r.at("se_xs_tmin")).epsilon(1e-6));
  CHECK(std::sqrt((*a.stationary_covariance)(1, 1)) == Approx(r.at("se_xs_precip")).epsilon(1e-6));
  CHECK((*a.stationary_covariance)(0, 1) == Approx(r.at("cov_xs_tmin_precip")).epsilon(1e-6));
  CHECK(*a.eta_se == Approx(r.at("se_eta_s")).epsilon(1e-6));
  CHECK(link_inverse_derivative(spec.link, a.eta) * *a.eta_se == Approx(r.at("se_mu_s")).epsilon(1e-6));
  CHECK(*a.axes[0].eigenvalue_se == Approx(r.at("se_lambda1")).epsilon(1e-6));
  CHECK(*a.axes[1].eigenvalue_se == Approx(r.at("se_lambda2")).epsilon(1e-6));
  CHECK(*a.rotations[0].se == Approx(r.at("se_tilt")).epsilon(1e-6));

  const ConditionalOptimum t = conditional_optimum(form, 0, 1, spec.covariance);
  const ConditionalOptimum u = conditional_optimum(form, 1, 0, spec.covariance);
  CHECK(t.maximum);
  CHECK(t.intercept == Approx(r.at("tmin_given_precip_intercept")).margin(1e-10));
  CHECK(t.slope == Approx(r.at("tmin_given_precip_slope")).margin(1e-10));
  CHECK(*t.slope_se == Approx(r.at("se_tmin_given_precip_slope")).epsilon(1e-6));
  CHECK(u.intercept == Approx(r.at("precip_given_tmin_intercept")).margin(1e-10));
  CHECK(u.slope == Approx(r.at("precip_given_tmin_slope")).margin(1e-10));
  CHECK(*u.slope_se == Approx(r.at("se_precip_given_tmin_slope")).epsilon(1e-6));
}

TEST_CASE("The analytic Jacobian of the stationary point equals central differences in theta", "[describe]") {
  const KnownSurface known{0.7, -1.2, 1.3, 0.52, 2.0, 0.8, 0.5};
  const ModelSpec spec = known.model();
  const TermPlan plan(spec);
  QuadraticForm form = extract_quadratic_form(spec, plan, default_reference(spec, nullptr), {0, 1});
  const Eigen::MatrixXd J = stationary_point_jacobian(form);
  const Eigen::Index k = form.size();
  auto stationary = [&](const QuadraticForm& f) { return Eigen::VectorXd(-0.5 * f.B.inverse() * f.b); };
  for (Eigen::Index t = 1; t < quadratic_coefficient_count(k); ++t) {
    const double h = 1e-6;
    QuadraticForm up = form, down = form;
    auto bump = [&](QuadraticForm& f, double d) {
      if (t <= k) {
        f.b[t - 1] += d;
        return;
      }
      for (Eigen::Index i = 0; i < k; ++i)
        for (Eigen::Index j = i; j < k; ++j)
          if (quadratic_index(k, i, j) == t) {
            if (i == j) f.B(i, i) += d;
            else {
              f.B(i, j) += d / 2;
              f.B(j, i) += d / 2;
            }
          }
    };
    bump(up, h);
    bump(down, -h);
    const Eigen::VectorXd numeric = (stationary(up) - stationary(down)) / (2 * h);
    for (Eigen::Index i = 0; i < k; ++i) CHECK(J(i, t) == Approx(numeric[i]).margin(1e-7));
  }
}

TEST_CASE("Held covariates fold into the form; terms of degree three are refused with their line", "[describe]") {
  SECTION("a product with a held covariate moves into the gradient") {
    // eta = u - u^2 + 2 u:w with w held at 0.5 (model units): gradient of u is 1 + 2 * 0.5 = 2.
    const ModelSpec spec = model_with_terms({"(Intercept)", "u", "u^2", "u:w"}, {0.0, 1.0, -1.0, 2.0}, "poisson",
                                            "[covariates.w]\ncenter = 0\nscale = 1\n");
    const TermPlan plan(spec);
    ReferencePoint ref = default_reference(spec, nullptr);
    ref.values[2] = 0.5;
    const QuadraticForm form = extract_quadratic_form(spec, plan, ref, {0});
    CHECK(form.b[0] == 2.0);
    CHECK(form.B(0, 0) == -1.0);
    CHECK(form.coefficient_map(1, 3) == 0.5);  // d b_u / d beta_{u:w} = w
  }
  SECTION("a cubic term") {
    const ModelSpec spec = model_with_terms({"(Intercept)", "u", "u^2", "u^3"}, {0.0, 1.0, -1.0, 0.1});
    const TermPlan plan(spec);
    CHECK_THROWS_WITH(extract_quadratic_form(spec, plan, default_reference(spec, nullptr), {0}),
                      Catch::Contains("test-model.toml:") && Catch::Contains("\"u^3\" has degree 3"));
  }
}

TEST_CASE("describe_niche picks the curved covariates, holds the linear ones and checks training support", "[describe]") {
  const ModelSpec spec = read_model_file(test::source_path("sample-rasters/demo-model.toml"));
  const TrainingSamples samples = read_training_samples(spec);
  const TermPlan plan(spec);
  const NicheDescription d = describe_niche(spec, plan, &samples, {});
  REQUIRE(d.form.has_value());
  CHECK(d.form->covariates == std::vector<int>{0, 1});  // tmin, precip
  REQUIRE(d.linear.size() == 1);
  CHECK(d.linear[0].covariate == 2);  // slope
  CHECK(d.linear[0].gradient == spec.estimates[6]);
  REQUIRE(d.support.has_value());
  // The demo's optimum (tmin 0.33 degC, precip 2152 mm) lies inside both training ranges.
  CHECK(d.support->inside);
  REQUIRE(d.pair.has_value());
  CHECK(d.pair->stationary_inside_hull == true);

  DescribeSettings hold;
  hold.at["precip"] = 2400.0;
  const NicheDescription h = describe_niche(spec, plan, &samples, hold);
  CHECK(h.form->covariates == std::vector<int>{0});
  // Holding precip at p: best tmin = -(b_t + q_tp p) / (2 q_tt), p in model units.
  const double p = (2400.0 - spec.covariates[1].center) / spec.covariates[1].scale;
  CHECK(h.analysis->stationary[0] == Approx(-(spec.estimates[1] + spec.estimates[5] * p) / (2 * spec.estimates[2])).margin(1e-12));

  DescribeSettings bad;
  bad.at["landcover"] = 2;
  CHECK_THROWS_WITH(describe_niche(spec, plan, &samples, bad), Catch::Contains("--level landcover="));
}

}  // namespace
}  // namespace habcast
