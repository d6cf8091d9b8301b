// Messages that say what is wrong in the user's terms: creation options checked up front against
// GDAL's own option list (exit 2 naming the option, for predict and for a batch manifest), a
// storage failure named as such, and a map without a predicted pixel explained.
#include <cerrno>
#include <catch2/catch.hpp>
#include <filesystem>
#include <string>

#include "batch_test_scene.hpp"
#include "raster/output_raster.hpp"
#include "test_support.hpp"

using Catch::Matchers::Contains;

namespace {

struct MessageScene {
  habcast::test::TempDir dir{"messages"};
  std::string model = dir.file("m.toml");
  explicit MessageScene(bool empty_raster = false) {
    habcast::test::GridSpec grid{8, 8};
    habcast::test::write_raster(dir.file("x.tif"), grid, "Float32", [](int r, int c) { return r * 0.7 + c * 0.3; });
    habcast::test::write_raster(dir.file("y.tif"), grid, "Float32",
                                [&](int r, int c) { return empty_raster ? -1.0 : r + c; }, true, -1.0);
    habcast::test::write_text(model, "habcast_model = 1\n[model]\nfamily = \"binomial\"\n"
                                     "[covariates.x]\nraster = \"x.tif\"\n[covariates.y]\nraster = \"y.tif\"\n"
                                     "[coefficients]\nterms = [\"(Intercept)\", \"x\", \"y\"]\nestimates = [0.1, 0.2, -0.1]\n");
  }
};

}  // namespace

TEST_CASE("Creation options are checked against GDAL's list before any work, naming the option", "[safety][messages]") {
  MessageScene s;
  const std::string out = s.dir.file("out");
  const std::vector<std::pair<std::string, std::string>> cases = {
      {"BLOCKXSIZE=7", "multiples of 16"},      // libtiff's rule for tiles
      {"COMPRESS=JPEG", "cannot store the Float32"},
      {"COMPRESS=SQUEEZE", "takes one of"},     // not among GDAL's values for COMPRESS
      {"SQUEEZE=YES", "no creation option SQUEEZE"},
      {"BLOCKYSIZE=big", "whole number"},
  };
  for (const auto& [option, message] : cases) {
    INFO(option);
    std::string err;
    CHECK(habcast::test::run_cli({"predict", s.model, "-o", out, "-q", "--co", option}, nullptr, &err) == 2);
    CHECK_THAT(err, Contains("--co " + option) && Contains(message));
    CHECK_FALSE(std::filesystem::exists(out));
  }
  CHECK(habcast::test::run_cli({"predict", s.model, "-o", out, "-q", "--co", "compress=zstd", "--co", "BLOCKXSIZE=128"}) == 0);
}

TEST_CASE("A bad creation option in a batch manifest stops the run before any tile", "[safety][messages]") {
  habcast::test::BatchScene s(1, 2, 20, 16);
  s.write_manifest("[predict]\ncreation_options = [\"COMPRESS=JPEG\"]\n");
  std::string err;
  CHECK(s.run({"-q"}, nullptr, &err) == 2);
  CHECK_THAT(err, Contains("creation_options") && Contains("COMPRESS=JPEG") && Contains("region.toml"));
  CHECK_FALSE(std::filesystem::exists(s.out() + "/tiles"));
}

TEST_CASE("A storage failure is named: no space left, a quota, a file-size limit", "[safety][messages]") {
  habcast::test::TempDir dir("storage");
  const std::string folder = dir.path().string();
  CHECK_THAT(habcast::storage_problem(folder, ENOSPC), Contains("no space left on the device holding " + folder));
  CHECK_THAT(habcast::storage_problem(folder, EDQUOT), Contains("quota"));
  CHECK_THAT(habcast::storage_problem(folder, EFBIG), Contains("file-size limit"));
  CHECK(habcast::storage_problem(folder, EACCES).empty());  // this folder has room: not a storage problem
}

TEST_CASE("A map without a predicted pixel warns and names the empty covariate", "[safety][messages]") {
  MessageScene s(true);
  std::string out, err;
  CHECK(habcast::test::run_cli({"predict", s.model, "-o", s.dir.file("out"), "-q"}, &out, &err) == 0);
  CHECK_THAT(err, Contains("No pixel was predicted") && Contains("y (") && Contains("y.tif"));
  CHECK_THAT(err, !Contains("x ("));
}
