// Model averaging with Akaike weights and the unconditional standard error, against R 4.2.2:
// tests/reference/change/set_*.toml and set_average.csv, written by
// tests/reference/scenario_change.R from three stats::glm binomial fits with different terms on
// the `mite` / `mite.env` data of Debian's r-cran-vegan 2.6.4 (species Ceratoz1), AIC(), Akaike
// weights and Burnham & Anderson's (2002) two variance forms written out in R.
#include <catch2/catch.hpp>
#include <cmath>
#include <sstream>
#include <string>
#include <vector>

#include "core/model/evaluator.hpp"
#include "core/model/model_file.hpp"
#include "core/model/term_plan.hpp"
#include "core/prediction/block_predictor.hpp"
#include "core/prediction/model_average.hpp"
#include "test_support.hpp"

namespace {

struct Row {
  double w, s, t, mu[3], se[3], mu_bar, se_revised, se_2002, between_share;
};

std::vector<Row> read_rows(const std::string& path) {
  std::istringstream in(habcast::test::read_text(path));
  std::string line;
  std::vector<Row> rows;
  bool header = false;
  while (std::getline(in, line)) {
    if (line.empty() || line[0] == '#') continue;
    if (!header) {
      header = true;
      continue;
    }
    std::istringstream fields(line);
    std::string f[13];
    for (auto& x : f) std::getline(fields, x, ',');
    Row r{};
    r.w = std::stod(f[0]);
    r.s = std::stod(f[1]);
    r.t = std::stod(f[2]);
    for (int i = 0; i < 3; ++i) {
      r.mu[i] = std::stod(f[3 + i]);
      r.se[i] = std::stod(f[6 + i]);
    }
    r.mu_bar = std::stod(f[9]);
    r.se_revised = std::stod(f[10]);
    r.se_2002 = std::stod(f[11]);
    r.between_share = std::stod(f[12]);
    rows.push_back(r);
  }
  return rows;
}

/// Runs `specs` over the reference points and averages them with `weights`.
habcast::AverageOutputs average(const std::vector<habcast::ModelSpec>& specs, const std::vector<double>& weights,
                                habcast::UnconditionalForm form, const std::vector<Row>& rows,
                                habcast::AverageTally& tally) {
  const auto n = static_cast<Eigen::Index>(rows.size());
  Eigen::ArrayXXd raw(n, 3);
  for (Eigen::Index i = 0; i < n; ++i) raw.row(i) << rows[static_cast<std::size_t>(i)].w, rows[static_cast<std::size_t>(i)].s,
      rows[static_cast<std::size_t>(i)].t;
  const std::vector<std::uint8_t> valid(static_cast<std::size_t>(n), 1);
  std::vector<habcast::TermPlan> plans;
  std::vector<habcast::Evaluator> evaluators;
  for (const auto& s : specs) {
    plans.emplace_back(s);
    evaluators.emplace_back(s, 0.95);
  }
  std::vector<std::unique_ptr<habcast::BlockPredictor>> predictors;
  std::vector<const habcast::BlockPredictor*> members;
  std::vector<habcast::BlockOutputs> outputs(specs.size());
  for (std::size_t m = 0; m < specs.size(); ++m) {
    predictors.push_back(std::make_unique<habcast::BlockPredictor>(specs[m], plans[m], evaluators[m], nullptr));
    members.push_back(predictors.back().get());
  }
  habcast::AverageCombiner combiner(habcast::Family::binomial, weights, form, evaluators[0].z(), false);
  habcast::AverageOutputs out;
  combiner.begin(n, out);
  std::vector<habcast::PredictionTally> tallies(specs.size(), habcast::PredictionTally(3));
  for (std::size_t m = 0; m < specs.size(); ++m) {
    predictors[m]->begin(raw, valid, n, outputs[m], tallies[m]);
    predictors[m]->chunk(0, n, outputs[m], tallies[m]);
  }
  combiner.chunk(0, n, members, outputs.data(), out, tally);
  return out;
}

std::vector<habcast::ModelSpec> reference_models() {
  std::vector<habcast::ModelSpec> specs;
  for (const char* m : {"set_m1", "set_m2", "set_m3"})
    specs.push_back(habcast::read_model_file(habcast::test::source_path(std::string("tests/reference/change/") + m + ".toml")));
  return specs;
}

}  // namespace

TEST_CASE("Akaike weights, the averaged prediction and both unconditional SEs equal R's on three mite fits",
          "[modelset][reference]") {
  const std::vector<habcast::ModelSpec> specs = reference_models();
  std::vector<double> aic;
  for (const auto& s : specs) aic.push_back(*s.aic);
  const std::vector<double> w = habcast::akaike_weights(aic);
  // R: 0.5184718 0.2626874 0.2188408 (printed by the script; full digits in set_average.csv's header).
  CHECK(w[0] == Approx(0.5184718).epsilon(1e-6));
  CHECK(w[1] == Approx(0.2626874).epsilon(1e-6));
  CHECK(w[2] == Approx(0.2188408).epsilon(1e-6));
  const std::vector<Row> rows = read_rows(habcast::test::source_path("tests/reference/change/set_average.csv"));
  REQUIRE(rows.size() >= 10);
  habcast::AverageTally t1, t2;
  const habcast::AverageOutputs revised = average(specs, w, habcast::UnconditionalForm::revised, rows, t1);
  const habcast::AverageOutputs old_form = average(specs, w, habcast::UnconditionalForm::form_2002, rows, t2);
  CHECK(t1.predicted == static_cast<std::int64_t>(rows.size()));
  for (std::size_t i = 0; i < rows.size(); ++i) {
    INFO("point " << i);
    CHECK_THAT(revised.suitability[i], Catch::Matchers::WithinRel(rows[i].mu_bar, 1e-6));
    CHECK_THAT(revised.se[i], Catch::Matchers::WithinRel(rows[i].se_revised, 1e-6));
    CHECK_THAT(old_form.se[i], Catch::Matchers::WithinRel(rows[i].se_2002, 1e-6));
    CHECK_THAT(revised.between_share[i], Catch::Matchers::WithinRel(rows[i].between_share, 1e-5));
    // The revised form is the larger (Jensen), and the limits stay inside (0, 1).
    CHECK(rows[i].se_revised >= rows[i].se_2002);
    CHECK(revised.lower[i] > 0.0f);
    CHECK(revised.upper[i] < 1.0f);
    CHECK(revised.lower[i] <= revised.suitability[i]);
    CHECK(revised.upper[i] >= revised.suitability[i]);
  }
}

TEST_CASE("identical models average to the single model's prediction, SE and limits", "[modelset][analytic]") {
  const habcast::ModelSpec one = reference_models()[2];
  const std::vector<Row> rows = read_rows(habcast::test::source_path("tests/reference/change/set_average.csv"));
  habcast::AverageTally t;
  const habcast::AverageOutputs avg =
      average({one, one, one}, habcast::akaike_weights({*one.aic, *one.aic, *one.aic}), habcast::UnconditionalForm::revised, rows, t);
  habcast::AverageTally t_single;
  const habcast::AverageOutputs single = average({one}, {1.0}, habcast::UnconditionalForm::revised, rows, t_single);
  for (std::size_t i = 0; i < rows.size(); ++i) {
    INFO("point " << i);
    // Model 3 of R's table is this model.
    CHECK_THAT(avg.suitability[i], Catch::Matchers::WithinRel(rows[i].mu[2], 1e-6));
    CHECK_THAT(avg.se[i], Catch::Matchers::WithinRel(rows[i].se[2], 1e-6));
    CHECK(avg.between_share[i] == 0.0f);
    CHECK_THAT(avg.lower[i], Catch::Matchers::WithinRel(static_cast<double>(single.lower[i]), 1e-6));
    CHECK_THAT(avg.upper[i], Catch::Matchers::WithinRel(static_cast<double>(single.upper[i]), 1e-6));
  }
  CHECK(t.disagree == 0);
}

TEST_CASE("weights 1 and 0 give the first model exactly", "[modelset][analytic]") {
  const std::vector<habcast::ModelSpec> specs = reference_models();
  const std::vector<Row> rows = read_rows(habcast::test::source_path("tests/reference/change/set_average.csv"));
  habcast::AverageTally t;
  const habcast::AverageOutputs avg = average({specs[0], specs[1]}, {1.0, 0.0}, habcast::UnconditionalForm::form_2002, rows, t);
  for (std::size_t i = 0; i < rows.size(); ++i) {
    CHECK_THAT(avg.suitability[i], Catch::Matchers::WithinRel(rows[i].mu[0], 1e-6));
    CHECK_THAT(avg.se[i], Catch::Matchers::WithinRel(rows[i].se[0], 1e-6));
  }
}

TEST_CASE("averaged limits on the canonical link equal a logit model's own limits", "[modelset][analytic]") {
  // One logit prediction: eta = 0.7, se_eta = 0.4; the delta-method se of mu is mu (1 - mu) se_eta.
  const double eta = 0.7, se_eta = 0.4, z = 1.959963984540054;  // qnorm(0.975), R 4.2.2
  const double mu = 1.0 / (1.0 + std::exp(-eta));
  double lower = 0.0, upper = 0.0;
  habcast::averaged_limits(habcast::Family::binomial, mu, mu * (1.0 - mu) * se_eta, z, lower, upper);
  CHECK(lower == Approx(1.0 / (1.0 + std::exp(-(eta - z * se_eta)))).epsilon(1e-12));
  CHECK(upper == Approx(1.0 / (1.0 + std::exp(-(eta + z * se_eta)))).epsilon(1e-12));
  // A Poisson mean of 2 with se 3: the limits stay positive.
  habcast::averaged_limits(habcast::Family::poisson, 2.0, 3.0, z, lower, upper);
  CHECK(lower > 0.0);
  CHECK(upper > 2.0);
}
