// `habcast describe` and `habcast predict --quicklook` driven through the CLI, in-process.
#include <gdal_priv.h>

#include <catch2/catch.hpp>
#include <nlohmann/json.hpp>

#include <filesystem>

#include "describe_test_support.hpp"
#include "figure_file_check.hpp"
#include "raster/gdal_session.hpp"
#include "render/figure_file.hpp"
#include "render/quicklook.hpp"
#include "test_support.hpp"

namespace habcast {
namespace {

using test::run_cli;
using test::source_path;

const std::string kDemo = "sample-rasters/demo-model.toml";

TEST_CASE("describe on the demo model reports a supported peak in words", "[describe]") {
  std::string out, err;
  REQUIRE(run_cli({"describe", source_path(kDemo)}, &out, &err) == 0);
  CHECK_THAT(out, Catch::Contains("Shape in tmin, precip: a peak"));
  // The quadratic form: b and B straight from the demo model's estimates (B_12 = 0.7428 / 2).
  CHECK_THAT(out, Catch::Contains("b = (-1.173, 1.385),  B = [[-0.5349, 0.3714], [0.3714, -1.342]]"));
  CHECK_THAT(out, Catch::Contains("Optimum"));
  CHECK_THAT(out, Catch::Contains("slope"));        // held, linear only
  CHECK_THAT(out, Catch::Contains("best tmin for a given precip:  tmin = "));
  CHECK_THAT(out, Catch::Contains("inside"));
  CHECK(err.empty());
}

TEST_CASE("describe --json has the documented fields and R's optimum", "[describe]") {
  std::string out;
  REQUIRE(run_cli({"describe", source_path(kDemo), "--json"}, &out) == 0);
  const auto j = nlohmann::json::parse(out);
  const auto r = test::read_reference(source_path("tests/reference/describe/demo.csv"));
  for (const char* key : {"model", "settings", "reference", "linear_only", "quadratic_form", "canonical",
                          "training_support", "pair", "warnings"})
    CHECK(j.contains(key));
  CHECK(j["canonical"]["shape"] == "peak");
  CHECK(j["canonical"]["peak_supported"] == true);
  // R: tests/reference/describe/demo.csv (tests/reference/describe_canonical.R).
  CHECK(j["canonical"]["stationary_point"]["tmin"]["raw"].get<double>() == Approx(r.at("raw_tmin")).margin(1e-9));
  CHECK(j["canonical"]["stationary_point"]["precip"]["raw"].get<double>() == Approx(r.at("raw_precip")).epsilon(1e-12));
  CHECK(j["canonical"]["stationary_point"]["tmin"]["se_model"].get<double>() == Approx(r.at("se_xs_tmin")).epsilon(1e-6));
  CHECK(j["canonical"]["axes"].size() == 2);
  CHECK(j["canonical"]["rotations"][0]["distinguishable_from_zero"] == true);
  CHECK(j["training_support"]["inside"] == true);
  CHECK(j["reference"]["slope"]["source"] == "training mean");
  CHECK(j["reference"]["landcover"]["level"] == "heath");
  CHECK(j["linear_only"][0]["covariate"] == "slope");
  CHECK(j["pair"]["conditional_optima"].size() == 2);
  CHECK(j["pair"]["inside_training_hull"] == true);
  CHECK(j["warnings"].empty());
}

TEST_CASE("describe writes the plot as SVG, PNG and PDF, by extension", "[describe]") {
  test::TempDir dir("describe-plot");
  const std::string svg = dir.file("niche.svg"), png = dir.file("niche.png"), pdf = dir.file("niche.PDF");
  std::string out, err;
  REQUIRE(run_cli({"describe", source_path(kDemo), "--pair", "precip,tmin", "--plot", svg, "--plot-png", png}, &out, &err) == 0);
  REQUIRE(run_cli({"describe", source_path(kDemo), "--plot", pdf}, &out, &err) == 0);
  CHECK(test::parses_as_svg(test::read_text(svg)));
  CHECK(test::looks_like_pdf(test::read_text(pdf)));
  const std::string png_bytes = test::read_text(png);
  REQUIRE(test::has_png_signature(png_bytes));
  CHECK(test::png_size(png_bytes)[0] == 2008);  // A4 text width, 170 mm, at 300 dpi


  // An extension that names no picture format is refused before anything is written.
  CHECK(run_cli({"describe", source_path(kDemo), "--plot", dir.file("niche.jpg")}, &out, &err) == 2);
  CHECK_THAT(err, Catch::Contains("niche.jpg") && Catch::Contains(".svg, .png or .pdf"));
  CHECK(run_cli({"describe", source_path(kDemo), "--plot-png", dir.file("niche2.pdf")}, &out, &err) == 2);
  CHECK(test::list_dir(dir.path().string()) == std::vector<std::string>{"niche.PDF", "niche.png", "niche.svg"});
}

TEST_CASE("describe warns when the optimum lies outside the training data", "[describe]") {
  // u and v trained on [0, 1] x [0, 1]; the peak is at u = 3 (model units = raw units here).
  test::TempDir dir("describe-extrapolated");
  test::write_text(dir.file("training.csv"), "u,v\n0,0\n1,0\n0,1\n1,1\n0.5,0.5\n");
  test::write_text(dir.file("model.toml"),
                   "habcast_model = 1\n[model]\nfamily = \"poisson\"\n[training]\nsamples = \"training.csv\"\n"
                   "[covariates.u]\n[covariates.v]\n[coefficients]\n"
                   "terms = [\"(Intercept)\", \"u\", \"u^2\", \"v\", \"v^2\"]\nestimates = [0, 6, -1, 1, -1]\n");
  std::string out;
  REQUIRE(run_cli({"describe", dir.file("model.toml"), "--json"}, &out) == 0);
  const auto j = nlohmann::json::parse(out);
  CHECK(j["training_support"]["inside"] == false);
  CHECK(j["training_support"]["covariates"][0]["position"] == "above");
  CHECK(j["canonical"]["rotations"][0]["tilt_degrees"] == 0.0);  // no u:v term
  REQUIRE(j["warnings"].size() >= 1);
  CHECK_THAT(j["warnings"][0].get<std::string>(), Catch::Contains("extrapolation") && Catch::Contains("u = 3"));
}

TEST_CASE("describe refuses options it cannot honour, naming them", "[describe]") {
  struct Case {
    std::vector<std::string> args;
    std::string message;
  };
  const Case cases[] = {
      {{"--at", "landcover=2"}, "--level landcover="},
      {{"--at", "tmin"}, "--at expects NAME=VALUE"},
      {{"--at", "tmin=warm"}, "is not a number"},
      {{"--level", "landcover=marsh"}, "its levels are heath, bog, woodland, grassland"},
      {{"--pair", "tmin,landcover"}, "categorical"},
      {{"--pair", "tmin"}, "two covariate names"},
      {{"--fraction", "0"}, "--fraction"},
  };
  for (const Case& c : cases) {
    std::vector<std::string> args{"describe", source_path(kDemo)};
    args.insert(args.end(), c.args.begin(), c.args.end());
    std::string out, err;
    INFO(c.args.front() << " " << c.args.back());
    CHECK(run_cli(args, &out, &err) == 2);
    CHECK_THAT(err, Catch::Contains(c.message));
  }
}

TEST_CASE("predict --quicklook draws the map as PNG or PDF next to the rasters", "[describe]") {
  test::TempDir dir("quicklook");
  const std::string png = dir.file("map.png"), pdf = dir.file("map.pdf");
  std::string out, err;
  REQUIRE(run_cli({"predict", source_path(kDemo), "-o", dir.file("out"), "--quicklook", png, "-q"}, &out, &err) == 0);
  REQUIRE(run_cli({"predict", source_path(kDemo), "-o", dir.file("out-pdf"), "--quicklook", pdf, "-q"}, &out, &err) == 0);
  CHECK(test::looks_like_pdf(test::read_text(pdf)));
  const std::string bytes = test::read_text(png);
  REQUIRE(test::has_png_signature(bytes));
  CHECK(test::png_size(bytes)[0] == 2008);
  // Demo rasters are 320 x 240 cells: the map is 330 x 247.5 pt, read at the raster's own size
  // (300 dpi would want 1375 x 1031 pixels, more than there are).
  const QuicklookLayout layout = quicklook_layout(320, 240);
  CHECK(layout.map.width == Approx(330.0));
  CHECK(layout.map.height == Approx(247.5));
  CHECK(layout.pixels_x == 320);
  CHECK(layout.pixels_y == 240);
  CHECK(layout.repeat == 4);  // 1280 x 960 image pixels: cells stay square in a smoothing PDF viewer
  // The demo's lake is nodata: some map pixels carry the no-data grey (228, 228, 228).
  const test::DecodedPng image = test::decode_png(bytes);
  std::size_t grey = 0;
  const double s = kPngDpi / 72.0;
  for (int y = static_cast<int>(layout.map.y * s); y < static_cast<int>(layout.map.bottom() * s); ++y)
    for (int x = static_cast<int>(layout.map.x * s); x < static_cast<int>(layout.map.right() * s); ++x)
      if (test::same_colour(image.at(x, y), Rgb{228, 228, 228}, 0)) ++grey;
  CHECK(grey > 1000);
  CHECK_THAT(test::read_text(dir.file("out/report.json")), Catch::Contains("map.png"));

  // A second run without --overwrite refuses before computing anything.
  CHECK(run_cli({"predict", source_path(kDemo), "-o", dir.file("out2"), "--quicklook", png, "-q"}, &out, &err) == 2);
  CHECK_THAT(err, Catch::Contains("map.png already exists"));
  // So does a quicklook whose extension names no picture format.
  CHECK(run_cli({"predict", source_path(kDemo), "-o", dir.file("out3"), "--quicklook", dir.file("map.tif"), "-q"}, &out, &err) == 2);
  CHECK_THAT(err, Catch::Contains("map.tif") && Catch::Contains(".svg, .png or .pdf"));
  CHECK_FALSE(std::filesystem::exists(dir.file("out3")));
}

}  // namespace
}  // namespace habcast
