// fit, evaluate --model and batch take covariates off the target grid too. The check: a covariate padded
// by whole pixels on every side (same lattice, larger extent: GDAL copies such pixels exactly)
// must give the very same fitted model and the same evaluation as the raster itself.
#include <gdal_utils.h>

#include <catch2/catch.hpp>
#include <string>
#include <vector>

#include "batch/tile_record.hpp"
#include "core/model/model_file.hpp"
#include "raster/gdal_session.hpp"
#include "test_support.hpp"

namespace {

std::string sample(const std::string& name) { return habcast::test::source_path("sample-rasters/" + name); }

/// `source` with `pad` nodata pixels added on every side, written by GDAL itself.
void write_padded(const std::string& source, const std::string& out, int pad) {
  habcast::ensure_gdal();
  GDALDatasetH in = GDALOpen(source.c_str(), GA_ReadOnly);
  REQUIRE(in != nullptr);
  const std::string x = std::to_string(-pad), y = x;
  const std::string w = std::to_string(GDALGetRasterXSize(in) + 2 * pad), h = std::to_string(GDALGetRasterYSize(in) + 2 * pad);
  std::vector<std::string> args{"-srcwin", x, y, w, h, "-a_nodata", "-9999", "-co", "TILED=YES"};
  std::vector<char*> argv;
  for (std::string& a : args) argv.push_back(a.data());
  argv.push_back(nullptr);
  GDALTranslateOptions* options = GDALTranslateOptionsNew(argv.data(), nullptr);
  GDALDatasetH padded = GDALTranslate(out.c_str(), in, options, nullptr);
  GDALTranslateOptionsFree(options);
  REQUIRE(padded != nullptr);
  GDALClose(padded);
  GDALClose(in);
}

std::vector<std::string> fit_args(const std::string& tmin, const std::string& model) {
  return {"fit", sample("training.csv"), "--crs", "EPSG:32630", "-c", "tmin=" + tmin, "-c", "precip=" + sample("precip.tif"),
          "-c", "slope=" + sample("slope.tif"), "-f", "presence ~ tmin + tmin^2 + precip + slope", "--grid-of", "precip",
          "-o", model};
}

}  // namespace

TEST_CASE("fit samples a covariate off the target grid through the warper, giving the same model", "[fit][align]") {
  habcast::test::TempDir dir("align-fit");
  write_padded(sample("tmin.tif"), dir.file("tmin_padded.tif"), 7);
  REQUIRE(habcast::test::run_cli(fit_args(sample("tmin.tif"), dir.file("plain.toml"))) == 0);
  std::string err;
  REQUIRE(habcast::test::run_cli(fit_args(dir.file("tmin_padded.tif"), dir.file("padded.toml")), nullptr, &err) == 0);
  const habcast::ModelSpec plain = habcast::read_model_file(dir.file("plain.toml"));
  const habcast::ModelSpec padded = habcast::read_model_file(dir.file("padded.toml"));
  REQUIRE(plain.estimates.size() == padded.estimates.size());
  for (std::size_t i = 0; i < plain.estimates.size(); ++i) CHECK(padded.estimates[i] == plain.estimates[i]);

  // A --resampling choice is written into the model, so predict resamples as the fit did.
  std::vector<std::string> args = fit_args(dir.file("tmin_padded.tif"), dir.file("cubic.toml"));
  args.insert(args.end(), {"--resampling", "tmin=cubic"});
  REQUIRE(habcast::test::run_cli(args) == 0);
  const habcast::ModelSpec cubic = habcast::read_model_file(dir.file("cubic.toml"));
  REQUIRE(cubic.covariates[static_cast<std::size_t>(cubic.covariate_index("tmin"))].resampling);
  CHECK(*cubic.covariates[static_cast<std::size_t>(cubic.covariate_index("tmin"))].resampling == habcast::Resampling::cubic);
}

TEST_CASE("evaluate --model scores a covariate off the grid through the warper, with the same result", "[evaluate][align]") {
  habcast::test::TempDir dir("align-evaluate");
  write_padded(sample("slope.tif"), dir.file("slope_padded.tif"), 5);
  const auto evaluate = [&](const std::string& slope, std::string* out) {
    return habcast::test::run_cli({"evaluate", sample("training.csv"), "--crs", "EPSG:32630", "--model", sample("demo-model.toml"),
                                   "--response", "presence", "-c", "slope=" + slope, "--grid-of", "tmin"},
                                  out);
  };
  std::string plain;
  std::string padded;
  REQUIRE(evaluate(sample("slope.tif"), &plain) == 0);
  REQUIRE(evaluate(dir.file("slope_padded.tif"), &padded) == 0);
  // The text differs only in the line naming the predictions (it names the warped covariate).
  const auto without_source = [](const std::string& text) {
    std::string kept;
    std::size_t start = 0;
    while (start < text.size()) {
      const std::size_t end = text.find('\n', start);
      const std::string line = text.substr(start, end == std::string::npos ? std::string::npos : end - start + 1);
      if (line.rfind("Predictions:", 0) != 0) kept += line;
      if (end == std::string::npos) break;
      start = end + 1;
    }
    return kept;
  };
  CHECK(without_source(padded) == without_source(plain));
  CHECK(padded.find("aligned by GDAL's warper") != std::string::npos);
}

// batch: a tile's record must go stale when the alignment options change, and records written
// without them must stay valid (the fingerprint gains an "alignment" entry only when one is set).

TEST_CASE("a batch tile's fingerprint holds the alignment options only when they are set", "[batch][align]") {
  habcast::Tile tile{"t1", {}, {}};
  habcast::TileSettings plain;
  const auto without = habcast::tile_fingerprint(tile, "hash", plain, "1.0");
  CHECK_FALSE(without["options"].contains("alignment"));
  habcast::TileSettings grid_of = plain;
  grid_of.alignment.target.covariate = "slope";
  const auto with_grid = habcast::tile_fingerprint(tile, "hash", grid_of, "1.0");
  CHECK(with_grid["options"]["alignment"]["grid_of"] == "slope");
  habcast::TileSettings method = plain;
  method.alignment.resampling["tmin"] = habcast::Resampling::cubic;
  CHECK(habcast::tile_fingerprint(tile, "hash", method, "1.0")["options"]["alignment"]["resampling"]["tmin"] == "cubic");
  CHECK(with_grid != without);
}
