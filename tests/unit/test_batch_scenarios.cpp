// Batches with scenarios and model sets: each tile runs its baseline and every scenario (or every
// model of a set) in one pass; the region's mosaics in baseline/ and <scenario>/ equal one
// `predict --scenarios` over the untiled grid pixel for pixel, the region report's scenario totals
// are that run's counts, a changed scenario raster redoes only its tile, shards give the same
// region, and a model-set batch gives each tile exactly what `predict M1 M2` gives it.
#include <gdal_priv.h>

#include <catch2/catch.hpp>
#include <algorithm>
#include <chrono>
#include <cstring>
#include <filesystem>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "batch/batch_run.hpp"
#include "batch_test_scene.hpp"
#include "raster/gdal_session.hpp"

namespace {

namespace fs = std::filesystem;
using Catch::Matchers::Contains;
using habcast::test::BatchScene;
using habcast::test::read_text;
using ScenarioJson = nlohmann::json;

constexpr double kWarmShift = 40.0, kCoolShift = -30.0;

const char* const kTwoScenarios =
    "[[scenario]]\nname = \"warm\"\ndescription = \"40 m higher\"\ncovariates = [\"elev\"]\n"
    "pattern = \"tiles/{tile}/warm/{covariate}.tif\"\n"
    "[[scenario]]\nname = \"cool\"\ncovariates = [\"elev\"]\npattern = \"tiles/{tile}/cool/{covariate}.tif\"\n";

/// Bands of a raster, read with GDAL.
int scenario_batch_band_count(const std::string& path) {
  habcast::ensure_gdal();
  GDALDataset* ds = GDALDataset::Open(path.c_str(), GDAL_OF_RASTER | GDAL_OF_READONLY);
  if (!ds) throw std::runtime_error("GDAL cannot open " + path);
  const int n = ds->GetRasterCount();
  GDALClose(GDALDataset::ToHandle(ds));
  return n;
}

bool scenario_batch_same_bits(const std::string& a, const std::string& b, int band) {
  const auto va = habcast::test::read_band(a, band);
  const auto vb = habcast::test::read_band(b, band);
  return va.size() == vb.size() && std::memcmp(va.data(), vb.data(), va.size() * sizeof(double)) == 0;
}

/// The .tif files a run wrote into `folder`, by name.
std::vector<std::string> scenario_batch_rasters(const std::string& folder) {
  std::vector<std::string> names;
  for (const std::string& name : habcast::test::list_dir(folder))
    if (name.ends_with(".tif")) names.push_back(name);
  return names;
}

/// A region of 1 x 2 tiles with two scenarios ("warm", "cool") of elevation in every tile, and the
/// same scenarios over the whole grid, for one predict --scenarios to compare with.
struct ScenarioBatch {
  BatchScene s{1, 2, 37, 29, 5};  // 79 x 34 pixels; the seam at column 37
  std::string whole = s.file("whole");
  ScenarioBatch() {
    for (int c = 0; c < 2; ++c) {
      s.write_scenario_tile(0, c, "warm", kWarmShift);
      s.write_scenario_tile(0, c, "cool", kCoolShift);
    }
    s.write_manifest(std::string("[predict]\nthreshold = 2.5\n") + kTwoScenarios);
  }
  void run_whole() const {
    s.write_whole_scenario("warm", kWarmShift);
    s.write_whole_scenario("cool", kCoolShift);
    habcast::test::write_text(s.file("whole-scenarios.toml"),
                              "habcast_scenarios = 1\n[[scenario]]\nname = \"warm\"\ndescription = \"40 m higher\"\n"
                              "[scenario.covariates]\nelev = \"warm_elev.tif\"\n"
                              "[[scenario]]\nname = \"cool\"\n[scenario.covariates]\nelev = \"cool_elev.tif\"\n");
    REQUIRE(habcast::test::run_cli({"predict", s.model(), "-q", "-o", whole, "-c", "elev=" + s.file("elev.tif"), "-c",
                                    "cover=" + s.file("cover.tif"), "--scenarios", s.file("whole-scenarios.toml"),
                                    "--threshold", "2.5"}) == 0);
  }
};

}  // namespace

TEST_CASE("a batch of 2 tiles x 2 scenarios mosaics every layer of every folder as one predict --scenarios does",
          "[batch][scenarios]") {
  ScenarioBatch b;
  std::string out;
  REQUIRE(b.s.run({"--threads", "2"}, &out) == 0);
  CHECK_THAT(out, Contains("2 run, 0 up to date"));
  b.run_whole();
  int compared = 0;
  for (const char* folder : {"baseline", "warm", "cool"}) {
    const std::vector<std::string> rasters = scenario_batch_rasters(b.whole + "/" + folder);
    if (std::string(folder) != "baseline") {
      CHECK(std::find(rasters.begin(), rasters.end(), "change.tif") != rasters.end());
      CHECK(std::find(rasters.begin(), rasters.end(), "change_class.tif") != rasters.end());
    }
    for (const std::string& name : rasters) {
      const std::string single = b.whole + "/" + folder + "/" + name;
      const std::string vrt = b.s.out() + "/" + folder + "/" + fs::path(name).stem().string() + ".vrt";
      INFO(vrt);
      REQUIRE(fs::exists(vrt));
      REQUIRE(scenario_batch_band_count(vrt) == scenario_batch_band_count(single));
      for (int band = 1; band <= scenario_batch_band_count(single); ++band) {
        INFO("band " << band);
        CHECK(scenario_batch_same_bits(vrt, single, band));
        ++compared;
      }
    }
  }
  CHECK(compared >= 3 * 5 + 2 * 6);  // baseline and scenario rasters, change (5 bands) and classes
  // No top-level mosaic of a plain run: the region keeps the tiles' sub-folders.
  CHECK_FALSE(fs::exists(b.s.out() + "/suitability.vrt"));

  // The change classes keep what GIS software shows beside the pixels.
  habcast::ensure_gdal();
  GDALDataset* v = GDALDataset::Open((b.s.out() + "/warm/change_class.vrt").c_str(), GDAL_OF_RASTER | GDAL_OF_READONLY);
  GDALDataset* w = GDALDataset::Open((b.whole + "/warm/change_class.tif").c_str(), GDAL_OF_RASTER | GDAL_OF_READONLY);
  REQUIRE(v);
  REQUIRE(w);
  double transform[6];
  w->GetGeoTransform(transform);  // GDAL 3.6 reads the .aux.xml sidecar on the first such request
  GDALRasterBand* vb = v->GetRasterBand(1);
  GDALRasterBand* wb = w->GetRasterBand(1);
  CHECK(std::string(vb->GetDescription()) == wb->GetDescription());
  REQUIRE(vb->GetColorTable() != nullptr);
  REQUIRE(wb->GetColorTable() != nullptr);
  CHECK(vb->GetColorTable()->GetColorEntryCount() == wb->GetColorTable()->GetColorEntryCount());
  const GDALColorEntry* vc = vb->GetColorTable()->GetColorEntry(3);
  const GDALColorEntry* wc = wb->GetColorTable()->GetColorEntry(3);
  CHECK((vc->c1 == wc->c1 && vc->c2 == wc->c2 && vc->c3 == wc->c3));
  GDALClose(GDALDataset::ToHandle(v));
  GDALClose(GDALDataset::ToHandle(w));
}

TEST_CASE("the region report adds each scenario's tile counts up to the whole grid's", "[batch][scenarios]") {
  ScenarioBatch b;
  REQUIRE(b.s.run({}) == 0);
  b.run_whole();
  const ScenarioJson region = ScenarioJson::parse(read_text(b.s.out() + "/batch-report.json"))["scenarios"];
  const ScenarioJson whole = ScenarioJson::parse(read_text(b.whole + "/scenarios.json"));
  CHECK(region["tiles_merged"] == 2);
  CHECK(region["threshold"]["value"] == 2.5);
  CHECK(region["baseline"]["extrapolation"]["flagged_pixels"] == whole["baseline"]["extrapolation"]["flagged_pixels"]);
  REQUIRE(region["list"].size() == 2);
  for (std::size_t i = 0; i < 2; ++i) {
    const ScenarioJson& r = region["list"][i];
    const ScenarioJson& w = whole["scenarios"][i];
    INFO(w["name"]);
    CHECK(r["name"] == w["name"]);
    CHECK(r["description"] == w["description"]);
    CHECK(r["compared_pixels"] == w["compared_pixels"]);
    CHECK(r["interval_above_zero"]["pixels"] == w["interval_above_zero"]["pixels"]);
    CHECK(r["interval_below_zero"]["pixels"] == w["interval_below_zero"]["pixels"]);
    CHECK_THAT(r["mean_change"].get<double>(), Catch::Matchers::WithinRel(w["mean_change"].get<double>(), 1e-12));
    std::int64_t classified = 0;
    for (const auto& [key, k] : w["classes"].items()) {
      INFO(key);
      CHECK(r["classes"][key]["pixels"] == k["pixels"]);
      CHECK(r["classes"][key]["extrapolated_pixels"] == k["extrapolated_pixels"]);
      // Shares are recomputed from the summed counts, exactly as the whole-grid run forms them.
      CHECK(r["classes"][key]["share"] == k["share"]);
      CHECK(r["classes"][key]["extrapolated_share"] == k["extrapolated_share"]);
      CHECK_THAT(r["classes"][key]["area_ha"].get<double>(), Catch::Matchers::WithinRel(k["area_ha"].get<double>(), 1e-12));
      classified += k["pixels"].get<std::int64_t>();
    }
    CHECK(classified == w["compared_pixels"].get<std::int64_t>());
    CHECK(r["extrapolation"]["flagged_pixels"] == w["extrapolation"]["flagged_pixels"]);
    CHECK(r["extrapolation"]["flagged_share"] == w["extrapolation"]["flagged_share"]);
    for (const auto& [cause, c] : w["extrapolation"]["causes"].items())
      CHECK(r["extrapolation"]["causes"][cause]["pixels"] == c["pixels"]);
  }
  // The tile rows describe each tile's baseline.
  const ScenarioJson report = ScenarioJson::parse(read_text(b.s.out() + "/batch-report.json"));
  const ScenarioJson base = ScenarioJson::parse(read_text(b.whole + "/baseline/report.json"));
  CHECK(report["total"]["predicted_pixels"] == base["pixels"]["predicted"]);
}

TEST_CASE("a region of scenarios can be moved as a whole: the sub-folder mosaics point at the tiles relatively",
          "[batch][scenarios]") {
  ScenarioBatch b;
  REQUIRE(b.s.run({"--cog"}) == 0);
  // With --cog each sub-folder layer is also one GeoTIFF, its classes kept (nearest overviews).
  for (const char* layer : {"warm/change_class", "cool/change", "baseline/extrapolation"}) {
    INFO(layer);
    CHECK(scenario_batch_same_bits(b.s.out() + "/" + layer + ".tif", b.s.out() + "/" + layer + ".vrt", 1));
  }
  for (const auto& entry : fs::recursive_directory_iterator(b.s.out())) {
    INFO(entry.path().string());
    CHECK(entry.path().filename().string().find(".partial") == std::string::npos);
  }
  const std::string vrt_text = read_text(b.s.out() + "/warm/change.vrt");
  CHECK_THAT(vrt_text, Contains("relativeToVRT=\"1\">../tiles/t0_0/warm/change.tif"));
  CHECK(vrt_text.find(b.s.out()) == std::string::npos);
  const auto before = habcast::test::read_band(b.s.out() + "/warm/change.vrt");
  const std::string moved = b.s.file("moved-region");
  fs::rename(b.s.out(), moved);
  const auto after = habcast::test::read_band(moved + "/warm/change.vrt");
  CHECK((before.size() == after.size() && std::memcmp(before.data(), after.data(), before.size() * sizeof(double)) == 0));
}

TEST_CASE("a scenario batch resumes: up-to-date tiles are skipped, a changed scenario raster redoes its tile only",
          "[batch][scenarios]") {
  ScenarioBatch b;
  REQUIRE(b.s.run({}) == 0);
  const std::string other_record = read_text(b.s.tile_out(b.s.out(), 0, 0) + "/tile-record.json");
  const auto change_before = habcast::test::read_band(b.s.tile_out(b.s.out(), 0, 1) + "/warm/change.tif");
  std::string out;
  REQUIRE(b.s.run({}, &out) == 0);
  CHECK_THAT(out, Contains("0 run, 2 up to date"));

  SECTION("a scenario raster rewritten") {
    b.s.write_scenario_tile(0, 1, "warm", kWarmShift + 25.0);
    REQUIRE(b.s.run({"--mosaic-only"}, &out) == habcast::kExitTilesFailed);
    CHECK_THAT(out, Contains("t0_1: stale: scenario warm: raster of elev changed"));
    REQUIRE(b.s.run({}, &out) == 0);
    CHECK_THAT(out, Contains("1 run, 1 up to date"));
    CHECK(read_text(b.s.tile_out(b.s.out(), 0, 0) + "/tile-record.json") == other_record);
    CHECK(habcast::test::read_band(b.s.tile_out(b.s.out(), 0, 1) + "/warm/change.tif") != change_before);
  }
  SECTION("the threshold changed") {
    b.s.write_manifest(std::string("[predict]\nthreshold = 3\n") + kTwoScenarios);
    REQUIRE(b.s.run({}, &out) == 0);
    CHECK_THAT(out, Contains("2 run, 0 up to date"));
  }
  SECTION("a scenario's definition changed") {
    std::string manifest = std::string("[predict]\nthreshold = 2.5\n") + kTwoScenarios;
    manifest.replace(manifest.find("40 m higher"), 11, "forty metres");
    b.s.write_manifest(manifest);
    REQUIRE(b.s.run({}, &out) == 0);
    CHECK_THAT(out, Contains("2 run, 0 up to date"));
  }
  SECTION("an output of a scenario's folder deleted") {
    fs::remove(b.s.tile_out(b.s.out(), 0, 0) + "/cool/change_class.tif");
    REQUIRE(b.s.run({}, &out) == 0);
    CHECK_THAT(out, Contains("1 run, 1 up to date"));
  }
}

TEST_CASE("a tile lacking a scenario raster fails alone; the region is mosaicked from the others",
          "[batch][scenarios]") {
  ScenarioBatch b;
  fs::remove(b.s.file("tiles/t0_1/cool/elev.tif"));
  std::string out;
  REQUIRE(b.s.run({}, &out) == habcast::kExitTilesFailed);
  CHECK_THAT(out, Contains("t0_1: failed") && Contains("lacks a raster of scenario cool"));
  CHECK(fs::exists(b.s.out() + "/cool/change.vrt"));
  const ScenarioJson report = ScenarioJson::parse(read_text(b.s.out() + "/batch-report.json"));
  CHECK(report["scenarios"]["tiles_merged"] == 1);
  CHECK(report["scenarios"]["tiles_total"] == 2);
}

TEST_CASE("shards of a scenario batch run every scenario of their tiles; the mosaic step joins them",
          "[batch][scenarios]") {
  ScenarioBatch b;
  REQUIRE(b.s.run({"-o", b.s.file("single")}) == 0);
  REQUIRE(b.s.run({"--shard", "1/2"}) == 0);
  CHECK(fs::exists(b.s.tile_out(b.s.out(), 0, 0) + "/cool/change.tif"));
  CHECK(fs::exists(b.s.tile_out(b.s.out(), 0, 0) + "/warm/change.tif"));
  CHECK_FALSE(fs::exists(b.s.tile_out(b.s.out(), 0, 1) + "/warm/change.tif"));
  REQUIRE(b.s.run({"--shard", "2/2"}) == 0);
  REQUIRE(b.s.run({"--mosaic-only"}) == 0);
  for (const char* layer : {"baseline/suitability.vrt", "warm/change.vrt", "cool/change_class.vrt"}) {
    INFO(layer);
    CHECK(scenario_batch_same_bits(b.s.out() + "/" + layer, b.s.file("single") + "/" + layer, 1));
  }
}

TEST_CASE("an output that would replace a scenario raster is refused before anything runs", "[batch][scenarios]") {
  BatchScene s(1, 2, 20, 15);
  s.write_manifest(
      "[[scenario]]\nname = \"warm\"\ncovariates = [\"elev\"]\n"
      "[scenario.tiles]\nt0_0 = { elev = \"out/tiles/t0_0/warm/suitability.tif\" }\nt0_1 = { elev = \"tiles/t0_1/elev.tif\" }\n");
  std::string out, err;
  CHECK(s.run({}, &out, &err) == 2);
  CHECK_THAT(err, Contains("tile t0_0 scenario warm raster of covariate elev") && Contains("warm/suitability.tif"));
  CHECK_FALSE(fs::exists(s.out() + "/tiles"));
}

TEST_CASE("a model-set batch gives every tile what predict M1 M2 gives it, and the region its weights",
          "[batch][modelset]") {
  BatchScene s(1, 2, 23, 17, 2);
  std::string second = BatchScene::kModel;
  second.replace(second.find("[1.0, 0.2, -0.3, 0.5]"), 21, "[0.8, 0.3, -0.2, 0.4]");
  habcast::test::write_text(s.file("second.toml"), second);
  const std::string set_keys = "models = [\"model.toml\", \"second.toml\"]\nweights = [0.7, 0.3]\n";
  std::string head = "habcast_batch = 1\n" + set_keys + "output = \"out\"\n";
  std::string tail = "[tiles]\npattern = \"tiles/{tile}/{covariate}.tif\"\n";
  std::vector<std::string> single_args;

  SECTION("one stack") {}
  SECTION("with a scenario") {
    for (int c = 0; c < 2; ++c) s.write_scenario_tile(0, c, "warm", kWarmShift);
    tail += "[[scenario]]\nname = \"warm\"\ncovariates = [\"elev\"]\npattern = \"tiles/{tile}/warm/{covariate}.tif\"\n";
    head += "[predict]\nthreshold = 2.5\n";
    single_args = {"--threshold", "2.5"};
  }
  habcast::test::write_text(s.manifest(), head + tail);
  const bool with_scenario = !single_args.empty();
  REQUIRE(s.run({"-q"}) == 0);
  for (int c = 0; c < 2; ++c) {
    const std::string tile = s.file("tiles/" + BatchScene::id(0, c));
    const std::string single = s.file("single-" + BatchScene::id(0, c));
    std::vector<std::string> args{"predict", s.model(), s.file("second.toml"), "-q", "--weights", "0.7,0.3", "-o", single,
                                  "-c", "elev=" + tile + "/elev.tif", "-c", "cover=" + tile + "/cover.tif"};
    if (with_scenario) {
      habcast::test::write_text(s.file("warm-" + BatchScene::id(0, c) + ".toml"),
                                "habcast_scenarios = 1\n[[scenario]]\nname = \"warm\"\n[scenario.covariates]\nelev = \"" +
                                    tile + "/warm/elev.tif\"\n");
      args.insert(args.end(), {"--scenarios", s.file("warm-" + BatchScene::id(0, c) + ".toml")});
      args.insert(args.end(), single_args.begin(), single_args.end());
    }
    REQUIRE(habcast::test::run_cli(args) == 0);
    const std::vector<std::string> folders = with_scenario ? std::vector<std::string>{"baseline", "warm"}
                                                           : std::vector<std::string>{""};
    int compared = 0;
    for (const std::string& folder : folders) {
      for (const std::string& name : scenario_batch_rasters(single + "/" + folder)) {
        const std::string a = single + "/" + folder + "/" + name;
        const std::string b = s.tile_out(s.out(), 0, c) + "/" + folder + "/" + name;
        INFO(b);
        REQUIRE(fs::exists(b));
        for (int band = 1; band <= scenario_batch_band_count(a); ++band) {
          CHECK(scenario_batch_same_bits(a, b, band));
          ++compared;
        }
      }
    }
    CHECK(compared >= (with_scenario ? 2 * 6 + 6 : 6));  // suitability, uncertainty x3, model_choice, extrapolation
  }
  const std::string prefix = with_scenario ? s.out() + "/baseline/" : s.out() + "/";
  CHECK(fs::exists(prefix + "model_choice.vrt"));
  const ScenarioJson report = ScenarioJson::parse(read_text(s.out() + "/batch-report.json"));
  REQUIRE(report["model_set"]["models"].size() == 2);
  CHECK_THAT(report["model_set"]["models"][0]["weight"].get<double>(), Catch::Matchers::WithinRel(0.7, 1e-15));
  CHECK(report["model_set"]["models"][1]["path"].get<std::string>() == fs::path(s.file("second.toml")).lexically_normal().string());
  CHECK(report["total"]["valid_pixels"].is_null());  // not known for the union of a set's flags
  CHECK(report["total"]["predicted_pixels"].get<std::int64_t>() > 0);
  if (with_scenario) {
    const ScenarioJson& warm = report["scenarios"]["list"][0];
    CHECK(warm["name"] == "warm");
    std::int64_t classified = 0;
    for (const auto& [key, k] : warm["classes"].items()) classified += k["pixels"].get<std::int64_t>();
    CHECK(classified == warm["compared_pixels"].get<std::int64_t>());
    CHECK(warm["compared_pixels"].get<std::int64_t>() > 0);
  }
  // Changing a weight redoes every tile.
  habcast::test::write_text(s.manifest(), head.replace(head.find("[0.7, 0.3]"), 10, "[0.6, 0.4]") + tail);
  std::string out;
  REQUIRE(s.run({}, &out) == 0);
  CHECK_THAT(out, Contains("2 run, 0 up to date"));
}

TEST_CASE("a region whose tiles now run scenarios loses its earlier top-level mosaic in the same commit",
          "[batch][scenarios]") {
  ScenarioBatch b;
  b.s.write_manifest("");
  REQUIRE(b.s.run({}) == 0);
  REQUIRE(fs::exists(b.s.out() + "/suitability.vrt"));
  b.s.write_manifest(std::string("[predict]\nthreshold = 2.5\n") + kTwoScenarios);
  std::string out;
  REQUIRE(b.s.run({}, &out) == 0);
  CHECK_THAT(out, Contains("2 run, 0 up to date"));
  CHECK_FALSE(fs::exists(b.s.out() + "/suitability.vrt"));
  CHECK(fs::exists(b.s.out() + "/baseline/suitability.vrt"));
  CHECK(fs::exists(b.s.out() + "/warm/change_class.vrt"));
}

TEST_CASE("threshold_from takes evaluate's threshold for every tile; a new report redoes them all",
          "[batch][scenarios]") {
  ScenarioBatch b;
  habcast::test::write_text(b.s.file("eval.json"), "{\"max_tss\": {\"threshold\": 2.5}}\n");
  b.s.write_manifest(std::string("[predict]\nthreshold_from = \"eval.json\"\n") + kTwoScenarios);
  REQUIRE(b.s.run({}) == 0);
  const ScenarioJson tile = ScenarioJson::parse(read_text(b.s.tile_out(b.s.out(), 0, 1) + "/scenarios.json"));
  CHECK(tile["threshold"]["value"] == 2.5);
  CHECK_THAT(tile["threshold"]["source"].get<std::string>(), Contains("maximising TSS") && Contains("eval.json"));
  std::string out, err;

  SECTION("the report rewritten") {
    const auto before = fs::last_write_time(b.s.file("eval.json"));
    habcast::test::write_text(b.s.file("eval.json"), "{\"max_tss\": {\"threshold\": 2.0}}\n");
    fs::last_write_time(b.s.file("eval.json"), before + std::chrono::seconds(1));
    REQUIRE(b.s.run({}, &out) == 0);
    CHECK_THAT(out, Contains("2 run, 0 up to date"));
  }
  SECTION("a threshold beside it that disagrees is refused with both lines") {
    b.s.write_manifest(std::string("[predict]\nthreshold = 3\nthreshold_from = \"eval.json\"\n") + kTwoScenarios);
    CHECK(b.s.run({}, &out, &err) == 3);
    CHECK_THAT(err, Contains("region.toml:5:") && Contains("predict.threshold = 3 (line 5)") && Contains("2.5") &&
                        Contains("(line 6"));
  }
  SECTION("one that agrees is accepted") {
    b.s.write_manifest(std::string("[predict]\nthreshold = 2.5\nthreshold_from = \"eval.json\"\n") + kTwoScenarios);
    REQUIRE(b.s.run({}, &out) == 0);
    CHECK_THAT(out, Contains("2 run, 0 up to date"));  // the fingerprint holds both as given
  }
}

TEST_CASE("a scenario batch takes the alignment options: each tile's rasters aligned as predict aligns them",
          "[batch][scenarios][alignment]") {
  ScenarioBatch b;
  // Each tile's rasters share its grid, so --grid-of elev changes nothing: the region equals one
  // predict --scenarios over the whole grid, as without the option (and the option is not refused).
  REQUIRE(b.s.run({"--grid-of", "elev"}) == 0);
  b.run_whole();
  for (const char* layer : {"warm/change", "cool/suitability", "baseline/uncertainty"}) {
    INFO(layer);
    CHECK(scenario_batch_same_bits(b.s.out() + "/" + layer + ".vrt", b.whole + "/" + layer + ".tif", 1));
  }
}
