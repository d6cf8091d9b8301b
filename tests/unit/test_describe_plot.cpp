// describe's pictures: the colour ramp, contour lines, and the niche plot: what it draws, its
// files and its colours.
#include <algorithm>
#include <catch2/catch.hpp>
#include <cmath>
#include <set>

#include "core/domain/training_samples.hpp"
#include "core/model/model_file.hpp"
#include "core/model/term_plan.hpp"
#include "core/niche/niche_description.hpp"
#include "describe_test_support.hpp"
#include "figure_file_check.hpp"
#include "render/drawing.hpp"
#include "render/niche_plot.hpp"

namespace habcast {
namespace {

std::size_t count_role(const Figure& fig, const std::string& role) { return fig.marks_with_role(role).size(); }

/// Marker centres of every mark with `role`, counted.
std::size_t markers_of(const Figure& fig, const std::string& role) {
  std::size_t n = 0;
  for (const Mark* m : fig.marks_with_role(role)) n += std::get<MarkersMark>(m->shape).centres.size();
  return n;
}

std::set<std::string> texts_of(const Figure& fig, const std::string& role) {
  std::set<std::string> out;
  for (const Mark* m : fig.marks_with_role(role)) out.insert(std::get<TextMark>(m->shape).text);
  return out;
}

Figure demo_figure() {
  const ModelSpec spec = read_model_file(test::source_path("sample-rasters/demo-model.toml"));
  const TrainingSamples samples = read_training_samples(spec);
  const TermPlan plan(spec);
  const NicheDescription d = describe_niche(spec, plan, &samples, {});
  return niche_plot_figure(layout_niche_plot(spec, d, 0.5));
}

/// Shortest distance from q to the segment a-b.
double distance_to_segment(Point2 q, Point2 a, Point2 b) {
  const double dx = b.x - a.x, dy = b.y - a.y, len2 = dx * dx + dy * dy;
  const double t = len2 > 0 ? std::clamp(((q.x - a.x) * dx + (q.y - a.y) * dy) / len2, 0.0, 1.0) : 0.0;
  return std::hypot(q.x - a.x - t * dx, q.y - a.y - t * dy);
}

TEST_CASE("The colour ramp gets lighter at every step, so it reads in order in greyscale", "[describe]") {
  // CIE L* of the 8-bit colours (sRGB decoding per IEC 61966-2-1): strictly increasing, and
  // spanning most of the lightness range. The design target is L* = 28 + 64 t.
  double previous = -1.0;
  for (int i = 0; i <= 20; ++i) {
    const double t = i / 20.0;
    const double L = lightness(ramp_colour(t));
    CHECK(L > previous);
    CHECK(L == Approx(28.0 + 64.0 * t).margin(0.6));  // 8-bit rounding moves L* by well under 0.6
    previous = L;
  }
  CHECK(to_hex(Rgb{255, 0, 16}) == "#ff0010");
}

TEST_CASE("Marching squares traces a circle as one closed line at the right radius", "[describe]") {
  // f = x^2 + y^2 on [-2, 2]^2, 81 x 81 samples; the level 1 contour is the unit circle. Linear
  // interpolation of a quadratic along a cell edge of 0.05 errs by at most h^2/8 / (2r) ~ 2e-4.
  const int n = 81;
  Eigen::MatrixXd f(n, n);
  auto coord = [&](double g) { return -2.0 + 4.0 * g / (n - 1); };
  for (int r = 0; r < n; ++r)
    for (int c = 0; c < n; ++c) f(r, c) = coord(c) * coord(c) + coord(r) * coord(r);
  const std::vector<Polyline> lines = contour_lines(f, 1.0);
  REQUIRE(lines.size() == 1);
  CHECK(lines[0].closed);
  CHECK(lines[0].points.size() > 100);
  for (const Point2& p : lines[0].points) CHECK(std::hypot(coord(p.x), coord(p.y)) == Approx(1.0).margin(1e-3));

  // Two separate bumps give two lines; a level above the maximum gives none.
  Eigen::MatrixXd g(n, n);
  for (int r = 0; r < n; ++r)
    for (int c = 0; c < n; ++c)
      g(r, c) = std::exp(-8 * (std::pow(coord(c) - 1, 2) + std::pow(coord(r), 2))) +
                std::exp(-8 * (std::pow(coord(c) + 1, 2) + std::pow(coord(r), 2)));
  CHECK(contour_lines(g, 0.5).size() == 2);
  CHECK(contour_lines(g, 5.0).empty());
}

TEST_CASE("Round contour levels fall strictly inside the range", "[describe]") {
  // The step is the smallest of 1, 2, 5 x 10^k not below (hi - lo) / count.
  const std::vector<double> levels = nice_levels(0.0, 1.0, 10);
  REQUIRE(levels.size() == 9);
  CHECK(levels.front() == Approx(0.1));
  CHECK(levels.back() == Approx(0.9));
  CHECK(nice_levels(0.0, 1.0, 8) == std::vector<double>{0.2, 0.4, 0.6, 0.8});
  CHECK(nice_levels(0.13, 0.87, 4) == std::vector<double>{0.2, 0.4, 0.6, 0.8});
}

TEST_CASE("The demo model's plot draws every part of the picture", "[describe]") {
  const Figure fig = demo_figure();
  CHECK(count_role(fig, "response-bands") == 1);
  CHECK(count_role(fig, "contour") >= 5);
  CHECK(count_role(fig, "breadth-contour") >= 1);
  CHECK(markers_of(fig, "training-point") == 400);  // every survey site of the demo
  CHECK(count_role(fig, "training-hull") == 1);
  CHECK(markers_of(fig, "optimum") == 1);
  CHECK(count_role(fig, "principal-axis") == 2);
  CHECK(count_role(fig, "conditional-optimum") == 2);
  CHECK(texts_of(fig, "axis-title") == std::set<std::string>{"tmin (°C)", "precip (mm)"});
  CHECK(texts_of(fig, "subtitle") == std::set<std::string>{"Others held at slope = 4.307°, landcover = heath"});
  // The demo's caption says its data are invented.
  REQUIRE(!fig.marks_with_role("note").empty());
  CHECK_THAT(std::get<TextMark>(fig.marks_with_role("note").front()->shape).text, Catch::StartsWith("Invented example"));
  // The legend stands beside the plot, never over the data: all its marks lie right of the frame.
  const std::vector<Point2>& frame = std::get<PathMark>(fig.marks_with_role("frame").front()->shape).points;
  const double plot_right = frame[1].x;
  std::size_t legend_marks = 0;
  for (const Mark& m : fig.marks()) {
    if (m.role.rfind("legend", 0) != 0) continue;
    ++legend_marks;
    if (const auto* t = std::get_if<TextMark>(&m.shape)) CHECK(t->at.x > plot_right);
    if (const auto* p = std::get_if<PathMark>(&m.shape))
      for (const Point2& q : p->points) CHECK(q.x > plot_right);
    if (const auto* k = std::get_if<MarkersMark>(&m.shape))
      for (const Point2& q : k->centres) CHECK(q.x > plot_right);
  }
  CHECK(legend_marks > 20);
}

TEST_CASE("The demo plot's files are valid SVG, PNG and PDF at A4 width", "[describe]") {
  const Figure fig = demo_figure();
  CHECK(test::parses_as_svg(encode_figure(fig, FigureFormat::svg)));
  CHECK(test::looks_like_pdf(encode_figure(fig, FigureFormat::pdf)));
  const std::string png = encode_figure(fig, FigureFormat::png);
  REQUIRE(test::has_png_signature(png));
  CHECK(test::png_size(png)[0] == 2008);  // 170 mm at 300 dpi
  CHECK(test::png_size(png)[1] == static_cast<std::uint32_t>(png_pixels(fig.height())));
}

TEST_CASE("Where nothing is drawn over the bands, the PNG shows the colours of the legend's steps", "[describe]") {
  const Figure fig = demo_figure();
  const ImageMark& bands = std::get<ImageMark>(fig.marks_with_role("response-bands").front()->shape);
  // The legend promises: step k (from the bottom) has the colour of band k of the image.
  const std::vector<const Mark*> steps = fig.marks_with_role("legend-step");
  REQUIRE(steps.size() == bands.image.palette.size());
  for (std::size_t k = 0; k < steps.size(); ++k)
    CHECK(test::same_colour(std::get<PathMark>(steps[k]->shape).fill->colour, bands.image.palette[k], 0));
  // Everything drawn over the plot area, to keep clear of: lines (at most 2.5 pt wide) by 4 pt,
  // markers by their radius and 4 pt, labels by 14 pt around their anchor (30 pt for "optimum").
  std::vector<std::pair<Point2, Point2>> segments;
  std::vector<std::pair<Point2, double>> spots;
  for (const Mark& m : fig.marks()) {
    if (m.role == "response-bands" || !m.clip) continue;
    if (const auto* p = std::get_if<PathMark>(&m.shape))
      for (std::size_t i = 0; i + 1 < p->points.size(); ++i) segments.emplace_back(p->points[i], p->points[i + 1]);
    if (const auto* k = std::get_if<MarkersMark>(&m.shape))
      for (const Point2& c : k->centres) spots.emplace_back(c, k->marker.size / 2.0 + 4.0);
  }
  for (const Mark* m : fig.marks_with_role("contour-label")) spots.emplace_back(std::get<TextMark>(m->shape).at, 14.0);
  for (const Mark* m : fig.marks_with_role("optimum-label")) spots.emplace_back(std::get<TextMark>(m->shape).at, 30.0);

  const test::DecodedPng png = test::decode_png(encode_figure(fig, FigureFormat::png));
  REQUIRE(png.width > 0);
  const double s = kPngDpi / 72.0;
  const Rect& r = bands.where;
  auto band = [&](int x, int y) { return bands.image.index[static_cast<std::size_t>(y * bands.image.width + x)]; };
  std::set<int> bands_seen;
  std::size_t checked = 0;
  for (int j = 1; j < 40; ++j)
    for (int i = 1; i < 40; ++i) {
      const Point2 q{r.x + r.width * i / 40.0, r.y + r.height * j / 40.0};
      bool clear = true;
      for (const auto& [a, b] : segments) clear = clear && distance_to_segment(q, a, b) > 4.0;
      for (const auto& [c, radius] : spots) clear = clear && std::hypot(q.x - c.x, q.y - c.y) > radius;
      // The same band 3 image pixels around, so the sample is not on a band's edge.
      const int ix = static_cast<int>((q.x - r.x) / r.width * bands.image.width);
      const int iy = static_cast<int>((q.y - r.y) / r.height * bands.image.height);
      for (int dy = -3; dy <= 3; ++dy)
        for (int dx = -3; dx <= 3; ++dx) clear = clear && band(ix + dx, iy + dy) == band(ix, iy);
      if (!clear) continue;
      const Rgb promised = std::get<PathMark>(steps[band(ix, iy)]->shape).fill->colour;
      INFO("at " << q.x << ", " << q.y << " pt, band " << int(band(ix, iy)));
      CHECK(test::same_colour(png.at(static_cast<int>(q.x * s), static_cast<int>(q.y * s)), promised));
      bands_seen.insert(band(ix, iy));
      ++checked;
    }
  CHECK(checked > 100);
  CHECK(bands_seen.size() >= 5);
}

TEST_CASE("Names and units from the model file are drawn as given and cannot break the SVG", "[describe]") {
  const std::string text =
      "habcast_model = 1\n[model]\nname = \"A <b>&amp; test\"\nfamily = \"binomial\"\n"
      "[covariates.u]\nunits = \"m<sup>&\\\"'\"\n[covariates.v]\nunits = \"]]>\"\ntransform = \"log\"\n"
      "[coefficients]\nterms = [\"(Intercept)\", \"u\", \"u^2\", \"v\", \"v^2\", \"u:v\"]\n"
      "estimates = [0.5, 0.2, -0.8, 0.1, -0.6, 0.3]\n";
  const ModelSpec spec = parse_model_text(text, "hostile.toml");
  const TermPlan plan(spec);
  const NicheDescription d = describe_niche(spec, plan, nullptr, {});
  const Figure fig = niche_plot_figure(layout_niche_plot(spec, d, 0.5));
  const std::set<std::string> labels = texts_of(fig, "axis-title");
  CHECK(labels.count("u (m<sup>&\"')") == 1);
  CHECK(labels.count("v (]]>, log scale)") == 1);
  CHECK(test::parses_as_svg(encode_figure(fig, FigureFormat::svg)));
  CHECK(test::looks_like_pdf(encode_figure(fig, FigureFormat::pdf)));
}

TEST_CASE("Units are typeset as printed: degrees, exponents, plus-minus; other text is left alone", "[describe]") {
  CHECK(typeset_units("degC") == "°C");
  CHECK(typeset_units("kg m-2 s-1") == "kg m⁻² s⁻¹");
  CHECK(typeset_units("km^2") == "km²");
  CHECK(typeset_units("ind/ha") == "ind/ha");
  CHECK(typeset_units("+- 1 SE") == "± 1 SE");
  CHECK(typeset_units("PM10") == "PM10");
  CHECK(typeset_units("m<sup>&") == "m<sup>&");
  CHECK(typeset_number(-2.5) == "−2.5");
  CHECK(typeset_number(1200) == "1200");
}

}  // namespace
}  // namespace habcast
