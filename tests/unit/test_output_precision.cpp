// predict --max-error: lossy Float32 outputs whose every value lies within the stated error of the
// exact prediction. The exact values come from a closed form (a logistic surface of two
// covariates that are known functions of row and column), not from habcast's own lossless run.
#include <catch2/catch.hpp>
#include <gdal_priv.h>

#include <cmath>
#include <filesystem>
#include <string>

#include "core/model/output_precision.hpp"
#include "test_support.hpp"

namespace {

using habcast::test::GridSpec;
using habcast::test::TempDir;

constexpr int kWidth = 300, kHeight = 200;
// Raw covariates: x = col / 50 - 3 in [-3, 3); y = row / 40 - 2.5 in [-2.5, 2.5).
double x_of(int col) { return col / 50.0 - 3.0; }
double y_of(int row) { return row / 40.0 - 2.5; }
// Terms (Intercept), x, y, x^2, x:y.
const double kBeta[5] = {0.6, 0.9, -0.7, -0.45, 0.3};
const double kV[5][5] = {{0.02, 0.004, 0.0, -0.003, 0.0},
                         {0.004, 0.01, 0.001, 0.0, 0.0005},
                         {0.0, 0.001, 0.015, 0.0, 0.0},
                         {-0.003, 0.0, 0.0, 0.004, 0.0},
                         {0.0, 0.0005, 0.0, 0.0, 0.003}};

std::string model_text() {
  std::string s =
      "habcast_model = 1\n[model]\nfamily = \"binomial\"\n"
      "[covariates.x]\nraster = \"x.tif\"\n[covariates.y]\nraster = \"y.tif\"\n"
      "[coefficients]\nterms = [\"(Intercept)\", \"x\", \"y\", \"x^2\", \"x:y\"]\n";
  char buf[64];
  s += "estimates = [";
  for (int i = 0; i < 5; ++i) {
    std::snprintf(buf, sizeof buf, "%s%.17g", i ? ", " : "", kBeta[i]);
    s += buf;
  }
  s += "]\ncovariance = [\n";
  for (const auto& row : kV) {
    s += "  [";
    for (int j = 0; j < 5; ++j) {
      std::snprintf(buf, sizeof buf, "%s%.17g", j ? ", " : "", row[j]);
      s += buf;
    }
    s += "],\n";
  }
  return s + "]\n";
}

double logistic(double e) { return 1.0 / (1.0 + std::exp(-e)); }

/// The four Float32 outputs at a pixel, in double: mu, se(mu), lower, upper.
std::array<double, 4> exact(int row, int col) {
  // The rasters are Float32, so habcast sees the raw values rounded to float.
  const double x = static_cast<float>(x_of(col)), y = static_cast<float>(y_of(row));
  const double t[5] = {1.0, x, y, x * x, x * y};
  double eta = 0.0, s2 = 0.0;
  for (int i = 0; i < 5; ++i) {
    eta += kBeta[i] * t[i];
    for (int j = 0; j < 5; ++j) s2 += t[i] * kV[i][j] * t[j];
  }
  const double se = std::sqrt(s2);
  const double mu = logistic(eta);
  const double z = 1.959963984540054;  // qnorm(0.975), R 4.2.2
  // Delta method: d mu / d eta = mu (1 - mu) for the logit link.
  return {mu, mu * (1.0 - mu) * se, logistic(eta - z * se), logistic(eta + z * se)};
}

std::string compression_of(const std::string& path) {
  GDALDataset* ds = GDALDataset::Open(path.c_str(), GDAL_OF_RASTER | GDAL_OF_READONLY);
  REQUIRE(ds != nullptr);
  const char* c = ds->GetMetadataItem("COMPRESSION", "IMAGE_STRUCTURE");
  std::string result = c ? c : "";
  GDALClose(GDALDataset::ToHandle(ds));
  return result;
}

struct Scene {
  TempDir dir{"precision"};
  std::string model = dir.file("model.toml");
  Scene() {
    const GridSpec grid{kWidth, kHeight, 500000.0, 4000000.0, 100.0, 32630, 64};
    // Pixel (7, 11) of x is nodata: every output must stay nodata there, untouched by rounding.
    habcast::test::write_raster(dir.file("x.tif"), grid, "Float32",
                                [](int r, int c) { return (r == 7 && c == 11) ? -9999.0 : x_of(c); }, true, -9999.0);
    habcast::test::write_raster(dir.file("y.tif"), grid, "Float32", [](int r, int) { return y_of(r); });
    habcast::test::write_text(model, model_text());
  }
};

}  // namespace

TEST_CASE("The rounding grid is the largest three-bit step within twice the maximum error", "[precision]") {
  // Hand-worked: 2e = m * 2^x with m in [0.5, 1), q = floor(8m) * 2^(x - 3).
  // 2e-4 = 0.8192 * 2^-12 -> floor(6.5536) = 6 -> q = 6 * 2^-15 = 1.831e-4 (a power of two: 1.22e-4).
  CHECK(habcast::quantum_for_max_error(1e-4) == 6.0 * std::ldexp(1.0, -15));
  // 2e-3 = 0.512 * 2^-8 -> floor(4.096) = 4 -> q = 4 * 2^-11 = 2^-9.
  CHECK(habcast::quantum_for_max_error(1e-3) == std::ldexp(1.0, -9));
  CHECK(habcast::quantum_for_max_error(std::ldexp(1.0, -14)) == std::ldexp(1.0, -13));  // exact power
  CHECK(habcast::quantum_for_max_error(0.3) == 0.5);     // 0.6 = 0.6 * 2^0 -> floor(4.8) = 4 -> 4/8
  CHECK(habcast::quantum_for_max_error(0.35) == 0.625);  // 0.7 -> floor(5.6) = 5 -> 5/8
  CHECK(habcast::quantum_for_max_error(0.4375) == 0.875);  // 0.875 = 7/8 exactly: the whole allowance
  for (double e = 1e-7; e < 1.0; e *= 1.37) {
    const double q = habcast::quantum_for_max_error(e);
    INFO("max error " << e);
    CHECK(q <= 2 * e);
    CHECK(q > 0.8 * e * 2 * 0.999);  // at least 4/5 of the allowance is used
  }
  CHECK_THROWS(habcast::quantum_for_max_error(0.0));
  CHECK_THROWS(habcast::quantum_for_max_error(std::nan("")));
  // 0.123456 * 1024 = 126.42..., so the nearest multiple of 2^-10 is 126 / 1024.
  CHECK(habcast::round_to_quantum(0.123456, std::ldexp(1.0, -10)) == 126.0 / 1024.0);
  // 1 / 0.375 = 2.67 -> 3 * 0.375 = 1.125; 0.1875 / 0.375 = 0.5 exactly -> the even neighbour, 0.
  CHECK(habcast::round_to_quantum(1.0, 0.375) == 1.125);
  CHECK(habcast::round_to_quantum(0.1875, 0.375) == 0.0);
  CHECK(habcast::round_to_quantum(0.123456, 0.0) == 0.123456);
  CHECK(std::isinf(habcast::round_to_quantum(INFINITY, 0.5)));
  // Never further than q / 2, also where value / q rounds in double (most steps are not powers of
  // two): midpoints of the grid and their nearest doubles on both sides, for steps of every
  // three-bit mantissa over several binades.
  for (const double e : {1e-4, 1.2e-4, 1.45e-4, 1.7e-4, 0.03, 0.3}) {
    const double q = habcast::quantum_for_max_error(e);
    double worst = 0.0;
    for (int k = -20000; k < 20000; ++k) {
      double v = (k + 0.5) * q;
      for (int step = 0; step < 3; ++step) {
        const double below = v - step * std::ldexp(std::fabs(v), -52), above = v + step * std::ldexp(std::fabs(v), -52);
        for (const double x : {below, above, std::nextafter(below, -1e9), std::nextafter(above, 1e9)})
          worst = std::max(worst, std::fabs(habcast::round_to_quantum(x, q) - x) - q / 2);
      }
    }
    INFO("step " << q);
    CHECK(worst <= 0.0);
  }
}

TEST_CASE("Outputs written with --max-error stay within that error of the exact prediction", "[precision]") {
  Scene scene;
  const double max_error = GENERATE(1e-4, 1e-3);
  INFO("--max-error " << max_error);
  const double q = habcast::quantum_for_max_error(max_error);
  char text[32];
  std::snprintf(text, sizeof text, "%g", max_error);
  const std::string out = scene.dir.file("lossy");
  const std::string lossless = scene.dir.file("lossless");
  REQUIRE(habcast::test::run_cli({"predict", scene.model, "-o", out, "--max-error", text, "-q", "--overwrite"}) == 0);
  REQUIRE(habcast::test::run_cli({"predict", scene.model, "-o", lossless, "-q", "--overwrite"}) == 0);

  std::array<std::vector<double>, 4> bands = {
      habcast::test::read_band(out + "/suitability.tif"), habcast::test::read_band(out + "/uncertainty.tif", 1),
      habcast::test::read_band(out + "/uncertainty.tif", 2), habcast::test::read_band(out + "/uncertainty.tif", 3)};
  double worst = 0.0;
  bool on_grid = true;
  for (int row = 0; row < kHeight; ++row) {
    for (int col = 0; col < kWidth; ++col) {
      const auto i = static_cast<std::size_t>(row * kWidth + col);
      if (row == 7 && col == 11) {
        for (const auto& b : bands) CHECK(b[i] == -9999.0);
        continue;
      }
      const auto expected = exact(row, col);
      for (std::size_t k = 0; k < 4; ++k) {
        worst = std::max(worst, std::fabs(bands[k][i] - expected[k]));
        on_grid = on_grid && std::fmod(bands[k][i], q) == 0.0;
      }
    }
  }
  // The stated bound, and no looser than the grid implies (q / 2 plus double round-off).
  CHECK(worst <= max_error);
  CHECK(worst <= q / 2 + 1e-12);
  CHECK(on_grid);
  CHECK(compression_of(out + "/suitability.tif") == "LERC_ZSTD");
  CHECK(compression_of(lossless + "/suitability.tif") == "DEFLATE");
  CHECK(std::filesystem::file_size(out + "/uncertainty.tif") < std::filesystem::file_size(lossless + "/uncertainty.tif"));
}

TEST_CASE("A maximum error of 0 or less, or above 1, is refused before anything is written", "[precision]") {
  Scene scene;
  std::string out, err;
  CHECK(habcast::test::run_cli({"predict", scene.model, "-o", scene.dir.file("o"), "--max-error", "0"}, &out, &err) == 2);
  CHECK_THAT(err, Catch::Matchers::Contains("--max-error"));
  CHECK_FALSE(std::filesystem::exists(scene.dir.file("o/suitability.tif")));
}
