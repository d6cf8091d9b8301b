// `habcast describe` and `habcast predict --quicklook` driven through the CLI, in-process.
#include <gdal_priv.h>

#include <catch2/catch.hpp>
#include <nlohmann/json.hpp>

#include "describe_test_support.hpp"
#include "raster/gdal_session.hpp"
#include "render/quicklook.hpp"
#include "test_support.hpp"
#include "xml_check.hpp"

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

TEST_CASE("describe writes the plot as SVG and PNG", "[describe]") {
  test::TempDir dir("describe-plot");
  const std::string svg = dir.file("niche.svg"), png = dir.file("niche.png");
  std::string out, err;
  REQUIRE(run_cli({"describe", source_path(kDemo), "--pair", "precip,tmin", "--plot", svg, "--plot-png", png}, &out, &err) == 0);
  const auto root = test::XmlReader(test::read_text(svg)).parse();
  CHECK(root->all("polyline").size() >= 5);
  // The pair order is the user's: precip on the horizontal axis.
  std::vector<std::string> labels;
  for (const auto* t : root->all("text"))
    if (t->attribute("class") == "axis-label") labels.push_back(t->text);
  CHECK(labels == std::vector<std::string>{"precip (mm)", "tmin (degC)"});

  ensure_gdal();
  GDALDataset* ds = static_cast<GDALDataset*>(GDALOpen(png.c_str(), GA_ReadOnly));
  REQUIRE(ds != nullptr);
  CHECK(std::string(ds->GetDriver()->GetDescription()) == "PNG");
  CHECK(ds->GetRasterXSize() == 760);
  CHECK(ds->GetRasterYSize() == 560);
  CHECK(ds->GetRasterCount() == 3);
  GDALClose(ds);
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
      {{"--level", "landcover=marsh"}, "its levels are heath (code 1), bog (code 2), woodland (code 3), grassland (code 4)"},
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

TEST_CASE("predict --quicklook draws a PNG of the stated size next to the rasters", "[describe]") {
  test::TempDir dir("quicklook");
  const std::string png = dir.file("map.png");
  std::string out, err;
  REQUIRE(run_cli({"predict", source_path(kDemo), "-o", dir.file("out"), "--quicklook", png, "-q"}, &out, &err) == 0);
  // Demo rasters are 320 x 240: the map becomes 512 x 384, the PNG 512 + 252 by 384 + 100.
  const QuicklookLayout layout = quicklook_layout(320, 240, 512);
  CHECK(layout.map_width == 512);
  CHECK(layout.map_height == 384);
  ensure_gdal();
  GDALDataset* ds = static_cast<GDALDataset*>(GDALOpen(png.c_str(), GA_ReadOnly));
  REQUIRE(ds != nullptr);
  CHECK(std::string(ds->GetDriver()->GetDescription()) == "PNG");
  CHECK(ds->GetRasterXSize() == 764);
  CHECK(ds->GetRasterYSize() == 484);
  // The demo's lake is nodata: some map pixels carry the no-data grey (228, 228, 228).
  std::vector<std::uint8_t> rgb(static_cast<std::size_t>(764 * 484 * 3));
  REQUIRE(ds->RasterIO(GF_Read, 0, 0, 764, 484, rgb.data(), 764, 484, GDT_Byte, 3, nullptr, 0, 0, 0, nullptr) == CE_None);
  GDALClose(ds);
  std::size_t grey = 0;
  const std::size_t plane = 764 * 484;
  for (std::size_t i = 0; i < plane; ++i)
    if (rgb[i] == 228 && rgb[plane + i] == 228 && rgb[2 * plane + i] == 228) ++grey;
  CHECK(grey > 100);
  CHECK_THAT(test::read_text(dir.file("out/report.json")), Catch::Contains("map.png"));

  // A second run without --overwrite refuses before computing anything.
  CHECK(run_cli({"predict", source_path(kDemo), "-o", dir.file("out2"), "--quicklook", png, "-q"}, &out, &err) == 2);
  CHECK_THAT(err, Catch::Contains("map.png already exists"));
}

}  // namespace
}  // namespace habcast
