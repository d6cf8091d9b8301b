// Categorical levels named with digits: one rule everywhere a level is named (terms, training
// table, describe --level, fit --reference and category names), checked against R. Reference:
// tests/reference/digit_levels.R, R 4.2.2 glm() on MASS's birthwt (Debian r-cran-mass), with race
// a factor whose levels "3", "1", "2" are declared in another order than their codes and smoke a
// factor with levels "0", "1"; exported by scripts/export_habcast_model.R.
#include <catch2/catch.hpp>
#include <nlohmann/json.hpp>
#include <map>
#include <regex>
#include <string>
#include <vector>

#include "core/base/csv_table.hpp"
#include "core/base/error.hpp"
#include "core/domain/training_domain.hpp"
#include "core/domain/training_samples.hpp"
#include "core/model/design_matrix.hpp"
#include "core/model/evaluator.hpp"
#include "core/model/model_file.hpp"
#include "core/model/term_plan.hpp"
#include "test_support.hpp"

using namespace habcast;
using Catch::Matchers::Contains;

namespace {

const std::string kDir = "tests/reference/digit_levels/";

std::string reference_model_text() { return test::read_text(test::source_path(kDir + "model.toml")); }

/// The R-exported model with smoke written the way a default 1..k export wrote it before: codes 1,
/// 2 for the levels named "0", "1" (so the name "1" is also the code of level "0"), and its term
/// naming the level by `smoke_label`.
std::string colliding_model_text(const std::string& smoke_label) {
  std::string text = reference_model_text();
  text = std::regex_replace(text, std::regex(R"(levels = \[ \{ code = 0, name = "0" \}, \{ code = 1, name = "1" \} \])"),
                            R"(levels = [ { code = 1, name = "0" }, { code = 2, name = "1" } ])");
  text = std::regex_replace(text, std::regex(R"("smoke\[1\]")"), "\"smoke[" + smoke_label + "]\"");
  text = std::regex_replace(text, std::regex(R"(\[training\]\nsamples = "model-training.csv")"), "");  // no table here
  return text;
}

std::string error_of(const std::function<void()>& f) {
  try {
    f();
  } catch (const Error& e) {
    return e.what();
  }
  return "(no error)";
}

/// eta, se(eta) and mu of `spec` at the rows of predictions.csv, with smoke's raster code given by
/// `smoke_code` from the level name R used.
void require_r_predictions(const ModelSpec& spec, const std::function<double(const std::string&)>& smoke_code) {
  const CsvTable t = read_csv_table(test::source_path(kDir + "predictions.csv"));
  const auto n = static_cast<Eigen::Index>(t.rows.size());
  Eigen::ArrayXXd raw(n, 3);
  for (std::size_t r = 0; r < t.rows.size(); ++r) {
    const auto i = static_cast<Eigen::Index>(r);
    raw(i, 0) = t.number(r, t.require_column("lwt", "covariate"));
    raw(i, 1) = t.number(r, t.require_column("race", "covariate"));  // raster code = the level's name
    raw(i, 2) = smoke_code(t.rows[r][t.require_column("smoke", "covariate")]);
  }
  const Design d = build_design(spec, raw);
  const Evaluator evaluator(spec, 0.95);
  Prediction p;
  Eigen::VectorXd offset = d.offset.array() - spec.offset_constant;
  evaluator.evaluate(d.X, n, offset, p);
  for (std::size_t r = 0; r < t.rows.size(); ++r) {
    const auto i = static_cast<Eigen::Index>(r);
    INFO("predictions.csv row " << r + 1);
    REQUIRE(d.usable[r] == 1);
    CHECK(p.eta[i] == Approx(t.number(r, t.require_column("eta", "reference"))).epsilon(1e-9));
    CHECK(p.se_eta[i] == Approx(t.number(r, t.require_column("se_eta", "reference"))).epsilon(1e-9));
    CHECK(p.mu[i] == Approx(t.number(r, t.require_column("mu", "reference"))).epsilon(1e-9));
  }
}

const nlohmann::json* find_key(const nlohmann::json& j, const std::string& key) {
  if (j.is_object()) {
    if (j.contains(key)) return &j[key];
    for (const auto& [k, v] : j.items()) {
      (void)k;
      if (const nlohmann::json* f = find_key(v, key)) return f;
    }
  }
  return nullptr;
}

}  // namespace

TEST_CASE("The R exporter writes digit-named levels with codes equal to their names", "[levels]") {
  // R: factor(race, levels = c(3, 1, 2)) and factor(smoke); reference "3" and "0".
  const ModelSpec spec = read_model_file(test::source_path(kDir + "model.toml"));
  const Covariate& race = spec.covariates[1];
  REQUIRE(race.levels.size() == 3);
  for (const Level& l : race.levels) CHECK(std::to_string(l.code) == l.name);
  CHECK(race.reference_level == "3");
  CHECK(spec.terms == std::vector<std::string>{"(Intercept)", "lwt", "lwt^2", "race[1]", "race[2]", "smoke[1]"});
}

TEST_CASE("Digit-named levels declared out of code order predict like R's predict.glm (MASS birthwt)", "[levels]") {
  // Source: R 4.2.2 predict.glm, tests/reference/digit_levels.R. race[1] must hit code 1 (named
  // "1"), not the first level listed (code 3): the old first-match rule applied it to the wrong class.
  const ModelSpec spec = read_model_file(test::source_path(kDir + "model.toml"));
  require_r_predictions(spec, [](const std::string& name) { return std::stod(name); });
}

TEST_CASE("predict maps digit-named levels like R, and flags no class that training had", "[levels][raster]") {
  // The same eight points as pixels of an 8 x 1 raster; suitability against R's mu (Float32).
  const CsvTable t = read_csv_table(test::source_path(kDir + "predictions.csv"));
  test::TempDir dir("levels-predict");
  test::GridSpec g;
  g.width = 8;
  g.height = 1;
  g.block = 0;
  const auto cell = [&](const char* column) {
    return [&t, column](int, int col) { return t.number(static_cast<std::size_t>(col), t.require_column(column, "x")); };
  };
  test::write_raster(dir.file("lwt.tif"), g, "Float32", cell("lwt"));
  test::write_raster(dir.file("race.tif"), g, "Byte", cell("race"));
  test::write_raster(dir.file("smoke.tif"), g, "Byte", cell("smoke"));
  std::string out, err;
  REQUIRE(test::run_cli({"predict", test::source_path(kDir + "model.toml"), "-q", "-o", dir.file("out"), "-c",
                         "lwt=" + dir.file("lwt.tif"), "-c", "race=" + dir.file("race.tif"), "-c",
                         "smoke=" + dir.file("smoke.tif")},
                        &out, &err) == 0);
  const std::vector<double> mu = test::read_band(dir.file("out/suitability.tif"));
  const std::vector<double> flags = test::read_band(dir.file("out/extrapolation.tif"));
  for (std::size_t r = 0; r < t.rows.size(); ++r) {
    INFO("pixel " << r);
    CHECK(mu[r] == Approx(t.number(r, t.require_column("mu", "reference"))).epsilon(1e-6));
    CHECK((static_cast<int>(flags[r]) & 4) == 0);  // every class of these pixels is in the training table
  }
}

TEST_CASE("The training table's digit-named levels are read as the same classes R had", "[levels]") {
  // The exported table holds codes (= names); they must equal MASS's race and smoke columns.
  const ModelSpec spec = read_model_file(test::source_path(kDir + "model.toml"));
  const TrainingSamples samples = read_training_samples(spec);
  const CsvTable raw = read_csv_table(test::source_path(kDir + "birthwt.csv"));
  REQUIRE(static_cast<std::size_t>(samples.raw.rows()) == raw.rows.size());
  for (std::size_t r = 0; r < raw.rows.size(); ++r) {
    INFO("row " << r + 1);
    CHECK(samples.raw(static_cast<Eigen::Index>(r), 1) == raw.number(r, raw.require_column("race", "x")));
    CHECK(samples.raw(static_cast<Eigen::Index>(r), 2) == raw.number(r, raw.require_column("smoke", "x")));
  }
  const TrainingDomain domain(spec, samples);
  CHECK(domain.levels_seen(1) == std::vector<std::int64_t>{1, 2, 3});
  CHECK(domain.levels_seen(2) == std::vector<std::int64_t>{0, 1});
}

TEST_CASE("A level label that is the name of one level and the code of another is refused, naming both", "[levels]") {
  // Levels { code 1, "0" }, { code 2, "1" }: "1" is level "1" by name and level "0" by code.
  const std::string e = error_of([] { (void)parse_model_text(colliding_model_text("1"), "old.toml"); });
  CHECK_THAT(e, Contains("old.toml:"));
  CHECK_THAT(e, Contains("the level named \"1\" (code 2)"));
  CHECK_THAT(e, Contains("the level with code 1 (named \"0\")"));
  // "0" is only a name: the reference level, which has no term.
  const std::string r = error_of([] { (void)parse_model_text(colliding_model_text("0"), "old.toml"); });
  CHECK_THAT(r, Contains("names level \"0\" (code 1), the reference level of \"smoke\""));
  // "2" is only a code: level "1". Its predictions are R's (smoke "1" = code 2, "0" = code 1).
  const ModelSpec spec = parse_model_text(colliding_model_text("2"), "old.toml");
  require_r_predictions(spec, [](const std::string& name) { return name == "1" ? 2.0 : 1.0; });
}

TEST_CASE("A training table's level cells follow the same rule and one convention per column", "[levels]") {
  const ModelSpec spec = parse_model_text(colliding_model_text("2"), "old.toml");
  // Names "0"/"1": the cell "1" could be either level.
  std::string e = error_of([&] { (void)parse_training_samples("lwt,race,smoke\n120,1,0\n130,2,1\n", "t.csv", spec); });
  CHECK_THAT(e, Contains("t.csv:3:"));
  CHECK_THAT(e, Contains("the level named \"1\" (code 2)"));
  CHECK_THAT(e, Contains("the level with code 1 (named \"0\")"));
  // "0" is only a name, "2" only a code: a column mixing the two conventions is refused.
  e = error_of([&] { (void)parse_training_samples("lwt,race,smoke\n120,1,0\n130,2,2\n", "t.csv", spec); });
  CHECK_THAT(e, Contains("t.csv:3: column \"smoke\" mixes level names and level codes"));
  // Names that are their own codes fit either convention: race below is read as codes.
  const TrainingSamples ok = parse_training_samples("lwt,race,smoke\n120,3,2\n130,1,2\n", "t.csv", spec);
  CHECK(ok.raw(0, 1) == 3.0);
  CHECK(ok.raw(1, 2) == 2.0);
}

TEST_CASE("describe --level names a digit-named level by the same rule and agrees with R", "[levels][describe]") {
  // Source: describe.csv, R's predict(type = "link") at lwt's training mean, race "1", smoke "0":
  // the constant of describe's quadratic form in lwt (model value 0).
  const CsvTable ref = read_csv_table(test::source_path(kDir + "describe.csv"));
  std::string out, err;
  REQUIRE(test::run_cli({"describe", test::source_path(kDir + "model.toml"), "--level", "race=1", "--json"}, &out, &err) == 0);
  const auto j = nlohmann::json::parse(out);
  const nlohmann::json* constant = find_key(j, "constant");
  REQUIRE(constant != nullptr);
  CHECK(constant->get<double>() == Approx(ref.number(0, ref.require_column("eta", "reference"))).epsilon(1e-9));
  const nlohmann::json* reference = find_key(j, "race");
  REQUIRE(reference != nullptr);
  CHECK((*reference)["code"] == 1);

  test::TempDir dir("levels-describe");
  test::write_text(dir.file("old.toml"), colliding_model_text("2"));
  CHECK(test::run_cli({"describe", dir.file("old.toml"), "--level", "smoke=1"}, &out, &err) == 2);
  CHECK_THAT(err, Contains("--level smoke=1"));
  CHECK_THAT(err, Contains("the level named \"1\" (code 2)"));
  CHECK_THAT(err, Contains("the level with code 1 (named \"0\")"));
}

namespace {

/// The 189 birthwt rows as pixels of a 27 x 7 UTM grid, and points at their centres.
struct BirthwtScene {
  test::TempDir dir{"levels-fit"};
  CsvTable data = read_csv_table(test::source_path(kDir + "birthwt.csv"));
  test::GridSpec grid;
  BirthwtScene() {
    grid.width = 27;
    grid.height = 7;
    REQUIRE(data.rows.size() == 189);
    const auto cell = [this](const char* column) {
      return [this, column](int row, int col) {
        return data.number(static_cast<std::size_t>(row * 27 + col), data.require_column(column, "x"));
      };
    };
    test::write_raster(dir.file("lwt.tif"), grid, "Float32", cell("lwt"));
    test::write_raster(dir.file("race.tif"), grid, "Byte", cell("race"));
    test::write_raster(dir.file("smoke.tif"), grid, "Byte", cell("smoke"));
    std::string points = "x,y,low\n";
    for (std::size_t i = 0; i < data.rows.size(); ++i) {
      const auto row = static_cast<double>(i / 27), col = static_cast<double>(i % 27);
      points += std::to_string(grid.origin_x + grid.pixel * (col + 0.5)) + "," +
                std::to_string(grid.origin_y - grid.pixel * (row + 0.5)) + "," + data.rows[i][3] + "\n";
    }
    test::write_text(dir.file("points.csv"), points);
  }
  int fit(const std::string& reference, std::string* out, std::string* err) {
    return test::run_cli({"fit", dir.file("points.csv"), "--crs", "EPSG:32630", "-c", "lwt=" + dir.file("lwt.tif"), "-c",
                          "race=" + dir.file("race.tif"), "-c", "smoke=" + dir.file("smoke.tif"), "--categorical", "race",
                          "--categorical", "smoke", "--reference", "race=" + reference, "-f",
                          "low ~ lwt + lwt^2 + race + smoke", "-o", dir.file("fit.toml"), "--overwrite",
                          // The reference was fitted with glm.control(epsilon = 1e-14): compare with --tight.
                          "--tight"},
                         out, err);
  }
};

}  // namespace

TEST_CASE("fit with digit-named classes and --reference by label reproduces R's glm()", "[levels][fit]") {
  // Source: coefficients.csv, R 4.2.2 glm() (epsilon 1e-14, so fit runs with --tight) with race's reference "3" (relevelled), lwt
  // standardised with mean() and sd() as fit does.
  BirthwtScene s;
  std::string out, err;
  REQUIRE(s.fit("3", &out, &err) == 0);
  const ModelSpec fitted = read_model_file(s.dir.file("fit.toml"));
  const CsvTable ref = read_csv_table(test::source_path(kDir + "coefficients.csv"));
  REQUIRE(fitted.terms.size() == ref.rows.size());
  for (std::size_t r = 0; r < ref.rows.size(); ++r) {
    const std::string& term = ref.rows[r][0];
    INFO(term);
    const auto at = std::find(fitted.terms.begin(), fitted.terms.end(), term);
    REQUIRE(at != fitted.terms.end());
    const auto j = static_cast<Eigen::Index>(at - fitted.terms.begin());
    CHECK(fitted.estimates[static_cast<std::size_t>(j)] == Approx(ref.number(r, 1)).epsilon(1e-6));
    CHECK(std::sqrt((*fitted.covariance)(j, j)) == Approx(ref.number(r, 2)).epsilon(1e-6));
  }
  CHECK(fitted.covariates[1].reference_level == "3");
}

TEST_CASE("fit refuses category names that are another class's code, naming both", "[levels][fit]") {
  BirthwtScene s;
  // Category names (GDAL .aux.xml): code 1 "2", code 2 "3", code 3 "1": every name is another code.
  test::write_text(s.dir.file("race.tif.aux.xml"),
                   "<PAMDataset><PAMRasterBand band=\"1\"><CategoryNames><Category></Category><Category>2</Category>"
                   "<Category>3</Category><Category>1</Category></CategoryNames></PAMRasterBand></PAMDataset>\n");
  std::string out, err;
  CHECK(s.fit("3", &out, &err) == 3);
  CHECK_THAT(err, Contains("race.tif"));
  CHECK_THAT(err, Contains("could mean two levels of \"race\""));
  CHECK_THAT(err, Contains("(code "));
}
