// The drawing interface: one Figure written as SVG, PNG and PDF; the files are valid and the PNG's
// pixels have the colours that were drawn. No image is compared byte for byte.
#include <catch2/catch.hpp>

#include "figure_file_check.hpp"
#include "core/base/error.hpp"
#include "render/drawing.hpp"
#include "render/evaluation_figure.hpp"

namespace habcast {
namespace {

/// A figure with one of every kind of mark: a band, a line, markers, a hatched polygon, an
/// image with a palette, a hatch mask, text in several styles, a legend and a scale bar.
Figure sample_figure() {
  Figure fig(kA4FigureWidth, 240.0);
  fig.title = "Drawing check";
  fig.text({40, 18}, "Response to minimum temperature (°C), area in m² ± 1 SE", figure_style::title());
  Axes ax(fig, Rect{50, 30, 200, 160}, -5, 15, 0, 1);
  ax.grid(round_ticks(-5, 15), round_ticks(0, 1));
  ax.band({-5, 5, 15}, {0.1, 0.3, 0.2}, {0.3, 0.6, 0.4}, Fill{ramp_colour(0.8), 0.5}, "band");
  ax.line({{-5, 0.2}, {5, 0.45}, {15, 0.3}}, Stroke{kInk, 1.0}, "curve");
  ax.points({{0, 0.8}, {10, 0.9}}, Marker{MarkerShape::circle, 4.0, Fill{kInk}, Stroke{figure_style::kWhite, 0.5}}, "site");
  ax.polygon({{8, 0.55}, {14, 0.55}, {14, 0.95}, {8, 0.95}}, Fill{ramp_colour(0.2)}, Stroke{kInk, 0.5}, "box", Hatch{});
  ax.x_axis(round_ticks(-5, 15), "tmin (°C)");
  ax.y_axis(round_ticks(0, 1), "probability");
  ax.frame();
  // A 2 x 2 image: a solid block of four colours, big enough to sample from the PNG.
  IndexedImage img;
  img.width = 2;
  img.height = 2;
  img.index = {0, 1, 2, 3};
  img.palette = {ramp_colour(0.0), ramp_colour(0.33), ramp_colour(0.66), ramp_colour(1.0)};
  fig.image({300, 30, 80, 80}, img, "image");
  PixelMask mask{2, 2, {0, 0, 1, 0}};
  fig.hatch_mask({300, 30, 80, 80}, mask, Hatch{kInk, 4.0, 1.0}, "hatch");
  Legend legend(90);
  legend.heading("Legend heading that wraps over lines");
  legend.line("fitted", Stroke{kInk, 1.0});
  legend.swatch("band", Fill{ramp_colour(0.8), 0.5});
  legend.marker("site", Marker{});
  legend.colour_ramp({{0.0, "0"}, {1.0, "1"}}, 40.0);
  legend.draw(fig, {395, 30});
  scale_bar(fig, {300, 200}, 100.0, 80.0);
  return fig;
}

TEST_CASE("One figure is written as a valid SVG, PNG and PDF", "[figure]") {
  const Figure fig = sample_figure();
  const std::string svg = encode_figure(fig, "check.svg");
  const std::string png = encode_figure(fig, "check.PNG");
  const std::string pdf = encode_figure(fig, "check.pdf");
  CHECK(test::parses_as_svg(svg));
  CHECK(test::looks_like_pdf(pdf));
  REQUIRE(test::has_png_signature(png));
  // 170 mm at 300 pixels per inch is 2008 pixels (ceil of 481.89 * 300 / 72); 240 pt is 1000.
  CHECK(test::png_size(png) == std::array<std::uint32_t, 2>{2008, 1000});
  CHECK(png_pixels(kA4FigureWidth) == 2008);
  // The checks can fail: a truncated file is not accepted.
  CHECK_FALSE(test::parses_as_svg(svg.substr(0, svg.size() / 2)));
  CHECK_FALSE(test::looks_like_pdf(pdf.substr(0, pdf.size() - 20)));
  CHECK_FALSE(test::has_png_signature(pdf));
  // The PNG names what it shows and what drew it. libpng (through GDAL's PNG driver, which reports
  // text chunks as metadata) drops a text chunk whose CRC is wrong, so this checks the CRCs too.
  const test::DecodedPng decoded = test::decode_png(png);
  CHECK(decoded.width == 2008);
  CHECK(decoded.metadata_title == "Drawing check");
  CHECK(decoded.metadata_software == "habcast");
}

TEST_CASE("PNG pixels have the colours the figure drew, hatching included", "[figure]") {
  const test::DecodedPng png = test::decode_png(encode_figure(sample_figure(), FigureFormat::png));
  REQUIRE(png.width == 2008);
  const double s = kPngDpi / 72.0;
  auto pixel = [&](double x, double y) { return png.at(static_cast<int>(x * s), static_cast<int>(y * s)); };
  // Image cells (centres of the 40 pt quarters); the lower-left cell is hatched, so sample it
  // between its lines and on one.
  CHECK(test::same_colour(pixel(320, 50), ramp_colour(0.0)));
  CHECK(test::same_colour(pixel(360, 50), ramp_colour(0.33)));
  CHECK(test::same_colour(pixel(360, 90), ramp_colour(1.0)));
  std::size_t ink = 0, cell = 0, total = 0;
  for (int y = static_cast<int>(75 * s); y < static_cast<int>(105 * s); ++y)
    for (int x = static_cast<int>(305 * s); x < static_cast<int>(335 * s); ++x, ++total) {
      if (test::same_colour(png.at(x, y), kInk, 6)) ++ink;
      if (test::same_colour(png.at(x, y), ramp_colour(0.66))) ++cell;
    }
  // Lines 1 pt wide every 4 pt cover about a quarter of the cell (less their antialiased edges).
  CHECK(ink > total / 8);
  CHECK(cell > total / 2);
  CHECK(test::same_colour(pixel(2, 2), figure_style::kWhite));
}

TEST_CASE("Figures are set in DejaVu Sans, so the font package is in place", "[figure]") {
  CHECK(resolved_font_family() == "DejaVu Sans");
  // Mixed case is measured as set: lower case is narrower than capitals.
  CHECK(measure_text("habitat", figure_style::legend()).width < measure_text("HABITAT", figure_style::legend()).width);
}

TEST_CASE("Round ticks include both ends when they are round", "[figure]") {
  std::vector<double> values;
  for (const Tick& t : round_ticks(0, 1, 5)) values.push_back(t.value);
  CHECK(values == std::vector<double>{0, 0.2, 0.4, 0.6, 0.8, 1});
  CHECK(round_ticks(-5, 15, 4).front().label == "−5");  // a true minus sign, U+2212
  CHECK(round_ticks(-5, 15, 4).back().label == "15");
  CHECK(round_ticks(0.13, 0.87, 4).front().label == "0.2");
}

TEST_CASE("A picture's format follows its extension, and others are refused by name", "[figure]") {
  CHECK(figure_format("a/b.svg") == FigureFormat::svg);
  CHECK(figure_format("map.PDF") == FigureFormat::pdf);
  CHECK(figure_format("x.png") == FigureFormat::png);
  CHECK_THROWS_WITH(figure_format("map.jpg"), Catch::Contains("map.jpg") && Catch::Contains(".svg, .png or .pdf"));
  CHECK_THROWS_AS(figure_format("map"), UsageError);
}

TEST_CASE("A scale bar has a round length no longer than allowed", "[figure]") {
  CHECK(scale_bar_metres(100.0, 80.0) == 5000.0);   // 8 km allowed -> 5 km
  CHECK(scale_bar_metres(25.0, 80.0) == 2000.0);    // 2 km allowed -> 2 km
  CHECK(scale_bar_metres(1.0, 99.0) == 50.0);
}

TEST_CASE("The evaluation figure draws the ROC curve beside calibration or the Boyce curve", "[figure]") {
  const std::vector<double> scores{0.1, 0.2, 0.3, 0.35, 0.4, 0.6, 0.7, 0.8, 0.9, 0.95};
  const std::vector<std::uint8_t> seen{0, 0, 1, 0, 0, 1, 0, 1, 1, 1};
  const Discrimination d = discriminate(scores, seen);
  const std::vector<CalibrationBin> bins = calibration_table(scores, seen, 5);
  const Figure with_bins = evaluation_figure(d, &bins, nullptr, "Check");
  CHECK(with_bins.marks_with_role("roc").size() == 1);
  CHECK(with_bins.marks_with_role("best-threshold").size() == 1);
  std::size_t drawn_bins = 0;
  for (const CalibrationBin& b : bins) drawn_bins += b.count > 0 ? 1 : 0;
  CHECK(with_bins.marks_with_role("calibration-bin").size() == drawn_bins);
  CHECK(test::looks_like_pdf(encode_figure(with_bins, FigureFormat::pdf)));

  const BoyceResult boyce = boyce_index({0.6, 0.7, 0.8, 0.9}, scores, 0.2, 20);
  const Figure with_boyce = evaluation_figure(d, nullptr, &boyce, "Check");
  CHECK(with_boyce.marks_with_role("boyce").size() == 1);
  CHECK(with_boyce.marks_with_role("calibration-bin").empty());
  CHECK(test::parses_as_svg(encode_figure(with_boyce, FigureFormat::svg)));
}

}  // namespace
}  // namespace habcast
