// End to end on rasters laid out so that the training hull's boundary crosses known pixels.
// tmin = col / 4 and precip = row / 4 (model values = raw values, exact in binary), training
// samples (0,0), (4,0), (0,4), (1,1): the range box is [0,4]^2 and the hull is the triangle
// tmin >= 0, precip >= 0, tmin + precip <= 4, i.e. col + row <= 16. The model has the
// interaction tmin:precip, so the pair's 2-D hull is the same triangle.
#include <catch2/catch.hpp>
#include <Eigen/Dense>
#include <gdal_priv.h>
#include <gdal_rat.h>
#include <cmath>
#include <nlohmann/json.hpp>
#include <string>

#include "raster/gdal_session.hpp"
#include "test_support.hpp"

namespace {

using habcast::test::GridSpec;
using habcast::test::TempDir;
constexpr int kWidth = 24, kHeight = 20;

struct Scene {
  TempDir dir{"domain-raster"};
  std::string model = dir.file("model.toml");
  Scene() {
    const GridSpec grid{kWidth, kHeight};
    habcast::test::write_raster(dir.file("tmin.tif"), grid, "Float32", [](int, int c) { return c / 4.0; });
    habcast::test::write_raster(dir.file("precip.tif"), grid, "Float32", [](int r, int) { return r / 4.0; });
    habcast::test::write_text(model,
                              "habcast_model = 1\n[model]\nfamily = \"binomial\"\n[training]\nsamples = \"train.csv\"\n"
                              "[covariates.tmin]\nunits = \"degC\"\nraster = \"tmin.tif\"\n"
                              "[covariates.precip]\nunits = \"mm\"\nraster = \"precip.tif\"\n"
                              "[coefficients]\nterms = [\"(Intercept)\", \"tmin\", \"precip\", \"tmin:precip\"]\n"
                              "estimates = [0.1, 0.2, -0.3, 0.05]\n");
    habcast::test::write_text(dir.file("train.csv"), "tmin,precip\n0,0\n4,0\n0,4\n1,1\n");
  }
};

/// Flags of the range, hull and pair checks, from the layout alone.
int geometric_flag(int row, int col) {
  if (col > 16 || row > 16) return 1;
  return col + row > 16 ? 2 + 16 : 0;
}

/// NT2 of (t, p) computed directly (centroid, covariance with divisor n - 1, its inverse), not
/// through habcast's whitening: Mesgaran et al. 2014.
struct DirectNt2 {
  Eigen::Vector2d mean;
  Eigen::Matrix2d inverse;
  double max_distance = 0.0;
  DirectNt2() {
    Eigen::Matrix<double, 4, 2> X;
    X << 0, 0, 4, 0, 0, 4, 1, 1;
    mean = X.colwise().mean().transpose();
    const Eigen::Matrix<double, 4, 2> c = X.rowwise() - mean.transpose();
    inverse = (c.transpose() * c / 3.0).inverse();
    for (int i = 0; i < 4; ++i) max_distance = std::max(max_distance, distance(X(i, 0), X(i, 1)));
  }
  [[nodiscard]] double distance(double t, double p) const {
    const Eigen::Vector2d v(t - mean[0], p - mean[1]);
    return std::sqrt(v.dot(inverse * v));
  }
  // NT2: ratio of squared distances (Mesgaran et al. 2014, from memory).
  [[nodiscard]] double operator()(double t, double p) const {
    return distance(t, p) * distance(t, p) / (max_distance * max_distance);
  }
};

}  // namespace

TEST_CASE("hull and pair flags are exact where the hull boundary crosses the raster", "[domain][raster]") {
  Scene s;
  const std::string out = s.dir.file("out");
  std::string err;
  REQUIRE(habcast::test::run_cli({"predict", s.model, "-o", out, "-q", "--checks", "range,hull,pairs"}, nullptr, &err) == 0);
  const std::vector<double> flags = habcast::test::read_band(out + "/extrapolation.tif");
  int wrong = 0;
  for (int r = 0; r < kHeight; ++r)
    for (int c = 0; c < kWidth; ++c) {
      INFO("row " << r << " col " << c);
      if (flags[static_cast<std::size_t>(r * kWidth + c)] != geometric_flag(r, c) && ++wrong < 5)
        CHECK(flags[static_cast<std::size_t>(r * kWidth + c)] == geometric_flag(r, c));
    }
  CHECK(wrong == 0);
  // On the hull's edge (col + row = 16) inside; one pixel further out.
  CHECK(flags[8 * kWidth + 8] == 0.0);
  CHECK(flags[8 * kWidth + 9] == 18.0);

  // 136 pixels are in range but outside the triangle: sum over rows 0..16 of row. 100 m pixels:
  // 1 ha each.
  const auto report = nlohmann::json::parse(habcast::test::read_text(out + "/report.json"));
  const auto& ex = report["extrapolation"];
  CHECK(ex["causes"]["outside_hull"]["pixels"] == 136);
  CHECK(ex["causes"]["outside_hull"]["checked"] == true);
  CHECK(ex["causes"]["outside_hull"]["area_ha"].get<double>() == Approx(136.0));
  CHECK(ex["causes"]["outside_pair_hull"]["pixels"] == 136);
  CHECK(ex["causes"]["novel_combination"]["checked"] == false);
  CHECK(ex["novelty"]["pairs"][0]["outside_pixels"] == 136);
  CHECK(ex["novelty"]["pairs"][0]["terms"][0] == "tmin:precip");
  CHECK(ex["novelty"]["hull"]["facets"] == 3);
  CHECK_THAT(err, Catch::Matchers::Contains("(136 ha) combine tmin and precip in a way never seen together"));
  CHECK_THAT(err, Catch::Matchers::Contains("tmin:precip"));
  // Only the checks asked for: without mess and nt2 there is nothing for the novelty rasters.
  CHECK(habcast::test::list_dir(out) == std::vector<std::string>{"extrapolation.tif", "extrapolation.tif.aux.xml",
                                                                 "report.json", "suitability.tif"});
}

TEST_CASE("novelty.tif and least_similar.tif hold MESS, NT1, NT2 and the least similar covariate", "[domain][raster]") {
  Scene s;
  const std::string out = s.dir.file("out");
  REQUIRE(habcast::test::run_cli({"predict", s.model, "-o", out, "-q", "--threads", "2"}) == 0);
  const std::string novelty = out + "/novelty.tif";
  const std::string least_similar = out + "/least_similar.tif";

  // MESS by hand (Elith et al. 2010): training tmin and precip are both {0, 0, 1, 4}.
  // (row 4, col 8): tmin 2, f = 75 -> 2 x 25 = 50; precip 1, f = 50 -> 100. MESS 50, tmin limits.
  CHECK(habcast::test::read_pixel(novelty, 1, 4, 8) == Approx(50.0).margin(1e-4));
  CHECK(habcast::test::read_pixel(novelty, 2, 4, 8) == 0.0);
  CHECK(habcast::test::read_pixel(least_similar, 1, 4, 8) == 1.0);
  // (row 0, col 20): tmin 5 above the maximum 4: f = 100 -> 100 (4 - 5) / 4 = -25; precip 0 at its
  // minimum: 0. MESS -25; NT1 (Mesgaran et al. 2014) = (4 - 5) / 4 = -0.25.
  CHECK(habcast::test::read_pixel(novelty, 1, 0, 20) == Approx(-25.0).margin(1e-4));
  CHECK(habcast::test::read_pixel(novelty, 2, 0, 20) == Approx(-0.25).margin(1e-7));
  CHECK(habcast::test::read_pixel(least_similar, 1, 0, 20) == 1.0);
  // (row 18, col 2): precip 4.5 above 4: precip limits.
  CHECK(habcast::test::read_pixel(least_similar, 1, 18, 2) == 2.0);

  // NT2 at every pixel against the direct computation, and flag 8 exactly where NT2 > 1 in range.
  const DirectNt2 nt2;
  const std::vector<double> band3 = habcast::test::read_band(novelty, 3);
  const std::vector<double> flags = habcast::test::read_band(out + "/extrapolation.tif");
  int wrong = 0, novel = 0;
  for (int r = 0; r < kHeight; ++r)
    for (int c = 0; c < kWidth; ++c) {
      const auto i = static_cast<std::size_t>(r * kWidth + c);
      const double expected = nt2(c / 4.0, r / 4.0);
      const int base = geometric_flag(r, c);
      const int flag = base | (base != 1 && expected > 1.0 ? 8 : 0);
      novel += (flag & 8) ? 1 : 0;
      if (std::fabs(band3[i] - expected) > 1e-6 * (1 + expected) || flags[i] != flag) ++wrong;
    }
  CHECK(wrong == 0);
  CHECK(novel > 0);  // the layout does exercise bit 8

  // The attribute table and category names name the covariates.
  habcast::ensure_gdal();
  GDALDataset* ds = GDALDataset::Open(least_similar.c_str(), GDAL_OF_RASTER | GDAL_OF_READONLY);
  REQUIRE(ds != nullptr);
  const GDALRasterAttributeTable* rat = ds->GetRasterBand(1)->GetDefaultRAT();
  REQUIRE(rat != nullptr);
  REQUIRE(rat->GetRowCount() == 2);
  CHECK(rat->GetValueAsInt(0, 0) == 1);
  CHECK(std::string(rat->GetValueAsString(0, 1)) == "tmin");
  CHECK(std::string(rat->GetValueAsString(1, 1)) == "precip");
  CHECK(std::string(rat->GetValueAsString(1, 2)) == "mm");
  char** names = ds->GetRasterBand(1)->GetCategoryNames();
  REQUIRE(names != nullptr);
  CHECK(std::string(names[2]) == "precip");
  GDALClose(GDALDataset::ToHandle(ds));
}

TEST_CASE("no novelty rasters with --no-novelty-rasters; the flags are unchanged", "[domain][raster]") {
  Scene s;
  const std::string a = s.dir.file("a"), b = s.dir.file("b");
  REQUIRE(habcast::test::run_cli({"predict", s.model, "-o", a, "-q"}) == 0);
  REQUIRE(habcast::test::run_cli({"predict", s.model, "-o", b, "-q", "--no-novelty-rasters"}) == 0);
  CHECK(habcast::test::list_dir(b) == std::vector<std::string>{"extrapolation.tif", "extrapolation.tif.aux.xml",
                                                               "report.json", "suitability.tif"});
  CHECK(habcast::test::read_band(a + "/extrapolation.tif") == habcast::test::read_band(b + "/extrapolation.tif"));
}

TEST_CASE("bad training tables for the joint checks give a clear message and no output", "[domain][errors]") {
  Scene s;
  const std::string out = s.dir.file("out");
  const auto run = [&](const std::string& csv, std::string& err) {
    habcast::test::write_text(s.dir.file("train.csv"), csv);
    return habcast::test::run_cli({"predict", s.model, "-o", out, "-q"}, nullptr, &err);
  };
  std::string err;
  SECTION("a missing column") {
    CHECK(run("tmin,rain\n0,0\n4,0\n0,4\n", err) == 3);
    CHECK_THAT(err, Catch::Matchers::Contains("train.csv:1:") && Catch::Matchers::Contains("no column named \"precip\""));
  }
  SECTION("a non-numeric cell") {
    CHECK(run("tmin,precip\n0,0\nwarm,4\n", err) == 3);
    CHECK_THAT(err, Catch::Matchers::Contains("train.csv:3:") && Catch::Matchers::Contains("\"warm\""));
  }
  SECTION("a NaN cell") {
    CHECK(run("tmin,precip\n0,0\nNaN,4\n4,0\n", err) == 3);
    CHECK_THAT(err, Catch::Matchers::Contains("train.csv:3:") && Catch::Matchers::Contains("\"NaN\"") &&
                        Catch::Matchers::Contains("not a finite number"));
  }
  SECTION("a single row") {
    CHECK(run("tmin,precip\n1,1\n", err) == 3);
    CHECK_THAT(err, Catch::Matchers::Contains("train.csv") && Catch::Matchers::Contains("1 sample records tmin") &&
                        Catch::Matchers::Contains("--checks range"));
  }
  SECTION("a covariate with zero variance") {
    CHECK(run("tmin,precip\n2.5,0\n2.5,4\n2.5,1\n", err) == 3);
    CHECK_THAT(err, Catch::Matchers::Contains("every sample has tmin = 2.5 (zero variance)"));
  }
  CHECK(habcast::test::list_dir(out).empty());
}

TEST_CASE("unknown checks and bad thresholds are usage errors", "[domain][errors]") {
  Scene s;
  std::string err;
  CHECK(habcast::test::run_cli({"predict", s.model, "-o", s.dir.file("o"), "--checks", "range,convex"}, nullptr, &err) == 2);
  CHECK(habcast::test::run_cli({"predict", s.model, "-o", s.dir.file("o"), "--nt2-threshold", "0"}, nullptr, &err) == 2);
  CHECK_THAT(err, Catch::Matchers::Contains("--nt2-threshold must be positive"));
  CHECK(habcast::test::list_dir(s.dir.file("o")).empty());
}
