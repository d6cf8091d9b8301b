// End-to-end predict on covariate rasters whose values are known functions of row and column, so
// every output pixel has a closed form. The niche is a rotated elliptical dome in (t, p):
//   eta = c - [A (t-t0)^2 + 2H (t-t0)(p-p0) + C (p-p0)^2]
// whose maximum is at (t0, p0) and whose contours are ellipses turned off the axes by H.
#include <catch2/catch.hpp>
#include <algorithm>
#include <cmath>
#include <cstring>
#include <map>
#include <nlohmann/json.hpp>
#include <string>

#include "test_support.hpp"

namespace {

using habcast::test::GridSpec;
using habcast::test::TempDir;

constexpr double A = 1.0, C = 0.5, H = 0.3, c0 = 2.0, t0 = 1.75, p0 = 2.5;
constexpr int kWidth = 64, kHeight = 48;

// Raw covariates: tmin = col/8 - 2 (model value = raw); precip = row/16 + 1 with center 1 and
// scale 0.5, so its model value is row/8. Both are exact in binary floating point.
double tmin_raw(int, int col) { return col / 8.0 - 2.0; }
double precip_raw(int row, int) { return row / 16.0 + 1.0; }
double t_of(int col) { return col / 8.0 - 2.0; }
double p_of(int row) { return row / 8.0; }

// Coefficients of the expanded dome, in term order (Intercept) t p t^2 p^2 t:p.
const double kBeta[6] = {c0 - A * t0 * t0 - 2 * H * t0 * p0 - C * p0 * p0,
                         2 * A * t0 + 2 * H * p0,
                         2 * C * p0 + 2 * H * t0,
                         -A,
                         -C,
                         -2 * H};
// A covariance with off-diagonal terms so se(eta) mixes terms.
const double kV[6][6] = {{0.04, 0.01, 0.0, -0.002, 0.0, 0.0},  {0.01, 0.02, 0.003, 0.0, 0.0, 0.001},
                         {0.0, 0.003, 0.03, 0.0, -0.001, 0.0}, {-0.002, 0.0, 0.0, 0.005, 0.0, 0.0},
                         {0.0, 0.0, -0.001, 0.0, 0.004, 0.0},  {0.0, 0.001, 0.0, 0.0, 0.0, 0.002}};

std::string model_text() {
  std::string s =
      "habcast_model = 1\n[model]\nfamily = \"binomial\"\nname = \"analytic dome\"\n"
      "[training]\nsamples = \"train.csv\"\n"
      "[covariates.tmin]\nunits = \"degC\"\nraster = \"tmin.tif\"\n"
      "[covariates.precip]\nunits = \"mm\"\ncenter = 1.0\nscale = 0.5\nraster = \"precip.tif\"\n"
      "[coefficients]\nterms = [\"(Intercept)\", \"tmin\", \"precip\", \"tmin^2\", \"precip^2\", \"tmin:precip\"]\n";
  char buf[64];
  s += "estimates = [";
  for (int i = 0; i < 6; ++i) {
    std::snprintf(buf, sizeof buf, "%s%.17g", i ? ", " : "", kBeta[i]);
    s += buf;
  }
  s += "]\ncovariance = [\n";
  for (const auto& row : kV) {
    s += "  [";
    for (int j = 0; j < 6; ++j) {
      std::snprintf(buf, sizeof buf, "%s%.17g", j ? ", " : "", row[j]);
      s += buf;
    }
    s += "],\n";
  }
  return s + "]\n";
}

// Training range: tmin in [-1, 3], precip in [1.5, 3] (raw units).
const char* kTraining =
    "site,tmin,precip\n1,-1,1.5\n2,3,3\n3,1,2\n4,0.5,2.5\n5,2,1.75\n";

struct Scene {
  TempDir dir{"analytic"};
  std::string model = dir.file("model.toml");
  std::string out = dir.file("out");
  Scene() {
    const GridSpec grid{kWidth, kHeight};
    // Pixel (5, 5) of tmin is nodata: every output must be nodata there.
    habcast::test::write_raster(dir.file("tmin.tif"), grid, "Float32",
                                [](int r, int c) { return (r == 5 && c == 5) ? -9999.0 : tmin_raw(r, c); }, true, -9999.0);
    habcast::test::write_raster(dir.file("precip.tif"), grid, "Float32", precip_raw);
    habcast::test::write_text(model, model_text());
    habcast::test::write_text(dir.file("train.csv"), kTraining);
  }
};

double eta_closed_form(int row, int col) {
  const double dt = t_of(col) - t0, dp = p_of(row) - p0;
  return c0 - (A * dt * dt + 2 * H * dt * dp + C * dp * dp);
}

double se_eta_closed_form(int row, int col) {
  const double t = t_of(col), p = p_of(row);
  const double x[6] = {1.0, t, p, t * t, p * p, t * p};
  double s = 0.0;
  for (int i = 0; i < 6; ++i)
    for (int j = 0; j < 6; ++j) s += x[i] * kV[i][j] * x[j];
  return std::sqrt(s);
}

double logistic(double e) { return 1.0 / (1.0 + std::exp(-e)); }

}  // namespace

TEST_CASE("predict reproduces a rotated elliptical niche pixel by pixel", "[predict][analytic]") {
  Scene scene;
  std::string out, err;
  // Range checks only: the joint checks of this scene are tested in test_domain_raster.cpp.
  REQUIRE(habcast::test::run_cli({"predict", scene.model, "-o", scene.out, "--threads", "2", "-q", "--checks", "range"},
                                 &out, &err) == 0);
  const std::string suit = scene.out + "/suitability.tif";
  const std::string unc = scene.out + "/uncertainty.tif";

  SECTION("suitability, se and limits at chosen pixels equal the closed form") {
    // z = qnorm(0.975) = 1.959963984540054 (R 4.2.2); Float32 outputs, so 1e-6 relative.
    const double z = 1.959963984540054;
    for (auto [row, col] : {std::pair{20, 30}, {0, 0}, {47, 63}, {10, 40}, {33, 3}, {21, 29}}) {
      INFO("pixel row " << row << " col " << col);
      const double eta = eta_closed_form(row, col);
      const double se = se_eta_closed_form(row, col);
      const double mu = logistic(eta);
      CHECK_THAT(habcast::test::read_pixel(suit, 1, row, col), Catch::Matchers::WithinRel(mu, 1e-6));
      // Delta method on the response scale: d mu / d eta = mu (1 - mu).
      CHECK_THAT(habcast::test::read_pixel(unc, 1, row, col), Catch::Matchers::WithinRel(mu * (1 - mu) * se, 1e-6));
      CHECK_THAT(habcast::test::read_pixel(unc, 2, row, col), Catch::Matchers::WithinRel(logistic(eta - z * se), 1e-6));
      CHECK_THAT(habcast::test::read_pixel(unc, 3, row, col), Catch::Matchers::WithinRel(logistic(eta + z * se), 1e-6));
    }
  }

  SECTION("the maximum falls at the analytic optimum pixel") {
    // Optimum (t0, p0) = (1.75, 2.5) is at col = 8 (t0 + 2) = 30 and row = 8 p0 = 20.
    const std::vector<double> v = habcast::test::read_band(suit);
    const auto best = std::max_element(v.begin(), v.end()) - v.begin();
    CHECK(best / kWidth == 20);
    CHECK(best % kWidth == 30);
  }

  SECTION("nodata in one covariate makes every output nodata there") {
    CHECK(habcast::test::read_pixel(suit, 1, 5, 5) == -9999.0);
    for (int b = 1; b <= 3; ++b) CHECK(habcast::test::read_pixel(unc, b, 5, 5) == -9999.0);
    CHECK(habcast::test::read_pixel(scene.out + "/extrapolation.tif", 1, 5, 5) == 255.0);
  }

  SECTION("extrapolation flags and counts follow the training ranges exactly") {
    const std::string flags = scene.out + "/extrapolation.tif";
    CHECK(habcast::test::read_pixel(flags, 1, 20, 30) == 0.0);   // inside both ranges
    CHECK(habcast::test::read_pixel(flags, 1, 20, 8) == 0.0);    // tmin = -1: on the minimum, inside
    CHECK(habcast::test::read_pixel(flags, 1, 20, 7) == 1.0);    // tmin below
    CHECK(habcast::test::read_pixel(flags, 1, 33, 30) == 1.0);   // precip above
    CHECK(habcast::test::read_pixel(flags, 1, 32, 40) == 0.0);   // precip = 3 and tmin = 3: both on the edge
    const auto report = nlohmann::json::parse(habcast::test::read_text(scene.out + "/report.json"));
    const auto& cov = report["extrapolation"]["covariates"];
    // tmin below -1: cols 0..7 (8 x 48, minus the nodata pixel); above 3: cols 41..63 (23 x 48).
    CHECK(cov["tmin"]["below_pixels"] == 8 * 48 - 1);
    CHECK(cov["tmin"]["above_pixels"] == 23 * 48);
    // precip below 1.5: rows 0..7 (8 x 64, minus nodata); above 3: rows 33..47 (15 x 64).
    CHECK(cov["precip"]["below_pixels"] == 8 * 64 - 1);
    CHECK(cov["precip"]["above_pixels"] == 15 * 64);
    // In range for both: cols 8..40 (33) x rows 8..32 (25).
    CHECK(report["extrapolation"]["checked_pixels"] == 64 * 48 - 1);
    CHECK(report["extrapolation"]["flagged_pixels"] == 64 * 48 - 1 - 33 * 25);
    CHECK(report["pixels"]["predicted"] == 64 * 48 - 1);
    // 100 m pixels: 1 ha each.
    CHECK(report["extrapolation"]["flagged_area_ha"].get<double>() == Approx(64 * 48 - 1 - 33 * 25));
  }
}

TEST_CASE("outputs are bit-identical for any number of threads", "[predict][determinism]") {
  Scene scene;
  const std::vector<std::string> files{"suitability.tif", "uncertainty.tif", "extrapolation.tif", "novelty.tif",
                                       "least_similar.tif"};
  std::vector<std::vector<double>> first;
  std::map<std::string, std::vector<std::string>> first_bytes;  // per window size
  // Output blocks of 16 x 16 (12 per band) so that block order matters; windows of 16 match them,
  // windows of 24 leave blocks that straddle windows and are complete only a window row later.
  for (const auto& [threads, window] : {std::pair{"1", "16"}, {"2", "16"}, {"3", "16"}, {"5", "16"}, {"1", "24"},
                                        {"2", "24"}, {"5", "24"}}) {
    const std::string out = scene.dir.file(std::string("out") + threads + "-" + window);
    REQUIRE(habcast::test::run_cli({"predict", scene.model, "-o", out, "--threads", threads, "--block-size", window, "-q",
                                    "--co", "BLOCKXSIZE=16", "--co", "BLOCKYSIZE=16"}) == 0);
    std::vector<std::vector<double>> bands;
    std::vector<std::string> bytes;
    for (const std::string& file : files) {
      bytes.push_back(habcast::test::read_text(out + "/" + file));
      const int count = (file == "uncertainty.tif" || file == "novelty.tif") ? 3 : 1;
      for (int b = 1; b <= count; ++b) bands.push_back(habcast::test::read_band(out + "/" + file, b));
    }
    INFO("threads = " << threads << ", --block-size " << window);
    if (first.empty()) first = bands;
    for (std::size_t i = 0; i < bands.size(); ++i)
      CHECK(std::memcmp(bands[i].data(), first[i].data(), bands[i].size() * sizeof(double)) == 0);
    // The files themselves are byte-identical too (same blocks, same codec, same order). Blocks go
    // to the file as windows complete them, so the order, not the pixels, follows --block-size.
    auto [same_window, inserted] = first_bytes.emplace(window, bytes);
    if (inserted) continue;
    for (std::size_t i = 0; i < files.size(); ++i) {
      INFO(files[i]);
      CHECK(bytes[i] == same_window->second[i]);
    }
  }
}
