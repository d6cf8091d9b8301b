// Resuming a batch: a run stopped part-way (by a signal polled in the pipeline, or by SIGKILL of the
// process) and run again gives the same rasters as a run that was never stopped; a re-run redoes
// exactly the tiles whose inputs, outputs, model or options changed, and retries failed tiles.
#include <fcntl.h>
#include <sys/wait.h>
#include <unistd.h>

#include <catch2/catch.hpp>
#include <csignal>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <string>

#include "batch/batch_run.hpp"
#include "batch_test_scene.hpp"
#include "core/base/error.hpp"
#include "pipeline/stop_signal.hpp"

namespace {

namespace fs = std::filesystem;
using Catch::Matchers::Contains;
using habcast::test::BatchScene;

const std::vector<std::pair<std::string, int>> kLayers = {
    {"suitability.tif", 1}, {"uncertainty.tif", 1}, {"uncertainty.tif", 2}, {"uncertainty.tif", 3}, {"extrapolation.tif", 1}};

/// Every raster of every tile holds the same pixel values in both output folders.
void check_same_rasters(const BatchScene& s, const std::string& a, const std::string& b, int rows, int cols) {
  for (int r = 0; r < rows; ++r)
    for (int c = 0; c < cols; ++c)
      for (const auto& [file, band] : kLayers) {
        INFO(BatchScene::id(r, c) << "/" << file << " band " << band);
        const auto va = habcast::test::read_band(s.tile_out(a, r, c) + "/" + file, band);
        const auto vb = habcast::test::read_band(s.tile_out(b, r, c) + "/" + file, band);
        CHECK(std::memcmp(va.data(), vb.data(), va.size() * sizeof(double)) == 0);
        CHECK(va.size() == vb.size());
      }
}

int count_records(const std::string& out) {
  int n = 0;
  for (const std::string& id : habcast::test::list_dir(out + "/tiles"))
    if (fs::exists(out + "/tiles/" + id + "/tile-record.json")) ++n;
  return n;
}

bool any_partial(const std::string& out) {
  if (!fs::exists(out)) return false;
  for (const auto& e : fs::recursive_directory_iterator(out))
    if (e.path().filename().string().ends_with(".partial")) return true;
  return false;
}

/// Stands in for Ctrl-C: raises the stop flag once the batch has passed `pixels` pixels, i.e. in the
/// middle of a later tile, exactly as the signal handler would.
class StopAfterPixels final : public habcast::Progress {
 public:
  explicit StopAfterPixels(std::int64_t pixels) : pixels_(pixels) {}
  void start(const std::string&, std::int64_t) override {}
  void advance(std::int64_t done) override {
    if (done > pixels_) habcast::raise_stop_for_testing(SIGINT);
  }
  void finish() override {}
  void message(const std::string&, const std::string&) override {}

 private:
  std::int64_t pixels_;
};

}  // namespace

TEST_CASE("a batch stopped mid-tile resumes to the same result as an uninterrupted run", "[batch]") {
  BatchScene s(2, 3, 18, 14, 0);
  REQUIRE(s.run({"-o", s.file("reference")}) == 0);

  habcast::BatchOptions options;
  options.manifest_path = s.manifest();
  options.threads = 1;
  options.tile_workers = 1;
  StopAfterPixels stop(2 * 18 * 14);  // two tiles done, stopped during the third
  CHECK_THROWS_AS(habcast::run_batch(options, stop, "test"), habcast::Interrupted);
  habcast::raise_stop_for_testing(0);
  CHECK(count_records(s.out()) == 2);
  // The interrupted tile left nothing: no record, no raster, no temporary file.
  CHECK(habcast::test::list_dir(s.tile_out(s.out(), 0, 2)).empty());
  CHECK_FALSE(any_partial(s.out()));

  // Resumed by the same habcast (the version is part of each tile's fingerprint).
  habcast::test::SilentProgress quiet;
  const habcast::BatchSummary resumed = habcast::run_batch(options, quiet, "test");
  CHECK(resumed.ran == 4);
  CHECK(resumed.up_to_date == 2);
  CHECK(resumed.exit_code == 0);
  check_same_rasters(s, s.file("reference"), s.out(), 2, 3);
}

TEST_CASE("a batch process killed with SIGKILL resumes to the same result", "[batch]") {
  BatchScene s(3, 4, 160, 120, 0);
  REQUIRE(s.run({"-o", s.file("reference"), "--threads", "2"}) == 0);

  const pid_t child = fork();
  REQUIRE(child >= 0);
  if (child == 0) {
    // Child: the real binary, one tile at a time so the kill lands between or inside tiles.
    const int devnull = ::open("/dev/null", O_WRONLY);
    dup2(devnull, STDOUT_FILENO);
    dup2(devnull, STDERR_FILENO);
    execl(HABCAST_BINARY, HABCAST_BINARY, "batch", s.manifest().c_str(), "-q", "--threads", "1", "--tile-workers", "1",
          static_cast<char*>(nullptr));
    _exit(127);
  }
  // Kill as soon as the first tile is recorded: the child is then inside a later tile.
  int status = 0;
  bool exited = false;
  while (count_records(s.out()) == 0) {
    if (waitpid(child, &status, WNOHANG) == child) {
      exited = true;
      break;
    }
    usleep(200);
  }
  if (!exited) {
    kill(child, SIGKILL);
    REQUIRE(waitpid(child, &status, 0) == child);
  }
  REQUIRE(WIFSIGNALED(status));
  const int recorded = count_records(s.out());
  CHECK(recorded < s.tiles());

  std::string out;
  REQUIRE(s.run({}, &out) == 0);
  CHECK_THAT(out, Contains(std::to_string(s.tiles() - recorded) + " run, " + std::to_string(recorded) + " up to date"));
  check_same_rasters(s, s.file("reference"), s.out(), 3, 4);
  CHECK_FALSE(any_partial(s.out()));
}

TEST_CASE("a re-run redoes only the tiles whose input or outputs changed", "[batch]") {
  BatchScene s(2, 3, 18, 14);
  REQUIRE(s.run({}) == 0);
  const std::string other_before = habcast::test::read_text(s.tile_out(s.out(), 0, 0) + "/suitability.tif");
  const auto changed_before = habcast::test::read_band(s.tile_out(s.out(), 1, 1) + "/suitability.tif");
  std::string out;

  SECTION("nothing changed: nothing is run") {
    REQUIRE(s.run({}, &out) == 0);
    CHECK_THAT(out, Contains("0 run, 6 up to date"));
    REQUIRE(s.run({"--force"}, &out) == 0);
    CHECK_THAT(out, Contains("6 run, 0 up to date"));
  }
  SECTION("one tile's covariate rewritten") {
    s.write_tile(1, 1, 40.0);
    REQUIRE(s.run({}, &out) == 0);
    CHECK_THAT(out, Contains("1 run, 5 up to date"));
    CHECK(habcast::test::read_band(s.tile_out(s.out(), 1, 1) + "/suitability.tif") != changed_before);
    CHECK(habcast::test::read_text(s.tile_out(s.out(), 0, 0) + "/suitability.tif") == other_before);
  }
  SECTION("an output corrupted in place (same size)") {
    const std::string path = s.tile_out(s.out(), 0, 1) + "/suitability.tif";
    const auto size = fs::file_size(path);
    {
      std::fstream f(path, std::ios::in | std::ios::out | std::ios::binary);
      f.seekp(static_cast<std::streamoff>(size - 40));
      f.write("garbage!", 8);
    }
    REQUIRE(fs::file_size(path) == size);
    REQUIRE(s.run({}, &out) == 0);
    CHECK_THAT(out, Contains("1 run, 5 up to date"));
  }
  SECTION("an output deleted, and a record that is not JSON") {
    fs::remove(s.tile_out(s.out(), 0, 2) + "/uncertainty.tif");
    habcast::test::write_text(s.tile_out(s.out(), 1, 0) + "/tile-record.json", "{ truncated");
    REQUIRE(s.run({}, &out) == 0);
    CHECK_THAT(out, Contains("2 run, 4 up to date"));
  }
}

TEST_CASE("a changed model or changed options redo every tile", "[batch]") {
  BatchScene s(2, 2, 18, 14);
  REQUIRE(s.run({}) == 0);
  std::string out;
  SECTION("model estimates") {
    std::string model = habcast::test::read_text(s.model());
    model.replace(model.find("[1.0, 0.2"), 9, "[1.1, 0.2");
    habcast::test::write_text(s.model(), model);
    REQUIRE(s.run({}, &out) == 0);
    CHECK_THAT(out, Contains("4 run, 0 up to date"));
  }
  SECTION("training table") {
    habcast::test::write_text(s.file("train.csv"), "elev,cover\n300,1\n600,2\n");
    REQUIRE(s.run({}, &out) == 0);
    CHECK_THAT(out, Contains("4 run, 0 up to date"));
  }
  SECTION("confidence level") {
    s.write_manifest("[predict]\nlevel = 0.9\n");
    REQUIRE(s.run({}, &out) == 0);
    CHECK_THAT(out, Contains("4 run, 0 up to date"));
  }
}

TEST_CASE("a tile with a missing raster fails alone, is reported, and is retried next time", "[batch]") {
  BatchScene s(2, 2, 18, 14);
  const std::string cover = s.file("tiles/t0_1/cover.tif");
  fs::rename(cover, cover + ".away");
  std::string out;
  REQUIRE(s.run({}, &out) == habcast::kExitTilesFailed);
  CHECK_THAT(out, Contains("3 run, 0 up to date, 1 failed") && Contains("t0_1: failed") && Contains("cover.tif"));
  const std::string report = habcast::test::read_text(s.out() + "/batch-report.json");
  CHECK_THAT(report, Contains("\"tiles_done\": 3") && Contains("\"failed\": 1") && Contains("lacks a covariate raster"));
  CHECK_THAT(habcast::test::read_text(s.out() + "/batch-report.csv"), Contains("t0_1,failed,yes"));
  CHECK(fs::exists(s.out() + "/suitability.vrt"));

  fs::rename(cover + ".away", cover);
  REQUIRE(s.run({}, &out) == 0);
  CHECK_THAT(out, Contains("1 run, 3 up to date"));
}
