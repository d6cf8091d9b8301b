// The region mosaic and report: the VRT opens in GDAL as one raster on the whole grid, its pixels
// at the tile seams are the tiles' own pixels, and the whole mosaic equals one prediction over the
// untiled grid; the COG holds the same values; the report adds the tiles up to the whole-grid report.
#include <gdal_priv.h>

#include <catch2/catch.hpp>
#include <algorithm>
#include <cmath>
#include <cstring>
#include <filesystem>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "batch_test_scene.hpp"
#include "raster/gdal_session.hpp"

namespace {

namespace fs = std::filesystem;
using Catch::Matchers::Contains;
using habcast::test::BatchScene;

struct Opened {
  GDALDataset* ds;
  explicit Opened(const std::string& path) : ds(GDALDataset::Open(path.c_str(), GDAL_OF_RASTER | GDAL_OF_READONLY)) {
    if (!ds) throw std::runtime_error("GDAL cannot open " + path);
  }
  ~Opened() { GDALClose(GDALDataset::ToHandle(ds)); }
  Opened(const Opened&) = delete;
  Opened& operator=(const Opened&) = delete;
};

bool same_bits(const std::vector<double>& a, const std::vector<double>& b) {
  return a.size() == b.size() && std::memcmp(a.data(), b.data(), a.size() * sizeof(double)) == 0;
}

/// A scene run as a batch (with a COG) and, for comparison, as one predict over the whole grid.
struct MosaicRun {
  BatchScene s{2, 3, 37, 29, 5};  // 116 x 63 pixels; seams at columns 37, 74 and row 29
  std::string whole = s.file("whole");
  MosaicRun() {
    REQUIRE(s.run({"--cog"}) == 0);
    REQUIRE(habcast::test::run_cli({"predict", s.model(), "-q", "-o", whole, "-c", "elev=" + s.file("elev.tif"), "-c",
                                    "cover=" + s.file("cover.tif")}) == 0);
  }
};

std::vector<std::string> category_names(GDALRasterBand& band) {
  // GDAL 3.6's GeoTIFF driver reads the .aux.xml sidecar lazily, on the first georeferencing or
  // metadata request (as gdalinfo and GIS software make on opening); category names alone do not
  // trigger it, so ask for the geotransform first, as they do.
  double transform[6];
  if (band.GetDataset() != nullptr) band.GetDataset()->GetGeoTransform(transform);
  std::vector<std::string> names;
  for (char** n = band.GetCategoryNames(); n != nullptr && *n != nullptr; ++n) names.emplace_back(*n);
  return names;
}

}  // namespace

TEST_CASE("the VRT mosaic opens in GDAL on the whole grid and equals one prediction over it", "[batch]") {
  MosaicRun m;
  habcast::ensure_gdal();
  for (const char* layer : {"suitability", "uncertainty", "extrapolation"}) {
    const std::string vrt = m.s.out() + "/" + layer + ".vrt";
    const std::string single = m.whole + "/" + layer + ".tif";
    Opened v(vrt);
    Opened w(single);
    CHECK(std::string(v.ds->GetDriver()->GetDescription()) == "VRT");
    CHECK(v.ds->GetRasterXSize() == m.s.width());
    CHECK(v.ds->GetRasterYSize() == m.s.height());
    CHECK(v.ds->GetRasterCount() == w.ds->GetRasterCount());
    double gv[6], gw[6];
    v.ds->GetGeoTransform(gv);
    w.ds->GetGeoTransform(gw);
    for (int i = 0; i < 6; ++i) CHECK(gv[i] == gw[i]);
    for (int band = 1; band <= w.ds->GetRasterCount(); ++band) {
      INFO(layer << " band " << band);
      CHECK(same_bits(habcast::test::read_band(vrt, band), habcast::test::read_band(single, band)));
      int has = 0;
      CHECK(v.ds->GetRasterBand(band)->GetNoDataValue(&has) == w.ds->GetRasterBand(band)->GetNoDataValue());
      CHECK(has);
      // What GIS software shows beside the pixels: band names, flag names, colours.
      CHECK(std::string(v.ds->GetRasterBand(band)->GetDescription()) == w.ds->GetRasterBand(band)->GetDescription());
      CHECK(category_names(*v.ds->GetRasterBand(band)) == category_names(*w.ds->GetRasterBand(band)));
      const GDALColorTable* vc = v.ds->GetRasterBand(band)->GetColorTable();
      const GDALColorTable* wc = w.ds->GetRasterBand(band)->GetColorTable();
      CHECK((vc == nullptr) == (wc == nullptr));
      if (vc && wc) CHECK(vc->GetColorEntryCount() == wc->GetColorEntryCount());
    }
    if (std::string(layer) == "extrapolation") CHECK(category_names(*v.ds->GetRasterBand(1)).size() > 1);
  }
}

TEST_CASE("mosaic pixels on both sides of every seam are the tiles' own pixels", "[batch]") {
  MosaicRun m;
  const std::string vrt = m.s.out() + "/suitability.vrt";
  const auto mosaic = habcast::test::read_band(vrt);
  const int w = m.s.width();
  int checked = 0;
  for (int r = 0; r < 2; ++r)
    for (int c = 0; c < 3; ++c) {
      const int x0 = m.s.col_edge(c), x1 = m.s.col_edge(c + 1), y0 = m.s.row_edge(r), y1 = m.s.row_edge(r + 1);
      const auto tile = habcast::test::read_band(m.s.tile_out(m.s.out(), r, c) + "/suitability.tif");
      // The tile's border pixels (first and last row and column) are the ones beside a seam.
      for (int y = y0; y < y1; ++y)
        for (int x = x0; x < x1; ++x) {
          if (y != y0 && y != y1 - 1 && x != x0 && x != x1 - 1) continue;
          const double in_tile = tile[static_cast<std::size_t>((y - y0) * (x1 - x0) + (x - x0))];
          INFO("tile " << BatchScene::id(r, c) << " pixel " << y << "," << x);
          CHECK(std::memcmp(&in_tile, &mosaic[static_cast<std::size_t>(y * w + x)], sizeof(double)) == 0);
          ++checked;
        }
    }
  CHECK(checked > 600);
}

TEST_CASE("with --cog each layer is also a Cloud Optimized GeoTIFF holding the mosaic's values", "[batch]") {
  MosaicRun m;
  for (const char* layer : {"suitability", "extrapolation"}) {
    const std::string cog = m.s.out() + "/" + layer + ".tif";
    Opened c(cog);
    // GDAL's COG driver tags its files so (GDAL documentation, COG driver: LAYOUT=COG).
    const char* layout = c.ds->GetMetadataItem("LAYOUT", "IMAGE_STRUCTURE");
    CHECK(std::string(layout ? layout : "") == "COG");
    Opened v(m.s.out() + "/" + layer + ".vrt");
    // Flag names travel in the COG's .aux.xml sidecar, which must follow it out of its temporary name.
    CHECK(category_names(*c.ds->GetRasterBand(1)) == category_names(*v.ds->GetRasterBand(1)));
    CHECK(same_bits(habcast::test::read_band(cog), habcast::test::read_band(m.s.out() + "/" + layer + ".vrt")));
  }
  for (const auto& entry : fs::directory_iterator(m.s.out())) {
    INFO(entry.path().string());
    CHECK(entry.path().filename().string().find(".partial") == std::string::npos);
  }
}

TEST_CASE("the region report adds the tiles up to the whole-grid report", "[batch]") {
  MosaicRun m;
  using json = nlohmann::json;
  const json region = json::parse(habcast::test::read_text(m.s.out() + "/batch-report.json"));
  const json whole = json::parse(habcast::test::read_text(m.whole + "/report.json"));
  const json& total = region["total"];
  CHECK(region["tiles_total"] == 6);
  CHECK(region["tiles_done"] == 6);
  CHECK(region["exit_code"] == 0);
  CHECK(total["valid_pixels"] == whole["pixels"]["with_data"]);
  CHECK(total["predicted_pixels"] == whole["pixels"]["predicted"]);
  // Means combined from tile means and counts: equal up to summation order (relative 1e-12).
  CHECK_THAT(total["mean_suitability"].get<double>(),
             Catch::Matchers::WithinRel(whole["response"]["mean"].get<double>(), 1e-12));
  const json& ex = whole["extrapolation"];
  CHECK(total["extrapolation"]["pixels"] == ex["flagged_pixels"]);
  for (const char* cause : {"outside_range", "unseen_level"})
    CHECK(total["extrapolation"]["causes"][cause]["pixels"] == ex["causes"][cause]["pixels"]);
  CHECK(total["extrapolation"]["covariates"]["elev"]["pixels"].get<long long>() ==
        ex["covariates"]["elev"]["below_pixels"].get<long long>() + ex["covariates"]["elev"]["above_pixels"].get<long long>());
  CHECK(total["extrapolation"]["covariates"]["cover"]["pixels"] == ex["covariates"]["cover"]["unseen_level_pixels"]);
  CHECK_THAT(total["extrapolation"]["area_ha"].get<double>(),
             Catch::Matchers::WithinRel(ex["flagged_area_ha"].get<double>(), 1e-12));
  CHECK(total["extrapolation"]["pixels"].get<long long>() > 0);

  const std::string csv = habcast::test::read_text(m.s.out() + "/batch-report.csv");
  CHECK(std::count(csv.begin(), csv.end(), '\n') == 8);  // header, 6 tiles, total
  CHECK_THAT(csv, Contains("tile,status,ran_this_run,seconds,valid_pixels") && Contains("\nTOTAL,6/6 done,"));
  CHECK_THAT(csv, Contains("outside_elev_share") && Contains("unseen_level_area_ha"));
}

TEST_CASE("mosaic-only rebuilds the mosaic from the records alone", "[batch]") {
  MosaicRun m;
  fs::remove(m.s.out() + "/suitability.vrt");
  fs::remove(m.s.out() + "/batch-report.json");
  std::string out;
  REQUIRE(m.s.run({"--mosaic-only"}, &out) == 0);
  CHECK_THAT(out, Contains("0 run, 6 up to date"));
  CHECK(same_bits(habcast::test::read_band(m.s.out() + "/suitability.vrt"),
                  habcast::test::read_band(m.whole + "/suitability.tif")));
  // Without --cog, a COG of an earlier run is removed rather than left disagreeing with the VRT.
  CHECK_FALSE(fs::exists(m.s.out() + "/suitability.tif"));
}
