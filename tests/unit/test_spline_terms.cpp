// Spline terms in the model file: how they are declared, refused, written back, evaluated by the
// TermPlan and flagged beyond their boundary knots.
#include <catch2/catch.hpp>

#include <cmath>

#include "core/base/error.hpp"
#include "core/domain/extrapolation_flags.hpp"
#include "core/domain/training_domain.hpp"
#include "core/domain/training_samples.hpp"
#include "core/model/model_file.hpp"
#include "core/model/model_writer.hpp"
#include "core/model/spline_basis.hpp"
#include "core/model/term_plan.hpp"
#include "test_support.hpp"

namespace habcast {
namespace {

std::string spline_model_text(const std::string& covariate_extra, const std::string& terms, const std::string& estimates) {
  return "habcast_model = 1\n[model]\nfamily = \"binomial\"\n[covariates.t]\ncenter = 10.0\nscale = 2.0\n" +
         covariate_extra + "\n[covariates.p]\n[coefficients]\nterms = [" + terms + "]\nestimates = [" + estimates + "]\n";
}

const std::string kSplineNs = "ns = { knots = [-0.5, 0.5], boundary = [-1.5, 1.5] }";

TEST_CASE("A spline term is one column of the basis declared on its covariate", "[spline]") {
  const ModelSpec spec = parse_model_text(
      spline_model_text(kSplineNs + "\nbs = { knots = [0.0], boundary = [-2.0, 2.0], degree = 2 }",
            "\"(Intercept)\", \"ns(t)[1]\", \"ns(t)[3]\", \"bs(t)[2]\", \"ns(t)[2]:p\"", "0.5, 1.0, -2.0, 0.3, 0.7"),
      "m.toml");
  const TermPlan plan(spec);
  REQUIRE(plan.splines().size() == 2);
  // Model value (12 - 10) / 2 = 1 for t = 12; p = 3.
  ModelValues v(1, 2);
  v << 1.0, 3.0;
  Eigen::MatrixXd X;
  std::uint8_t valid = 1;
  plan.fill(v, 1, X, &valid);
  double ns[3], bs[3];
  SplineBasis(*spec.covariates[0].natural_spline).evaluate(1.0, ns);
  SplineBasis(*spec.covariates[0].bspline).evaluate(1.0, bs);
  CHECK(X(0, 1) == ns[0]);
  CHECK(X(0, 2) == ns[2]);
  CHECK(X(0, 3) == bs[1]);
  CHECK(X(0, 4) == ns[1] * 3.0);
  CHECK(plan.terms()[4].canonical == "ns(t)[2]:p");
  // Written back, the file parses to the same bases.
  const ModelSpec again = parse_model_text(write_model_text(spec, "m.toml"), "m.toml");
  CHECK(again.covariates[0].natural_spline->knots == spec.covariates[0].natural_spline->knots);
  CHECK(again.covariates[0].bspline->degree == 2);
  CHECK(again.terms == spec.terms);
}

TEST_CASE("Spline terms and declarations that cannot mean anything are refused with the line", "[spline]") {
  auto refused = [](const std::string& text, const std::string& why) {
    CHECK_THROWS_WITH(parse_model_text(text, "m.toml"), Catch::Contains("m.toml:") && Catch::Contains(why));
  };
  refused(spline_model_text("", "\"ns(t)[1]\"", "1.0"), "needs the basis declared");
  refused(spline_model_text(kSplineNs, "\"ns(t)[4]\"", "1.0"), "from 1 to 3");
  refused(spline_model_text(kSplineNs, "\"ns(t)\"", "1.0"), "names one column");
  refused(spline_model_text(kSplineNs, "\"ns(t)[1]^2\"", "1.0"), "carries no power");
  refused(spline_model_text(kSplineNs, "\"ns(t)[1]:ns(t)[2]\"", "1.0"), "two columns of one spline basis");
  refused(spline_model_text("ns = { knots = [2.0], boundary = [-1.5, 1.5] }", "\"ns(t)[1]\"", "1.0"), "strictly between");
  refused(spline_model_text("ns = { knots = [0.0], boundary = [1.5] }", "\"ns(t)[1]\"", "1.0"), "boundary = [LOWER, UPPER]");
  refused(spline_model_text("ns = { knots = [0.0], boundary = [-1.0, 1.0], degree = 2 }", "\"ns(t)[1]\"", "1.0"), "unknown key");
  refused(spline_model_text("bs = { knots = [0.0], boundary = [-1.0, 1.0], degree = 9 }", "\"bs(t)[1]\"", "1.0"), "degree");
  refused("habcast_model = 1\n[model]\nfamily = \"binomial\"\n[covariates.s]\ntype = \"categorical\"\n"
          "levels = [ { code = 1, name = \"a\" } ]\nns = { knots = [], boundary = [0.0, 1.0] }\n"
          "[coefficients]\nterms = [\"(Intercept)\"]\nestimates = [0.0]\n",
          "continuous covariates only");
}

TEST_CASE("Values beyond a spline's boundary knots are flagged outside the range even inside the training range",
          "[spline]") {
  // Boundary knots at model values -1.5, 1.5: raw 7 and 13. Training t spans 6 to 14.
  const ModelSpec spec = parse_model_text(spline_model_text(kSplineNs, "\"ns(t)[1]\", \"p\"", "1.0, 1.0"), "m.toml");
  const TrainingSamples samples = parse_training_samples("t,p\n6,0\n14,1\n10,0.5\n", "train.csv", spec);
  const TrainingDomain domain(spec, samples);
  CHECK(domain.range(0).min == 6.0);  // the reported training range is unchanged
  Eigen::ArrayXXd raw(4, 2);
  raw << 6.5, 0.5,  // beyond the lower boundary knot, inside the training range
      10.0, 0.5,    // inside both
      13.0, 0.5,    // exactly at the upper boundary knot: inside
      13.5, 0.5;    // beyond the upper knot
  const std::uint8_t valid[4] = {1, 1, 1, 1};
  std::uint8_t flags[4];
  DomainTally tally(2);
  domain.flag(raw, 4, valid, flags, tally);
  CHECK(flags[0] == flag::outside_range);
  CHECK(flags[1] == 0);
  CHECK(flags[2] == 0);
  CHECK(flags[3] == flag::outside_range);
  CHECK(tally.below[0] == 1);
  CHECK(tally.above[0] == 1);
}

}  // namespace
}  // namespace habcast

namespace habcast {
namespace {

TEST_CASE("predict maps a spline model pixel by pixel and flags the pixels beyond the boundary knots", "[spline][predict]") {
  test::TempDir dir("spline-predict");
  // t = col / 2 - 2 (raw), model value (t - 10) / 2 after center 10, scale 2: cols 0..63 give
  // t from -2 to 29.5. Boundary knots at model values -1.5, 1.5 are raw 7 and 13; training 6..14.
  const test::GridSpec grid{64, 4};
  test::write_raster(dir.file("t.tif"), grid, "Float32", [](int, int col) { return col / 2.0 - 2.0; });
  test::write_raster(dir.file("p.tif"), grid, "Float32", [](int row, int) { return row * 0.5; });
  test::write_text(dir.file("train.csv"), "t,p\n6,0\n14,1.5\n10,0.5\n8,1\n");
  test::write_text(dir.file("m.toml"),
                   "habcast_model = 1\n[model]\nfamily = \"poisson\"\n[training]\nsamples = \"train.csv\"\n"
                   "[covariates.t]\ncenter = 10.0\nscale = 2.0\nraster = \"t.tif\"\n" + kSplineNs +
                   "\n[covariates.p]\nraster = \"p.tif\"\n[coefficients]\n"
                   "terms = [\"(Intercept)\", \"ns(t)[1]\", \"ns(t)[2]\", \"ns(t)[3]\", \"ns(t)[2]:p\"]\n"
                   "estimates = [0.2, 0.5, -0.4, 0.3, 0.25]\n");
  std::string out, err;
  REQUIRE(test::run_cli({"predict", dir.file("m.toml"), "-o", dir.file("out"), "-q", "--checks", "range"}, &out, &err) == 0);
  const SplineBasis basis(*parse_model_text(test::read_text(dir.file("m.toml")), dir.file("m.toml")).covariates[0].natural_spline);
  const std::vector<double> mu = test::read_band(dir.file("out/suitability.tif"));
  const std::vector<double> flags = test::read_band(dir.file("out/extrapolation.tif"));
  for (int row = 0; row < 4; ++row)
    for (int col = 0; col < 64; ++col) {
      const double t = col / 2.0 - 2.0, p = row * 0.5;
      double b[3];
      basis.evaluate((t - 10.0) / 2.0, b);
      const double eta = 0.2 + 0.5 * b[0] - 0.4 * b[1] + 0.3 * b[2] + 0.25 * b[1] * p;
      INFO("row " << row << " col " << col << " t " << t);
      CHECK_THAT(mu[static_cast<std::size_t>(row * 64 + col)], Catch::Matchers::WithinRel(std::exp(eta), 1e-6));
      const bool beyond = t < 7.0 || t > 13.0 || p > 1.5;
      CHECK((flags[static_cast<std::size_t>(row * 64 + col)] != 0.0) == beyond);
    }
  const std::string report = test::read_text(dir.file("out/report.json"));
  CHECK_THAT(report, Catch::Contains("beyond its spline's boundary knots"));
}

}  // namespace
}  // namespace habcast
