// Batch under interruptions: a re-run keeps every finished tile output until it is replaced, a
// failed redo keeps the tile's whole earlier set, the region mosaic changes as one set at every
// instant, signals stop the mosaic step, and two runs into one region never race.
#include <fcntl.h>
#include <sys/file.h>
#include <unistd.h>

#include <catch2/catch.hpp>
#include <csignal>
#include <filesystem>
#include <map>

#include "batch/batch_run.hpp"
#include "batch/mosaic.hpp"
#include "batch_test_scene.hpp"
#include "core/base/error.hpp"
#include "pipeline/folder_lock.hpp"
#include "pipeline/output_set.hpp"
#include "pipeline/stop_signal.hpp"
#include "raster/output_raster.hpp"

namespace {

namespace fs = std::filesystem;
using Catch::Matchers::Contains;
using habcast::test::BatchScene;
using habcast::test::read_text;
using Files = std::map<std::string, std::string>;

/// Raises the stop flag once `pixels` pixels are done, as Ctrl-C would mid-tile.
class StopForceRunAfterPixels final : public habcast::Progress {
 public:
  explicit StopForceRunAfterPixels(std::int64_t pixels) : pixels_(pixels) {}
  void start(const std::string&, std::int64_t) override {}
  void advance(std::int64_t done) override {
    if (done > pixels_) habcast::raise_stop_for_testing(SIGINT);
  }
  void finish() override {}
  void message(const std::string&, const std::string&) override {}

 private:
  std::int64_t pixels_;
};

/// Region-level files of the mosaic (layers and COGs), name -> bytes.
Files region_mosaic_files(const std::string& out) {
  Files files;
  for (const std::string& name : habcast::test::list_dir(out))
    if (name.ends_with(".vrt") || name.ends_with(".tif") || name.ends_with(".aux.xml") || name.starts_with(".habcast-commit") ||
        name.find(".partial") != std::string::npos)
      files[name] = read_text(out + "/" + name);
  return files;
}

Files tile_output_files(const std::string& folder) {
  Files files;
  for (const std::string& name : habcast::test::list_dir(folder))
    if (name != "tile-record.json") files[name] = read_text(folder + "/" + name);
  return files;
}

}  // namespace

TEST_CASE("an interrupted --force re-run keeps every tile's outputs and the mosaic readable", "[batch][safety]") {
  BatchScene s(2, 2, 40, 30);
  REQUIRE(s.run({"-q", "--threads", "1", "--tile-workers", "1"}) == 0);
  std::map<std::string, Files> before;
  for (int r = 0; r < 2; ++r)
    for (int c = 0; c < 2; ++c) before[BatchScene::id(r, c)] = tile_output_files(s.tile_out(s.out(), r, c));

  habcast::BatchOptions options;
  options.manifest_path = s.manifest();
  options.force = true;
  options.threads = 1;
  options.tile_workers = 1;
  StopForceRunAfterPixels stop(1800);  // inside the second tile
  CHECK_THROWS_AS(habcast::run_batch(options, stop, "test"), habcast::Interrupted);
  habcast::raise_stop_for_testing(0);
  for (int r = 0; r < 2; ++r)
    for (int c = 0; c < 2; ++c) {
      INFO(BatchScene::id(r, c));
      const Files now = tile_output_files(s.tile_out(s.out(), r, c));
      CHECK(now.size() == before[BatchScene::id(r, c)].size());
      for (const auto& [name, text] : before[BatchScene::id(r, c)]) CHECK(now.count(name) == 1);
    }
  CHECK(habcast::test::read_band(s.out() + "/suitability.vrt").size() ==
        static_cast<std::size_t>(s.width() * s.height()));
}

TEST_CASE("a redone tile that fails keeps its whole earlier set of outputs", "[batch][safety]") {
  BatchScene s(1, 2, 30, 20);
  REQUIRE(s.run({"-q"}) == 0);
  const std::string tile = s.tile_out(s.out(), 0, 0);
  const Files before = tile_output_files(tile);
  REQUIRE(before.count("novelty.tif") == 1);
  fs::remove(s.file("tiles/" + BatchScene::id(0, 0) + "/elev.tif"));
  std::string out;
  CHECK(s.run({"-q"}, &out) == 6);
  CHECK(tile_output_files(tile) == before);  // old rasters, sidecars and report, all of them, unchanged
  CHECK_THAT(read_text(tile + "/tile-record.json"), Contains("failed"));
}

TEST_CASE("the region mosaic killed at any step of its commit is the old one or the new one", "[batch][safety]") {
  BatchScene s(1, 2, 30, 20);
  const std::string old_out = s.file("old"), new_out = s.file("new");
  REQUIRE(s.run({"-q", "-o", old_out}) == 0);
  fs::copy(old_out, new_out, fs::copy_options::recursive);
  REQUIRE(s.run({"-q", "-o", new_out, "--mosaic-only", "--cog"}) == 0);
  const Files old_set = region_mosaic_files(old_out), new_set = region_mosaic_files(new_out);
  REQUIRE(new_set.count("suitability.tif") == 1);
  REQUIRE(old_set.count("suitability.tif") == 0);
  for (int k = 0;; ++k) {
    INFO("crash before mosaic commit step " << k);
    const std::string out = s.file("out-" + std::to_string(k));
    fs::copy(old_out, out, fs::copy_options::recursive);
    habcast::arm_commit_fault_for_testing(k);
    s.run({"-q", "-o", out, "--mosaic-only", "--cog"});
    const bool crashed = habcast::crash_simulated();
    habcast::arm_commit_fault_for_testing(-1);
    if (!crashed) {
      CHECK(region_mosaic_files(out) == new_set);
      CHECK(k > 10);
      break;
    }
    {  // what the next run into the region does first
      const habcast::FolderLock lock(out);
      habcast::recover_output_sets(out);
      habcast::remove_stale_partials(out, habcast::mosaic_owned_names());
    }
    const Files after = region_mosaic_files(out);
    CHECK((after == old_set || after == new_set));
    fs::remove_all(out);
  }
}

TEST_CASE("a stop signal during the mosaic step ends the run as interrupted and keeps the old mosaic",
          "[batch][safety]") {
  BatchScene s(1, 2, 30, 20);
  REQUIRE(s.run({"-q"}) == 0);
  const Files before = region_mosaic_files(s.out());
  // A temporary an earlier killed mosaic step left (GDAL's overview scratch beside a COG).
  habcast::test::write_text(s.out() + "/.suitability.tif.4242.partial.ovr.tmp", "scratch");
  habcast::BatchOptions options;
  options.manifest_path = s.manifest();
  options.mosaic_only = true;
  options.cog = true;
  habcast::test::SilentProgress quiet;
  habcast::raise_stop_for_testing(SIGTERM);
  try {
    habcast::run_batch(options, quiet, "test");
    FAIL("the mosaic step ignored SIGTERM");
  } catch (const habcast::Interrupted& e) {
    CHECK(e.signal_number() == SIGTERM);
    CHECK(static_cast<int>(e.code()) == 143);
  }
  habcast::raise_stop_for_testing(0);
  CHECK(region_mosaic_files(s.out()) == before);  // the scratch file is gone too: the run cleaned it
}

TEST_CASE("a second batch run into a region in use is refused with a clear message", "[batch][safety]") {
  BatchScene s(1, 2, 30, 20);
  fs::create_directories(s.out());
  const int fd = open((s.out() + "/.habcast.lock").c_str(), O_RDWR | O_CREAT | O_CLOEXEC, 0644);
  REQUIRE(fd >= 0);
  REQUIRE(flock(fd, LOCK_EX | LOCK_NB) == 0);
  std::string err;
  CHECK(s.run({"-q"}, nullptr, &err) == 2);
  CHECK_THAT(err, Contains("in use by another habcast run"));
  CHECK_THAT(err, !Contains("internal error"));
  close(fd);
  CHECK(s.run({"-q"}) == 0);
}
