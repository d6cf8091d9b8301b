#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <catch2/catch.hpp>
#include <filesystem>
#include <fstream>
#include <iterator>
#include <string>
#include <vector>

#include "core/base/error.hpp"
#include "raster/output_raster.hpp"
#include "raster_test_support.hpp"

using habcast::OutputRaster;
using habcast::OutputSpec;
using habcast::OutputType;
using habcast::remove_stale_partials;
using habcast::temporary_path_for;
using habcast::Window;
using habcast::test::TempFolder;
using habcast::test::utm_grid;
namespace fs = std::filesystem;

namespace {

OutputSpec float_spec(const std::string& path) {
  OutputSpec spec;
  spec.final_path = path;
  spec.bands = {{"suitability", ""}};
  return spec;
}

OutputSpec classes_spec(const std::string& path) {
  OutputSpec spec;
  spec.final_path = path;
  spec.type = OutputType::uint8;
  spec.bands = {{"classes", ""}};
  spec.nodata = 255;
  spec.colours = {{0, 10, 10, 10, 255, "low"}, {2, 20, 20, 20, 255, "high"}};  // names need a sidecar
  return spec;
}

void write_some(OutputRaster& output) {
  const std::vector<float> pixels(16, 0.5f);
  output.write(1, Window{0, 0, 4, 4}, pixels.data());
}

std::string contents(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  return {std::istreambuf_iterator<char>(in), std::istreambuf_iterator<char>()};
}

void touch(const std::string& path, const std::string& text = "x") { std::ofstream(path) << text; }

/// The pid of a child that has already exited and been reaped: no process has it any more.
pid_t pid_of_finished_child() {
  const pid_t child = fork();
  if (child == 0) _exit(0);
  REQUIRE(child > 0);
  int status = 0;
  REQUIRE(waitpid(child, &status, 0) == child);
  return child;
}

}  // namespace

TEST_CASE("The temporary name is a hidden file with the writer's pid beside the final name", "[raster][output]") {
  CHECK(temporary_path_for("/data/out/suitability.tif") ==
        "/data/out/.suitability.tif." + std::to_string(getpid()) + ".partial");
  CHECK(temporary_path_for("suitability.tif") == ".suitability.tif." + std::to_string(getpid()) + ".partial");
}

TEST_CASE("An output exists only under its temporary name until it is committed", "[raster][output]") {
  TempFolder folder;
  const std::string final_path = folder.file("suitability.tif");
  OutputRaster output(float_spec(final_path), utm_grid(4, 4));
  CHECK(output.temporary_path() == temporary_path_for(final_path));
  CHECK(output.final_path() == final_path);
  write_some(output);
  CHECK(fs::exists(output.temporary_path()));
  CHECK_FALSE(fs::exists(final_path));
  output.close();
  CHECK(fs::exists(output.temporary_path()));
  CHECK_FALSE(fs::exists(final_path));
  output.commit();
  CHECK(fs::exists(final_path));
  CHECK_FALSE(fs::exists(output.temporary_path()));
  CHECK(folder.names() == std::vector<std::string>{"suitability.tif"});
}

TEST_CASE("An output destroyed without commit leaves no file behind", "[raster][output]") {
  TempFolder folder;
  SECTION("while still open") {
    OutputRaster output(float_spec(folder.file("suitability.tif")), utm_grid(4, 4));
    write_some(output);
  }
  SECTION("after close") {
    OutputRaster output(float_spec(folder.file("suitability.tif")), utm_grid(4, 4));
    write_some(output);
    output.close();
  }
  SECTION("with a category sidecar") {
    OutputRaster output(classes_spec(folder.file("classes.tif")), utm_grid(4, 4));
    output.close();
  }
  CHECK(folder.names().empty());
}

TEST_CASE("An existing final file is untouched when the new output is not committed", "[raster][output]") {
  TempFolder folder;
  const std::string final_path = folder.file("suitability.tif");
  touch(final_path, "output of an earlier run");
  {
    OutputRaster output(float_spec(final_path), utm_grid(4, 4));
    write_some(output);
    output.close();
  }
  CHECK(contents(final_path) == "output of an earlier run");
  CHECK(folder.names() == std::vector<std::string>{"suitability.tif"});
}

TEST_CASE("Committing replaces an earlier output and its sidecar", "[raster][output]") {
  TempFolder folder;
  const std::string final_path = folder.file("classes.tif");
  touch(final_path, "output of an earlier run");
  touch(final_path + ".aux.xml", "<PAMDataset></PAMDataset>");
  SECTION("with a new sidecar") {
    OutputRaster output(classes_spec(final_path), utm_grid(4, 4));
    output.commit();
    CHECK(contents(final_path + ".aux.xml").find("high") != std::string::npos);
  }
  SECTION("without a new sidecar, the stale one goes") {
    OutputRaster output(float_spec(final_path), utm_grid(4, 4));
    output.commit();
    CHECK_FALSE(fs::exists(final_path + ".aux.xml"));
  }
  CHECK(contents(final_path) != "output of an earlier run");
}

TEST_CASE("Under the folder's lock every temporary of an owned name is a leftover, whatever its pid", "[raster][output]") {
  // The caller holds the folder's lock, so no live habcast run writes there: a pid in a name
  // proves nothing (reused, or another node's), and GDAL's scratch files beside it go too.
  TempFolder folder;
  const std::string dead = std::to_string(pid_of_finished_child());
  const std::string live = std::to_string(getpid());
  touch(folder.file(".suitability.tif." + dead + ".partial"));
  touch(folder.file(".suitability.tif." + dead + ".partial.aux.xml"));
  touch(folder.file(".flags.tif.999999999.partial"));
  touch(folder.file(".suitability.tif." + live + ".partial"));
  touch(folder.file(".suitability.tif." + live + ".partial.ovr.tmp"));
  touch(folder.file(".other.tif." + dead + ".partial"));  // not one of our outputs
  touch(folder.file(".suitability.tif.x.partial"));       // not a name of ours either
  touch(folder.file("suitability.tif"));

  CHECK(remove_stale_partials(folder.path().string(), {"suitability.tif", "flags.tif"}) == 5);
  auto names = folder.names();
  std::sort(names.begin(), names.end());
  std::vector<std::string> expected = {".other.tif." + dead + ".partial", ".suitability.tif.x.partial",
                                       "suitability.tif"};
  std::sort(expected.begin(), expected.end());
  CHECK(names == expected);
}

TEST_CASE("Looking for stale partials in a missing folder finds none", "[raster][output]") {
  CHECK(remove_stale_partials("/nonexistent/habcast/folder", {"suitability.tif"}) == 0);
}

TEST_CASE("An output in a missing folder is an I/O error naming the path", "[raster][output]") {
  CHECK_THROWS_AS(OutputRaster(float_spec("/nonexistent/habcast/folder/out.tif"), utm_grid(4, 4)), habcast::IoError);
  CHECK_THROWS_WITH(OutputRaster(float_spec("/nonexistent/habcast/folder/out.tif"), utm_grid(4, 4)),
                    Catch::Matchers::Contains("/nonexistent/habcast/folder/out.tif"));
}

TEST_CASE("An output whose construction fails after creating the file leaves no file behind", "[raster][output]") {
  TempFolder folder;
  habcast::RasterGrid grid = utm_grid(4, 4);
  grid.crs_wkt = "not a CRS";  // rejected only after the GeoTIFF exists
  CHECK_THROWS_AS(OutputRaster(float_spec(folder.file("suitability.tif")), grid), std::invalid_argument);
  CHECK(folder.names().empty());
}
