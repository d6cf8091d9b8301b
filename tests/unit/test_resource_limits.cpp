// Absurd inputs are refused before any work or output, with a message that says which limit and
// which option or file to change (docs/limits.md).
#include <catch2/catch.hpp>
#include <string>

#include "core/base/error.hpp"
#include "core/model/model_file.hpp"
#include "pipeline/resource_limits.hpp"
#include "test_support.hpp"

namespace {

using Catch::Matchers::Contains;
using habcast::test::GridSpec;
using habcast::test::TempDir;

std::string model_with_terms(int count) {
  std::string terms = "\"(Intercept)\"";
  std::string estimates = "0";
  for (int i = 1; i < count; ++i) {
    terms += ", \"x^" + std::to_string(1 + i % 9) + "\"";
    estimates += ", 0";
  }
  return "habcast_model = 1\n[model]\nfamily = \"binomial\"\n[covariates.x]\nraster = \"x.tif\"\n"
         "[coefficients]\nterms = [" + terms + "]\nestimates = [" + estimates + "]\n";
}

}  // namespace

TEST_CASE("a model with more than 500 terms is refused at its terms line", "[limits]") {
  CHECK_THROWS_WITH(habcast::parse_model_text(model_with_terms(501), "big.toml"),
                    Contains("big.toml:7:") && Contains("501 labels") && Contains("at most 500"));
  // 500 passes the limit and fails only on what is really wrong: repeated terms.
  CHECK_THROWS_WITH(habcast::parse_model_text(model_with_terms(500), "big.toml"), !Contains("at most 500"));
}

TEST_CASE("working memory grows with window size, threads, covariates and terms", "[limits]") {
  // Hand count for 1000 pixels, 2 covariates, 3 terms, 1 thread: reading 1000 * 17, chunk
  // 1000 * 8 * (2 + 6 + 7), two finished windows 2 * 1000 * 18.
  CHECK(habcast::predict_working_memory(1000, 2, 3, 1) == 17000 + 120000 + 36000);
  CHECK(habcast::predict_working_memory(1000, 2, 3, 4) == 4 * habcast::predict_working_memory(1000, 2, 3, 1));
  // Default settings (512 x 512 windows, 8 covariates, 50 terms, 16 threads) fit the 2 GiB default.
  CHECK(habcast::predict_working_memory(512 * 512, 8, 50, 16) < (2048LL << 20));
  // The largest window the CLI allows does not, on any thread count.
  CHECK(habcast::predict_working_memory(16384LL * 16384, 1, 1, 1) > (2048LL << 20));
}

TEST_CASE("windows times threads beyond --max-memory are refused before any output", "[limits]") {
  TempDir dir{"limits"};
  GridSpec grid{100, 100};
  grid.block = 0;  // striped: one window holds all 10,000 pixels
  habcast::test::write_raster(dir.file("x.tif"), grid, "Float32", [](int r, int c) { return r + c; });
  habcast::test::write_text(dir.file("m.toml"), model_with_terms(2));
  const std::string out = dir.file("out");
  std::string err;
  // 64 threads: 64 * (10,000 * 9 + 4096 * 8 * 12) + 128 * 10,000 * 18 bytes = about 52 MiB.
  CHECK(habcast::test::run_cli({"predict", dir.file("m.toml"), "-o", out, "--threads", "64", "--block-size", "16384",
                                "--max-memory", "16", "-q"},
                               nullptr, &err) == 2);
  CHECK_THAT(err, Contains("more than --max-memory 16 MiB") && Contains("--block-size") && Contains("--threads"));
  CHECK(habcast::test::list_dir(out).empty());
  CHECK(habcast::test::run_cli({"predict", dir.file("m.toml"), "-o", out, "--threads", "2", "-q"}) == 0);
}

TEST_CASE("a raster whose header claims an absurd size is refused, naming the file", "[limits]") {
  TempDir dir{"limits-size"};
  // A VRT costs nothing to open whatever size it claims: 2,000,000 x 1,000,000 pixels.
  habcast::test::write_text(dir.file("huge.vrt"),
                            "<VRTDataset rasterXSize=\"2000000\" rasterYSize=\"1000000\">\n"
                            "  <VRTRasterBand dataType=\"Float32\" band=\"1\"/>\n</VRTDataset>\n");
  habcast::test::write_text(dir.file("m.toml"), model_with_terms(2));
  const std::string out = dir.file("out");
  std::string err;
  CHECK(habcast::test::run_cli({"predict", dir.file("m.toml"), "-c", "x=" + dir.file("huge.vrt"), "-o", out, "-q"},
                               nullptr, &err) == 3);
  CHECK_THAT(err, Contains("huge.vrt") && Contains("2000000 x 1000000") && Contains("1099511627776"));
  CHECK(habcast::test::list_dir(out).empty());
}
