// `habcast --version` and report.json name the versions of the libraries a map was made with.
// The expected values come from the libraries themselves (GDALVersionInfo, proj_info, Qhull's
// qh_version, Eigen's version macros), not from habcast's own code.
#include <Eigen/Core>
#include <catch2/catch.hpp>
#include <gdal.h>
#include <nlohmann/json.hpp>
#include <proj.h>
#include <sstream>
#include <string>
#include <vector>

extern "C" {
extern const char qh_version[];  // libqhull_r's own version string (libqhull_r.h)
}

#include "test_support.hpp"

namespace {

std::vector<std::string> lines_of(const std::string& text) {
  std::vector<std::string> lines;
  std::istringstream in(text);
  for (std::string line; std::getline(in, line);) lines.push_back(line);
  return lines;
}

bool has_line_starting(const std::vector<std::string>& lines, const std::string& start) {
  for (const std::string& line : lines)
    if (line.rfind(start, 0) == 0) return true;
  return false;
}

std::string eigen_version() {
  return std::to_string(EIGEN_WORLD_VERSION) + "." + std::to_string(EIGEN_MAJOR_VERSION) + "." +
         std::to_string(EIGEN_MINOR_VERSION);
}

}  // namespace

TEST_CASE("habcast --version names habcast and the GDAL, PROJ, Eigen and Qhull in use", "[version]") {
  std::string out;
  REQUIRE(habcast::test::run_cli({"--version"}, &out) == 0);
  const auto lines = lines_of(out);
  REQUIRE(lines.size() == 5);
  CHECK(lines[0].rfind("habcast ", 0) == 0);
  CHECK(has_line_starting(lines, std::string("GDAL ") + GDALVersionInfo("RELEASE_NAME") + " "));
  CHECK(has_line_starting(lines, std::string("PROJ ") + proj_info().version + " "));
  CHECK(has_line_starting(lines, "Eigen " + eigen_version() + " "));
  CHECK(has_line_starting(lines, std::string("Qhull ") + qh_version));
}

TEST_CASE("report.json of predict records the library versions it ran with", "[version][predict]") {
  habcast::test::TempDir dir("version-report");
  const std::string out_dir = dir.file("out");
  REQUIRE(habcast::test::run_cli({"predict", habcast::test::source_path("sample-rasters/demo-model.toml"), "-o",
                                  out_dir, "-q", "--threads", "2", "--checks", "range"}) == 0);
  const auto report = nlohmann::json::parse(habcast::test::read_text(out_dir + "/report.json"));
  REQUIRE(report.contains("libraries"));
  const auto& libs = report["libraries"];
  CHECK(libs["GDAL"] == GDALVersionInfo("RELEASE_NAME"));
  CHECK(libs["PROJ"] == proj_info().version);
  CHECK(libs["Eigen"] == eigen_version());
  CHECK(libs["Qhull"] == std::string(qh_version));
}
