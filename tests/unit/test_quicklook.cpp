// The map quicklook: a raster of known blocks drawn as PNG and PDF; the PNG's map pixels have the
// ramp colours its legend promises, no-data is grey, extrapolated pixels are hatched, and the
// raster is read at the picture's size, never at its own.
#include <gdal_priv.h>

#include <catch2/catch.hpp>
#include <cmath>

#include "figure_file_check.hpp"
#include "raster/gdal_session.hpp"
#include "render/drawing.hpp"
#include "render/quicklook.hpp"
#include "test_support.hpp"

namespace habcast {
namespace {

/// 40 x 30 cells of 100 m (UTM 30N): four blocks of 20 x 15 with values 0.1, 0.4 (top), 0.7,
/// 0.95 (bottom); a no-data square in the top-left block. Flags: the bottom-right block is
/// extrapolated (bit 1), the rest inside (0), no-data 255.
struct BlockScene {
  test::TempDir dir{"quicklook-blocks"};
  std::string suitability = dir.file("suitability.tif"), flags = dir.file("extrapolation.tif");
  BlockScene() {
    test::GridSpec grid;
    grid.width = 40;
    grid.height = 30;
    test::write_raster(suitability, grid, "Float32", [](int r, int c) {
      if (r >= 2 && r < 6 && c >= 2 && c < 6) return -9999.0;
      return r < 15 ? (c < 20 ? 0.1 : 0.4) : (c < 20 ? 0.7 : 0.95);
    }, true, -9999.0);
    test::write_raster(flags, grid, "Byte", [](int r, int c) {
      if (r >= 2 && r < 6 && c >= 2 && c < 6) return 255.0;
      return r >= 15 && c >= 20 ? 1.0 : 0.0;
    }, true, 255.0);
  }
};

TEST_CASE("Quicklook pixels have the colours of the legend's ramp; no-data is grey; extrapolation is hatched", "[quicklook]") {
  BlockScene s;
  const Figure fig = quicklook_figure(s.suitability, s.flags, "Blocks", "Invented test data.");
  const QuicklookLayout l = quicklook_layout(40, 30);
  const test::DecodedPng png = test::decode_png(encode_figure(fig, FigureFormat::png));
  REQUIRE(png.width == 2008);
  const double px = kPngDpi / 72.0;
  // The centre of raster cell (row, col) in PNG pixels.
  auto at = [&](double row, double col) {
    return png.at(static_cast<int>((l.map.x + (col + 0.5) / 40.0 * l.map.width) * px),
                  static_cast<int>((l.map.y + (row + 0.5) / 30.0 * l.map.height) * px));
  };
  // The values are probabilities within 0..1, so the legend runs from 0 to 1 and value v has the
  // ramp's colour at v, taken in the map palette's 255 steps (a step moves a channel by up to 6
  // where the ramp meets the edge of the sRGB gamut, so the step is part of the promise).
  auto promised = [](double v) { return ramp_colour(std::round(v * 254.0) / 254.0); };
  CHECK(test::same_colour(at(10, 10), promised(0.1)));
  CHECK(test::same_colour(at(10, 30), promised(0.4)));
  CHECK(test::same_colour(at(25, 10), promised(0.7)));
  CHECK(test::same_colour(at(25, 10), ramp_colour(0.7), 6));
  CHECK(test::same_colour(at(3, 3), Rgb{228, 228, 228}, 0));
  // The legend says so: its ramp is labelled 0 at the bottom and 1 at the top.
  std::vector<std::string> labels;
  for (const Mark* m : fig.marks_with_role("legend-value")) labels.push_back(std::get<TextMark>(m->shape).text);
  REQUIRE(labels.size() >= 2);
  CHECK(labels.front() == "0");
  CHECK(labels.back() == "1");

  // The extrapolated block: ink stripes over the light colour of 0.95, and the colour between them.
  std::size_t ink = 0, colour = 0, total = 0;
  for (int y = static_cast<int>((l.map.y + 18.0 / 30.0 * l.map.height) * px); y < static_cast<int>((l.map.y + 27.0 / 30.0 * l.map.height) * px); ++y)
    for (int x = static_cast<int>((l.map.x + 23.0 / 40.0 * l.map.width) * px); x < static_cast<int>((l.map.x + 37.0 / 40.0 * l.map.width) * px); ++x, ++total) {
      if (test::same_colour(png.at(x, y), kInk, 8)) ++ink;
      if (test::same_colour(png.at(x, y), promised(0.95))) ++colour;
    }
  CHECK(ink > total / 10);
  CHECK(colour > total / 3);
  // No stripes over the blocks that are inside the training data.
  std::size_t stray = 0;
  for (int y = static_cast<int>((l.map.y + 18.0 / 30.0 * l.map.height) * px); y < static_cast<int>((l.map.y + 27.0 / 30.0 * l.map.height) * px); ++y)
    for (int x = static_cast<int>((l.map.x + 3.0 / 40.0 * l.map.width) * px); x < static_cast<int>((l.map.x + 17.0 / 40.0 * l.map.width) * px); ++x)
      if (!test::same_colour(png.at(x, y), promised(0.7))) ++stray;
  CHECK(stray == 0);

  // The same figure as PDF and SVG.
  CHECK(test::looks_like_pdf(encode_figure(fig, FigureFormat::pdf)));
  CHECK(test::parses_as_svg(encode_figure(fig, FigureFormat::svg)));
  // Scale bar (a projected CRS in metres) and the caption.
  CHECK(!fig.marks_with_role("scale-bar").empty());
  CHECK(!fig.marks_with_role("caption").empty());
}

TEST_CASE("The quicklook reads a raster's overview when it has one of the picture's size", "[quicklook]") {
  // 3000 x 2000 cells of 0.1; an overview at half size whose cells we set to 0.9. The map is
  // 1375 x 917 pixels at 300 dpi, so the 1500 x 1000 overview is the one to read, and the map
  // must show 0.9. (GDAL builds overviews as reductions of the data; writing them by hand only
  // makes it visible which level was read.)
  test::TempDir dir("quicklook-overview");
  const std::string path = dir.file("suitability.tif");
  test::GridSpec grid;
  grid.width = 3000;
  grid.height = 2000;
  grid.block = 256;
  test::write_raster(path, grid, "Float32", [](int, int) { return 0.1; });
  {
    ensure_gdal();
    GDALDataset* ds = static_cast<GDALDataset*>(GDALOpen(path.c_str(), GA_Update));
    REQUIRE(ds != nullptr);
    int level = 2;
    REQUIRE(ds->BuildOverviews("NEAREST", 1, &level, 0, nullptr, nullptr, nullptr) == CE_None);
    GDALRasterBand* overview = ds->GetRasterBand(1)->GetOverview(0);
    REQUIRE(overview->GetXSize() == 1500);
    std::vector<float> high(1500, 0.9f);
    for (int r = 0; r < 1000; ++r)
      REQUIRE(overview->RasterIO(GF_Write, 0, r, 1500, 1, high.data(), 1500, 1, GDT_Float32, 0, 0, nullptr) == CE_None);
    GDALClose(ds);
  }
  const QuicklookLayout l = quicklook_layout(3000, 2000);
  REQUIRE(l.pixels_x == 1375);
  const Figure fig = quicklook_figure(path, "", "Overview");
  const ImageMark& map = std::get<ImageMark>(fig.marks_with_role("map").front()->shape);
  CHECK(map.image.width == 1375);
  CHECK(map.image.palette[map.image.index[0]].r == ramp_colour(std::round(0.9 * 254.0) / 254.0).r);
  CHECK(map.image.palette[map.image.index[0]].g == ramp_colour(std::round(0.9 * 254.0) / 254.0).g);
}

TEST_CASE("The quicklook reads a big raster at the picture's size, so memory does not grow with the raster", "[quicklook]") {
  // 100 Mpix (10 000 x 10 000 cells): the map is 330 x 330 pt, read as 1375 x 1375 values at
  // 300 dpi, whatever the raster's size.
  const QuicklookLayout big = quicklook_layout(10000, 10000);
  CHECK(big.pixels_x == 1375);
  CHECK(big.pixels_y == 1375);
  CHECK(big.repeat == 1);
  CHECK(quicklook_layout(40000, 40000).pixels_x == 1375);
  // A long thin raster fits the 360 pt height.
  const QuicklookLayout tall = quicklook_layout(1000, 4000);
  CHECK(tall.map.height == Approx(360.0));
  CHECK(tall.map.width == Approx(90.0));
}

}  // namespace
}  // namespace habcast
