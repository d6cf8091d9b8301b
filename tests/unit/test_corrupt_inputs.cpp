// Damaged and unexpected covariate rasters: each ends in a clear message naming the file (and the
// window, for pixels that cannot be read) and leaves no output, or, for non-finite cells, follows
// the documented nodata rule. Never a crash, never a silently wrong value.
#include <gdal_priv.h>

#include <catch2/catch.hpp>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <limits>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "raster/gdal_session.hpp"
#include "test_support.hpp"

namespace {

using Catch::Matchers::Contains;
using habcast::test::GridSpec;
using habcast::test::TempDir;

const char* kModel =
    "habcast_model = 1\n[model]\nfamily = \"binomial\"\n"
    "[covariates.a]\nraster = \"a.tif\"\nBAND_LINE\n[covariates.b]\nraster = \"b.tif\"\n"
    "[coefficients]\nterms = [\"(Intercept)\", \"a\", \"b\"]\nestimates = [0.1, 0.01, -0.02]\n";

struct Scene {
  TempDir dir{"corrupt"};
  std::string out = dir.file("out");
  GridSpec grid{400, 300};

  explicit Scene(const std::string& band_line = "") {
    grid.block = 64;
    std::string model = kModel;
    model.replace(model.find("BAND_LINE"), 9, band_line);
    habcast::test::write_text(dir.file("m.toml"), model);
    // Values that do not compress away, so the file has real tile data throughout.
    const auto noisy = [](int r, int c) { return std::sin(r * 0.37 + c * 0.11) * 50.0 + (r * 31 + c * 17) % 97; };
    habcast::test::write_raster(dir.file("a.tif"), grid, "Float32", noisy);
    habcast::test::write_raster(dir.file("b.tif"), grid, "Float32", noisy);
  }
  int run(std::string& err, std::vector<std::string> extra = {}) {
    std::vector<std::string> args{"predict", dir.file("m.toml"), "-o", out, "-q", "--threads", "2"};
    args.insert(args.end(), extra.begin(), extra.end());
    return habcast::test::run_cli(args, nullptr, &err);
  }
  bool out_empty() const { return habcast::test::list_dir(out).empty(); }
};

/// Overwrites `length` bytes of `path` starting at `offset` with a fixed non-zero pattern.
void scribble(const std::string& path, std::uintmax_t offset, std::size_t length) {
  std::fstream file(path, std::ios::in | std::ios::out | std::ios::binary);
  file.seekp(static_cast<std::streamoff>(offset));
  for (std::size_t i = 0; i < length; ++i) file.put(static_cast<char>(0xA5 ^ (i * 7)));
}

}  // namespace

TEST_CASE("a truncated GeoTIFF fails with an I/O error naming the file and the window", "[corrupt]") {
  Scene s;
  const auto full = std::filesystem::file_size(s.dir.file("a.tif"));
  std::filesystem::resize_file(s.dir.file("a.tif"), full / 2);
  std::string err;
  CHECK(s.run(err) == 4);
  CHECK_THAT(err, Contains("a.tif") && Contains("window at column") && Contains("truncated or corrupt"));
  CHECK(s.out_empty());
}

TEST_CASE("a GeoTIFF whose tiles are overwritten mid-file fails naming the file and the window", "[corrupt]") {
  Scene s;
  const auto full = std::filesystem::file_size(s.dir.file("b.tif"));
  scribble(s.dir.file("b.tif"), full * 2 / 5, static_cast<std::size_t>(full / 5));
  std::string err;
  CHECK(s.run(err) == 4);
  CHECK_THAT(err, Contains("b.tif") && Contains("window at column") && Contains("gdalinfo -checksum"));
  CHECK(s.out_empty());
}

TEST_CASE("a complex-valued covariate raster is refused before any output", "[corrupt]") {
  Scene s;
  habcast::test::write_raster(s.dir.file("b.tif"), s.grid, "CInt16", [](int r, int c) { return r - c; });
  std::string err;
  CHECK(s.run(err) == 3);
  CHECK_THAT(err, Contains("b.tif") && Contains("complex numbers") && Contains("CInt16"));
  CHECK(s.out_empty());
}

TEST_CASE("asking for a band the raster does not have is refused naming file and band", "[corrupt]") {
  Scene s("band = 2");
  std::string err;
  CHECK(s.run(err) == 3);
  CHECK_THAT(err, Contains("a.tif") && Contains("band 2"));
  CHECK(s.out_empty());
}

TEST_CASE("a raster whose CRS cannot be parsed is refused naming the file", "[corrupt]") {
  Scene s;
  // The VRT points at b.tif's pixels but declares a CRS no parser accepts.
  habcast::test::write_text(s.dir.file("bad-crs.vrt"),
                            "<VRTDataset rasterXSize=\"400\" rasterYSize=\"300\">\n"
                            "  <SRS>PROJCS[\"broken\", GEOGCS[\"nothing here</SRS>\n"
                            "  <GeoTransform>500000, 100, 0, 4000000, 0, -100</GeoTransform>\n"
                            "  <VRTRasterBand dataType=\"Float32\" band=\"1\"><SimpleSource>\n"
                            "    <SourceFilename relativeToVRT=\"1\">b.tif</SourceFilename><SourceBand>1</SourceBand>\n"
                            "  </SimpleSource></VRTRasterBand>\n</VRTDataset>\n");
  std::string err;
  CHECK(s.run(err, {"-c", "b=" + s.dir.file("bad-crs.vrt")}) == 3);
  CHECK_THAT(err, Contains("bad-crs.vrt: has no usable CRS") && Contains("gdal_edit.py -a_srs"));
  // Also when every covariate has the broken CRS: GDAL would drop it in both, and the grids match.
  CHECK(s.run(err, {"-c", "a=" + s.dir.file("bad-crs.vrt"), "-c", "b=" + s.dir.file("bad-crs.vrt")}) == 3);
  CHECK_THAT(err, Contains("bad-crs.vrt: has no usable CRS"));
  CHECK(s.out_empty());
}

TEST_CASE("NaN and infinite cells that are not the nodata value are treated as nodata and counted", "[corrupt]") {
  Scene s;
  const double nan = std::numeric_limits<double>::quiet_NaN();
  const double inf = std::numeric_limits<double>::infinity();
  // Row 0, columns 0..2 hold NaN, +Inf and -Inf; the declared nodata (-9999) is elsewhere unused.
  habcast::test::write_raster(
      s.dir.file("a.tif"), s.grid, "Float32",
      [&](int r, int c) { return r == 0 && c == 0 ? nan : r == 0 && c == 1 ? inf : r == 0 && c == 2 ? -inf : 1.0 * c; },
      true, -9999.0);
  std::string err;
  REQUIRE(s.run(err) == 0);
  for (int c = 0; c < 3; ++c) CHECK(habcast::test::read_pixel(s.out + "/suitability.tif", 1, 0, c) == -9999.0);
  // Column 3 is ordinary: logistic(0.1 + 0.01 * 3 - 0.02 * b) with b read back from b.tif.
  const double b = habcast::test::read_pixel(s.dir.file("b.tif"), 1, 0, 3);
  CHECK_THAT(habcast::test::read_pixel(s.out + "/suitability.tif", 1, 0, 3),
             Catch::Matchers::WithinRel(1.0 / (1.0 + std::exp(-(0.1 + 0.03 - 0.02 * b))), 1e-6));
  const auto report = nlohmann::json::parse(habcast::test::read_text(s.out + "/report.json"));
  CHECK(report["pixels"]["missing_input"].get<long long>() == 3);
}
