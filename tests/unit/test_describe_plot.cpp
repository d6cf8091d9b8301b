// describe's pictures: the colour ramp, contour lines, and the SVG plot parsed as XML.
#include <catch2/catch.hpp>
#include <cmath>
#include <set>

#include "core/domain/training_samples.hpp"
#include "core/model/model_file.hpp"
#include "core/model/term_plan.hpp"
#include "core/niche/niche_description.hpp"
#include "describe_test_support.hpp"
#include "render/colour_ramp.hpp"
#include "render/contours.hpp"
#include "render/niche_plot.hpp"
#include "render/svg_document.hpp"
#include "xml_check.hpp"

namespace habcast {
namespace {

using test::XmlElement;
using test::XmlReader;

std::size_t count_class(const XmlElement& root, const std::string& tag, const std::string& cls) {
  std::size_t n = 0;
  for (const XmlElement* e : root.all(tag)) {
    const std::string c = e->attribute("class");
    if (c == cls || c.rfind(cls + " ", 0) == 0) ++n;
  }
  return n;
}

TEST_CASE("The XML check rejects documents that are not well-formed", "[describe]") {
  CHECK_NOTHROW(XmlReader("<a x=\"1\"><b/>t &amp; u</a>").parse());
  CHECK_THROWS(XmlReader("<a><b></a></b>").parse());
  CHECK_THROWS(XmlReader("<a>fish & chips</a>").parse());
  CHECK_THROWS(XmlReader("<a x=\"1\" x=\"2\"/>").parse());
  CHECK_THROWS(XmlReader("<a x=1/>").parse());
  CHECK_THROWS(XmlReader("<a/><b/>").parse());
  CHECK_THROWS(XmlReader("<a>").parse());
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

TEST_CASE("The demo model's plot is well-formed SVG with every part of the picture", "[describe]") {
  const ModelSpec spec = read_model_file(test::source_path("sample-rasters/demo-model.toml"));
  const TrainingSamples samples = read_training_samples(spec);
  const TermPlan plan(spec);
  const NicheDescription d = describe_niche(spec, plan, &samples, {});
  const std::string svg = niche_plot_svg(layout_niche_plot(spec, d, 0.5));
  const auto root = XmlReader(svg).parse();

  CHECK(root->name == "svg");
  CHECK(count_class(*root, "polyline", "contour") >= 5);
  CHECK(count_class(*root, "polyline", "contour breadth") >= 1);
  CHECK(count_class(*root, "circle", "training-point") == 400);  // every survey site of the demo
  CHECK(count_class(*root, "polygon", "training-hull") == 1);
  CHECK(count_class(*root, "circle", "optimum") == 1);
  CHECK(count_class(*root, "line", "principal-axis") == 2);
  CHECK(count_class(*root, "line", "conditional-optimum") == 2);
  std::set<std::string> labels;
  for (const XmlElement* t : root->all("text"))
    if (t->attribute("class") == "axis-label") labels.insert(t->text);
  CHECK(labels == std::set<std::string>{"tmin (degC)", "precip (mm)"});
  CHECK(!root->all("g").empty());
}

TEST_CASE("Names and units from the model file cannot break the SVG", "[describe]") {
  const std::string text =
      "habcast_model = 1\n[model]\nname = \"A <b>&amp; test\"\nfamily = \"binomial\"\n"
      "[covariates.u]\nunits = \"m<sup>&\\\"'\"\n[covariates.v]\nunits = \"]]>\"\ntransform = \"log\"\n"
      "[coefficients]\nterms = [\"(Intercept)\", \"u\", \"u^2\", \"v\", \"v^2\", \"u:v\"]\n"
      "estimates = [0.5, 0.2, -0.8, 0.1, -0.6, 0.3]\n";
  const ModelSpec spec = parse_model_text(text, "hostile.toml");
  const TermPlan plan(spec);
  const NicheDescription d = describe_niche(spec, plan, nullptr, {});
  const auto root = XmlReader(niche_plot_svg(layout_niche_plot(spec, d, 0.5))).parse();
  std::set<std::string> labels;
  for (const XmlElement* t : root->all("text"))
    if (t->attribute("class") == "axis-label") labels.insert(t->text);
  CHECK(labels.count("u (m<sup>&\"')") == 1);
  CHECK(labels.count("v (]]>, log scale)") == 1);
}

}  // namespace
}  // namespace habcast
