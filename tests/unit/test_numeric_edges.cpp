// Numerical edge cases end to end: extreme linear predictors for every link, a nearly singular
// covariance, standardisation by zero and covariate values at the edge of float range. Every
// output pixel is a finite value in the response's range or the nodata value, never NaN or Inf.
#include <catch2/catch.hpp>
#include <cfloat>
#include <cmath>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "core/base/error.hpp"
#include "core/model/model_file.hpp"
#include "test_support.hpp"

namespace {

using Catch::Matchers::Contains;
using habcast::test::GridSpec;
using habcast::test::TempDir;

constexpr double kNodata = -9999.0;

/// A one-covariate model eta = 0 + 1 * x over a 3 x 1 raster of x = -1000, 0, 1000.
struct EtaScene {
  TempDir dir{"numeric"};
  std::string out = dir.file("out");

  EtaScene(const std::string& family, const std::string& link, const std::string& covariance) {
    const std::vector<double> xs{-1000.0, 0.0, 1000.0};
    habcast::test::write_raster(dir.file("x.tif"), GridSpec{3, 1}, "Float32",
                                [&](int, int c) { return xs[static_cast<std::size_t>(c)]; });
    habcast::test::write_text(dir.file("m.toml"),
                              "habcast_model = 1\n[model]\nfamily = \"" + family + "\"\nlink = \"" + link +
                                  "\"\n[covariates.x]\nraster = \"x.tif\"\n[coefficients]\n"
                                  "terms = [\"(Intercept)\", \"x\"]\nestimates = [0.0, 1.0]\ncovariance = " +
                                  covariance + "\n");
  }
  int run(std::string* err = nullptr) {
    return habcast::test::run_cli({"predict", dir.file("m.toml"), "-o", out, "-q"}, nullptr, err);
  }
};

void require_finite_or_nodata(const std::vector<double>& values) {
  for (const double v : values) {
    INFO("pixel value " << v);
    CHECK((v == kNodata || std::isfinite(v)));
  }
}

}  // namespace

TEST_CASE("a linear predictor of -1000 and +1000 gives finite outputs or nodata for every link", "[numeric]") {
  struct Case {
    const char* family;
    const char* link;
    std::vector<double> expected;  // suitability at eta = -1000, 0, 1000
  };
  // Closed forms: logistic(0) = 1/2, Phi(0) = 1/2, 1 - exp(-exp(0)) = 1 - 1/e, exp(0) = 1; at
  // +-1000 each inverse link saturates at its bound, except exp(1000), which overflows double
  // and float and so becomes nodata (counted as not_representable in the report).
  const std::vector<Case> cases = {
      {"binomial", "logit", {0.0, 0.5, 1.0}},
      {"binomial", "probit", {0.0, 0.5, 1.0}},
      {"binomial", "cloglog", {0.0, 1.0 - std::exp(-1.0), 1.0}},
      {"poisson", "log", {0.0, 1.0, kNodata}},
      {"poisson", "identity", {-1000.0, 0.0, 1000.0}},
      {"gaussian", "identity", {-1000.0, 0.0, 1000.0}},
      {"gaussian", "log", {0.0, 1.0, kNodata}},
  };
  for (const Case& c : cases) {
    DYNAMIC_SECTION(c.family << " with " << c.link) {
      EtaScene s(c.family, c.link, "[[1e-4, 0.0], [0.0, 1e-4]]");
      REQUIRE(s.run() == 0);
      const std::vector<double> mu = habcast::test::read_band(s.out + "/suitability.tif");
      for (std::size_t i = 0; i < 3; ++i) CHECK_THAT(mu[i], Catch::Matchers::WithinAbs(c.expected[i], 1e-7));
      for (int band = 1; band <= 3; ++band) require_finite_or_nodata(habcast::test::read_band(s.out + "/uncertainty.tif", band));
      const auto report = nlohmann::json::parse(habcast::test::read_text(s.out + "/report.json"));
      const bool overflows = c.expected[2] == kNodata;
      CHECK(report["pixels"]["not_representable"].get<long long>() == (overflows ? 1 : 0));
      CHECK(report["pixels"]["predicted"].get<long long>() == (overflows ? 2 : 3));
    }
  }
}

TEST_CASE("a nearly singular covariance still gives finite, non-negative standard errors", "[numeric]") {
  // Eigenvalues 2 + 1e-12 and about -5e-13 (rounding of a singular matrix written in decimal):
  // accepted by the reader's tolerance; x' V x can come out a hair below zero and must not become
  // NaN under the square root.
  EtaScene s("binomial", "logit", "[[1.0, 1.0], [1.0, 0.999999999999]]");
  std::string err;
  REQUIRE(s.run(&err) == 0);
  const std::vector<double> se = habcast::test::read_band(s.out + "/uncertainty.tif", 1);
  for (const double v : se) CHECK((v == kNodata || (std::isfinite(v) && v >= 0.0)));
  CHECK(se[1] >= 0.0);  // eta = 0: se(eta)^2 = 1 + 0 + 0 = 1, response-scale se = 1/4 * 1
  CHECK_THAT(se[1], Catch::Matchers::WithinAbs(0.25, 1e-9));
}

TEST_CASE("a covariance that is clearly not positive semi-definite is refused with its line", "[numeric]") {
  EtaScene s("binomial", "logit", "[[1.0, 2.0], [2.0, 1.0]]");  // eigenvalues 3 and -1
  std::string err;
  CHECK(s.run(&err) == 3);
  CHECK_THAT(err, Contains("m.toml:10:") && Contains("not positive semi-definite"));
}

TEST_CASE("standardising with scale 0 or a negative scale is refused with the covariate's line", "[numeric]") {
  for (const char* scale : {"0", "0.0", "-2"}) {
    const std::string text = std::string("habcast_model = 1\n[model]\nfamily = \"binomial\"\n[covariates.x]\n") +
                             "center = 1\nscale = " + scale + "\n[coefficients]\nterms = [\"x\"]\nestimates = [1.0]\n";
    CHECK_THROWS_WITH(habcast::parse_model_text(text, "scale.toml"),
                      Contains("scale.toml:6:") && Contains("scale of \"x\" must be positive"));
  }
}

TEST_CASE("covariate values at the edge of float range give finite outputs or nodata", "[numeric]") {
  TempDir dir{"flt-max"};
  // FLT_MAX and its square (about 1.2e77) are finite in double; exp() of them is not.
  const std::vector<double> xs{FLT_MAX, -FLT_MAX, FLT_MIN, 0.0, 1.0};
  habcast::test::write_raster(dir.file("x.tif"), GridSpec{5, 1}, "Float32",
                              [&](int, int c) { return xs[static_cast<std::size_t>(c)]; });
  for (const std::string family_link : {"binomial\"\nlink = \"logit", "poisson\"\nlink = \"log"}) {
    DYNAMIC_SECTION(family_link.substr(0, family_link.find('"'))) {
      habcast::test::write_text(dir.file("m.toml"),
                                "habcast_model = 1\n[model]\nfamily = \"" + family_link +
                                    "\"\n[covariates.x]\nraster = \"x.tif\"\ncenter = 1\nscale = 1e-3\n"
                                    "[coefficients]\nterms = [\"(Intercept)\", \"x\", \"x^2\", \"exp(x)\"]\n"
                                    "estimates = [0.5, 1e-40, -1e-80, 0.0]\n"
                                    "covariance = [[1,0,0,0],[0,1,0,0],[0,0,1,0],[0,0,0,1]]\n");
      const std::string out = dir.file("out-" + family_link.substr(0, 3));
      std::string err;
      REQUIRE(habcast::test::run_cli({"predict", dir.file("m.toml"), "-o", out, "-q"}, nullptr, &err) == 0);
      const std::vector<double> mu = habcast::test::read_band(out + "/suitability.tif");
      require_finite_or_nodata(mu);
      for (int band = 1; band <= 3; ++band) require_finite_or_nodata(habcast::test::read_band(out + "/uncertainty.tif", band));
      // exp((FLT_MAX - 1) / 1e-3) is infinite: that term is undefined there, so no prediction.
      CHECK(mu[0] == kNodata);
      // At x = 1 the model value is 0: eta = 0.5 + exp(0) * 0 = 0.5.
      const double expected = family_link[0] == 'b' ? 1.0 / (1.0 + std::exp(-0.5)) : std::exp(0.5);
      CHECK_THAT(mu[4], Catch::Matchers::WithinRel(expected, 1e-6));
      const auto report = nlohmann::json::parse(habcast::test::read_text(out + "/report.json"));
      CHECK(report["pixels"]["undefined_term"].get<long long>() >= 1);
    }
  }
}

TEST_CASE("an identity-link prediction equal to the nodata marker is moved off it, not lost", "[numeric]") {
  // eta = 0 + 1 * x with x = -9999 (not nodata in x.tif): the mean is exactly the outputs' nodata
  // value. Stored as is it would read as "no data"; it must stay a prediction, one Float32 step
  // towards zero (IEEE 754 nextafter), and be counted and reported.
  TempDir dir{"on-nodata"};
  const std::vector<double> xs{-9999.0, 0.0, 5.0};
  habcast::test::write_raster(dir.file("x.tif"), GridSpec{3, 1}, "Float32",
                              [&](int, int c) { return xs[static_cast<std::size_t>(c)]; });
  habcast::test::write_text(dir.file("m.toml"),
                            "habcast_model = 1\n[model]\nfamily = \"gaussian\"\nlink = \"identity\"\n"
                            "[covariates.x]\nraster = \"x.tif\"\n[coefficients]\nterms = [\"(Intercept)\", \"x\"]\n"
                            "estimates = [0.0, 1.0]\ncovariance = [[1e-4, 0.0], [0.0, 1e-4]]\n");
  std::string err;
  REQUIRE(habcast::test::run_cli({"predict", dir.file("m.toml"), "-o", dir.file("out")}, nullptr, &err) == 0);
  const std::vector<double> mu = habcast::test::read_band(dir.file("out/suitability.tif"));
  CHECK(mu[0] == static_cast<double>(std::nextafter(-9999.0f, 0.0f)));
  CHECK(mu[1] == 0.0);
  CHECK(mu[2] == 5.0);
  const auto report = nlohmann::json::parse(habcast::test::read_text(dir.file("out/report.json")));
  CHECK(report["pixels"]["predicted"].get<long long>() == 3);
  CHECK(report["pixels"]["moved_off_nodata"].get<long long>() == 1);
  CHECK_THAT(err, Contains("equalled the nodata marker"));
}
