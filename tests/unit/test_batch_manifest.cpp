// Batch manifests: a pattern finds tiles on disk, explicit [[tile]] entries are checked against the
// model, and every mistake is named with the manifest's line and what to do.
#include <catch2/catch.hpp>
#include <filesystem>
#include <string>

#include "batch/manifest.hpp"
#include "batch/tile_list.hpp"
#include "batch_test_scene.hpp"
#include "core/base/error.hpp"
#include "core/model/model_file.hpp"

namespace {

using Catch::Matchers::Contains;
using habcast::test::BatchScene;

std::string manifest_error(const BatchScene& s, const std::string& text) {
  habcast::test::write_text(s.manifest(), text);
  try {
    const habcast::BatchManifest m = habcast::read_batch_manifest(s.manifest());
    const habcast::ModelSpec spec = habcast::read_model_file(m.model_path);
    habcast::list_tiles(m, spec);
  } catch (const habcast::InputError& e) {
    return e.what();
  }
  return "no error";
}

const std::string kHead = "habcast_batch = 1\nmodel = \"model.toml\"\noutput = \"out\"\n";

}  // namespace

TEST_CASE("a pattern finds every tile folder and resolves paths against the manifest", "[batch]") {
  BatchScene s(2, 3, 20, 15);
  const habcast::BatchManifest m = habcast::read_batch_manifest(s.manifest());
  CHECK(m.output_dir == std::filesystem::path(s.out()).lexically_normal().string());
  const auto tiles = habcast::list_tiles(m, habcast::read_model_file(m.model_path));
  REQUIRE(tiles.size() == 6);
  CHECK(tiles.front().id == "t0_0");
  CHECK(tiles.back().id == "t1_2");
  REQUIRE(tiles[4].rasters.size() == 2);
  CHECK(tiles[4].rasters[0].first == "elev");  // model order, not file order
  CHECK(tiles[4].rasters[1].second == s.file("tiles/t1_1/cover.tif"));
}

TEST_CASE("explicit tiles and shared predict options are read from the manifest", "[batch]") {
  BatchScene s(1, 2, 20, 15);
  habcast::test::write_text(s.manifest(), kHead +
                                              "[predict]\nlevel = 0.9\nblock_size = 64\ncreation_options = [\"COMPRESS=LZW\"]\n"
                                              "overviews = true\nmax_extrapolated = 12.5\n"
                                              "[[tile]]\nid = \"west\"\nelev = \"tiles/t0_0/elev.tif\"\ncover = \"tiles/t0_0/cover.tif\"\n"
                                              "[[tile]]\nid = \"east\"\ncover = \"tiles/t0_1/cover.tif\"\nelev = \"tiles/t0_1/elev.tif\"\n");
  const habcast::BatchManifest m = habcast::read_batch_manifest(s.manifest());
  CHECK(m.level == 0.9);
  CHECK(m.block_size == 64);
  CHECK(m.creation_options == std::vector<std::string>{"COMPRESS=LZW"});
  CHECK(m.overviews);
  CHECK(m.max_extrapolated_percent == 12.5);
  const auto tiles = habcast::list_tiles(m, habcast::read_model_file(m.model_path));
  REQUIRE(tiles.size() == 2);
  CHECK(tiles[0].id == "east");  // sorted by id
  CHECK(tiles[0].rasters[0].second == s.file("tiles/t0_1/elev.tif"));
}

TEST_CASE("manifest mistakes are reported with the line and what to do", "[batch]") {
  BatchScene s(1, 2, 20, 15);
  SECTION("a covariate the model does not have") {
    const std::string e = manifest_error(
        s, kHead + "[[tile]]\nid = \"a\"\nelev = \"tiles/t0_0/elev.tif\"\ncover = \"x.tif\"\nslope = \"s.tif\"\n");
    CHECK_THAT(e, Contains("region.toml:8:") && Contains("\"slope\"") && Contains("its covariates are elev, cover"));
  }
  SECTION("a tile without a raster for one of the model's covariates") {
    const std::string e = manifest_error(s, kHead + "[[tile]]\nid = \"a\"\nelev = \"tiles/t0_0/elev.tif\"\n");
    CHECK_THAT(e, Contains("region.toml:5:") && Contains("no raster for covariate \"cover\""));
  }
  SECTION("a pattern that matches nothing") {
    const std::string e = manifest_error(s, kHead + "\n[tiles]\npattern = \"tile/{tile}/{covariate}.tif\"\n");
    CHECK_THAT(e, Contains("region.toml:6:") && Contains("matches no file") && Contains("tile/{tile}/elev.tif"));
  }
  SECTION("a pattern without a placeholder") {
    const std::string e = manifest_error(s, kHead + "[tiles]\npattern = \"tiles/{tile}/elev.tif\"\n");
    CHECK_THAT(e, Contains("region.toml:5:") && Contains("{covariate}"));
  }
  SECTION("the same tile id twice in the table") {
    const std::string tile = "[[tile]]\nid = \"a\"\nelev = \"e.tif\"\ncover = \"c.tif\"\n";
    const std::string e = manifest_error(s, kHead + tile + tile);
    CHECK_THAT(e, Contains("region.toml:9:") && Contains("duplicate tile id \"a\"") && Contains("line 5"));
  }
  SECTION("a table tile with the id of a pattern tile") {
    const std::string e = manifest_error(s, kHead + "[tiles]\npattern = \"tiles/{tile}/{covariate}.tif\"\n"
                                                    "[[tile]]\nid = \"t0_1\"\nelev = \"e.tif\"\ncover = \"c.tif\"\n");
    CHECK_THAT(e, Contains("region.toml:7:") && Contains("duplicate tile id \"t0_1\"") && Contains("pattern on line 5"));
  }
  SECTION("an unknown key, a misspelt option and a bad value") {
    CHECK_THAT(manifest_error(s, kHead + "outptu = \"x\"\n[[tile]]\nid = \"a\"\n"),
               Contains("region.toml:4:") && Contains("unknown key \"outptu\""));
    CHECK_THAT(manifest_error(s, kHead + "[predict]\nlevels = 0.9\n"),
               Contains("region.toml:5:") && Contains("unknown key \"levels\" in [predict]"));
    CHECK_THAT(manifest_error(s, kHead + "[predict]\nlevel = 95\n"), Contains("region.toml:5:") && Contains("between 0 and 1"));
  }
  SECTION("a tile id that cannot name a folder") {
    CHECK_THAT(manifest_error(s, kHead + "[[tile]]\nid = \"../up\"\n"), Contains("region.toml:5:") && Contains("tile id"));
  }
  SECTION("no tiles at all, and not a manifest") {
    CHECK_THAT(manifest_error(s, kHead), Contains("no tiles"));
    CHECK_THAT(manifest_error(s, "model = \"model.toml\"\n"), Contains("habcast_batch = 1 is missing"));
    CHECK_THAT(manifest_error(s, kHead + "[tiles\n"), Contains("region.toml:4:") && Contains("not valid TOML"));
  }
}

TEST_CASE("manifest errors reach the command line as exit code 3 with the message", "[batch]") {
  BatchScene s(1, 2, 20, 15);
  habcast::test::write_text(s.manifest(), kHead + "[tiles]\npattern = \"nowhere/{tile}/{covariate}.tif\"\n");
  std::string err;
  CHECK(s.run({}, nullptr, &err) == 3);
  CHECK_THAT(err, Contains("region.toml:5:") && Contains("matches no file"));
  CHECK_FALSE(std::filesystem::exists(s.out()));
}

TEST_CASE("a pattern follows tile folders that are symbolic links", "[batch]") {
  BatchScene s(1, 2, 20, 15);
  std::filesystem::create_directories(s.file("store"));
  std::filesystem::rename(s.file("tiles/t0_1"), s.file("store/t0_1"));
  std::filesystem::create_directory_symlink(s.file("store/t0_1"), s.file("tiles/t0_1"));
  const habcast::BatchManifest m = habcast::read_batch_manifest(s.manifest());
  const auto tiles = habcast::list_tiles(m, habcast::read_model_file(m.model_path));
  REQUIRE(tiles.size() == 2);
  CHECK(tiles[1].id == "t0_1");
}

TEST_CASE("a manifest's scenarios give each tile its rasters by pattern or table, in the manifest's order",
          "[batch][scenarios]") {
  BatchScene s(1, 2, 20, 15);
  s.write_scenario_tile(0, 0, "ssp5", 10.0);
  s.write_scenario_tile(0, 1, "ssp5", 10.0);
  habcast::test::write_text(
      s.manifest(), kHead + "[predict]\nthreshold = 0.4\n[tiles]\npattern = \"tiles/{tile}/{covariate}.tif\"\n"
                            "[[scenario]]\nname = \"ssp5\"\ndescription = \"hotter\"\ncovariates = [\"elev\"]\n"
                            "pattern = \"tiles/{tile}/ssp5/{covariate}.tif\"\n"
                            "[[scenario]]\nname = \"open\"\ncovariates = [\"cover\"]\n"
                            "[scenario.tiles]\nt0_0 = { cover = \"open/west.tif\" }\nt0_1 = { cover = \"open/east.tif\" }\n");
  const habcast::BatchManifest m = habcast::read_batch_manifest(s.manifest());
  CHECK(m.threshold == 0.4);
  REQUIRE(m.scenarios.size() == 2);
  CHECK(m.scenarios[0].description == "hotter");
  const auto tiles = habcast::list_tiles(m, habcast::read_model_file(m.model_path));
  REQUIRE(tiles.size() == 2);
  REQUIRE(tiles[1].scenarios.size() == 2);
  CHECK(tiles[1].scenarios[0].name == "ssp5");
  CHECK(tiles[1].scenarios[0].rasters[0].second == s.file("tiles/t0_1/ssp5/elev.tif"));
  CHECK(tiles[1].scenarios[1].rasters[0] == std::make_pair(std::string("cover"), s.file("open/east.tif")));
}

TEST_CASE("scenario and model-set mistakes in a manifest are reported with the line and what to do",
          "[batch][scenarios][modelset]") {
  BatchScene s(1, 2, 20, 15);
  s.write_scenario_tile(0, 0, "warm", 10.0);
  const std::string tiles = "[tiles]\npattern = \"tiles/{tile}/{covariate}.tif\"\n";
  const std::string warm = "[[scenario]]\nname = \"warm\"\ncovariates = [\"elev\"]\npattern = \"tiles/{tile}/warm/{covariate}.tif\"\n";
  SECTION("model and models both given") {
    const std::string e = manifest_error(
        s, "habcast_batch = 1\nmodel = \"model.toml\"\nmodels = [\"model.toml\", \"b.toml\"]\noutput = \"out\"\n" + tiles);
    CHECK_THAT(e, Contains("region.toml:3:") && Contains("model (line 2) and models (line 3)"));
  }
  SECTION("a model set of one model, weights without a set, and weights of the wrong count") {
    CHECK_THAT(manifest_error(s, "habcast_batch = 1\nmodels = [\"model.toml\"]\noutput = \"out\"\n" + tiles),
               Contains("region.toml:2:") && Contains("two or more"));
    CHECK_THAT(manifest_error(s, kHead + "weights = [1.0, 2.0]\n" + tiles),
               Contains("region.toml:4:") && Contains("weights weigh the models of a set"));
    CHECK_THAT(manifest_error(s, "habcast_batch = 1\nmodels = [\"model.toml\", \"b.toml\"]\nweights = [1.0]\n"
                                 "output = \"out\"\n" + tiles),
               Contains("region.toml:3:") && Contains("1 weights for 2 models"));
    CHECK_THAT(manifest_error(s, "habcast_batch = 1\nmodels = [\"model.toml\", \"b.toml\"]\naverage_se = \"2001\"\n"
                                 "output = \"out\"\n" + tiles),
               Contains("region.toml:3:") && Contains("\"revised\"") && Contains("\"2002\""));
  }
  SECTION("a scenario without covariates, or without a place for its rasters") {
    CHECK_THAT(manifest_error(s, kHead + tiles + "[[scenario]]\nname = \"warm\"\npattern = \"x/{tile}.tif\"\n"),
               Contains("region.toml:7:") && Contains("needs covariates"));
    CHECK_THAT(manifest_error(s, kHead + tiles + "[[scenario]]\nname = \"warm\"\ncovariates = [\"elev\"]\n"),
               Contains("region.toml:7:") && Contains("add pattern"));
  }
  SECTION("scenario names: invalid, reserved by the region, or twice") {
    CHECK_THAT(manifest_error(s, kHead + tiles + "[[scenario]]\nname = \"baseline\"\ncovariates = [\"elev\"]\n"),
               Contains("region.toml:7:") && Contains("scenario name \"baseline\""));
    CHECK_THAT(manifest_error(s, kHead + tiles + "[[scenario]]\nname = \"tiles\"\ncovariates = [\"elev\"]\n"),
               Contains("region.toml:7:") && Contains("folder of tiles"));
    CHECK_THAT(manifest_error(s, kHead + tiles + "[[scenario]]\nname = \"suitability.vrt\"\ncovariates = [\"elev\"]\n"),
               Contains("region.toml:7:") && Contains("region files"));
    CHECK_THAT(manifest_error(s, kHead + tiles + warm + warm), Contains("region.toml:11:") && Contains("declared twice") &&
                                                                  Contains("line 7"));
  }
  SECTION("a pattern without {tile}, or one file for two covariates") {
    CHECK_THAT(manifest_error(s, kHead + tiles + "[[scenario]]\nname = \"warm\"\ncovariates = [\"elev\"]\npattern = \"w.tif\"\n"),
               Contains("region.toml:9:") && Contains("{tile}"));
    CHECK_THAT(manifest_error(s, kHead + tiles + "[[scenario]]\nname = \"warm\"\ncovariates = [\"elev\", \"cover\"]\n"
                                                 "pattern = \"tiles/{tile}/warm.tif\"\n"),
               Contains("region.toml:9:") && Contains("add {covariate}"));
  }
  SECTION("a covariate no model has, and a pattern that finds nothing") {
    CHECK_THAT(manifest_error(s, kHead + tiles + "[[scenario]]\nname = \"warm\"\ncovariates = [\"slope\"]\n"
                                                 "pattern = \"tiles/{tile}/warm/{covariate}.tif\"\n"),
               Contains("region.toml:8:") && Contains("\"slope\"") && Contains("its covariates are elev, cover"));
    CHECK_THAT(manifest_error(s, kHead + tiles + "[[scenario]]\nname = \"warm\"\ncovariates = [\"elev\"]\n"
                                                 "pattern = \"tiles/{tile}/hot/{covariate}.tif\"\n"),
               Contains("region.toml:9:") && Contains("finds no file for any tile"));
  }
  SECTION("a table entry for an unknown tile, one also found by the pattern, or lacking a covariate") {
    CHECK_THAT(manifest_error(s, kHead + tiles + warm + "[scenario.tiles]\nt9_9 = { elev = \"e.tif\" }\n"),
               Contains("region.toml:11:") && Contains("\"t9_9\", which is not a tile of the region"));
    CHECK_THAT(manifest_error(s, kHead + tiles + warm + "[scenario.tiles]\nt0_0 = { elev = \"e.tif\" }\n"),
               Contains("region.toml:11:") && Contains("pattern on line 9 also finds") && Contains("two readings"));
    CHECK_THAT(manifest_error(s, kHead + tiles + "[[scenario]]\nname = \"warm\"\ncovariates = [\"elev\", \"cover\"]\n"
                                                 "[scenario.tiles]\nt0_0 = { elev = \"e.tif\" }\n"),
               Contains("region.toml:10:") && Contains("no raster for cover"));
    CHECK_THAT(manifest_error(s, kHead + tiles + "[[scenario]]\nname = \"warm\"\ncovariates = [\"elev\"]\n"
                                                 "[scenario.tiles]\nt0_0 = { elev = \"e.tif\" }\n"),
               Contains("region.toml:7:") && Contains("no rasters for tile \"t0_1\""));
  }
  SECTION("a threshold without scenarios, and options that do not go with scenarios") {
    CHECK_THAT(manifest_error(s, kHead + "[predict]\nthreshold = 0.5\n" + tiles),
               Contains("region.toml:5:") && Contains("add [[scenario]]"));
    CHECK_THAT(manifest_error(s, kHead + "[predict]\nmax_extrapolated = 5\n" + tiles + warm),
               Contains("region.toml:5:") && Contains("max_extrapolated"));
    CHECK_THAT(manifest_error(s, kHead + "[units]\npath = \"u.gpkg\"\n" + tiles + warm),
               Contains("region.toml:4:") && Contains("[units]"));
  }
}
