// Evaluation metrics against their definitions on small examples worked by hand, and the AUC
// standard error against Hanley & McNeil's published worked example.
#include <catch2/catch.hpp>
#include <cmath>

#include "core/base/error.hpp"
#include "core/stats/boyce_index.hpp"
#include "core/stats/calibration.hpp"
#include "core/stats/discrimination.hpp"

using namespace habcast;

namespace {

// Presences 0.9, 0.8, 0.5, 0.4; absences 0.7, 0.5, 0.3, 0.2, 0.1 (one tie at 0.5).
const std::vector<double> kScores{0.9, 0.8, 0.5, 0.4, 0.7, 0.5, 0.3, 0.2, 0.1};
const std::vector<std::uint8_t> kObserved{1, 1, 1, 1, 0, 0, 0, 0, 0};

}  // namespace

TEST_CASE("AUC equals the Mann-Whitney U statistic over n1 n0, ties counting one half", "[evaluate]") {
  // U by its definition (Mann & Whitney 1947): over all presence-absence pairs, 1 when the
  // presence scores higher, 1/2 on a tie. By hand: 5 + 5 + (3 + 1/2) + 3 = 16.5 of 4 x 5 pairs.
  double u = 0.0;
  for (std::size_t i = 0; i < kScores.size(); ++i)
    for (std::size_t j = 0; j < kScores.size(); ++j)
      if (kObserved[i] && !kObserved[j]) u += kScores[i] > kScores[j] ? 1.0 : (kScores[i] == kScores[j] ? 0.5 : 0.0);
  CHECK(u == 16.5);
  CHECK(auc_mann_whitney(kScores, kObserved) == Approx(u / 20.0).epsilon(1e-15));
  const Discrimination d = discriminate(kScores, kObserved);
  CHECK(d.auc == Approx(0.825).epsilon(1e-15));
  // The trapezoidal area under the swept ROC curve is the same number.
  double area = 0.0;
  for (std::size_t k = 1; k < d.roc.size(); ++k)
    area += (d.roc[k].false_positive_rate - d.roc[k - 1].false_positive_rate) *
            (d.roc[k].true_positive_rate + d.roc[k - 1].true_positive_rate) / 2.0;
  CHECK(area == Approx(0.825).epsilon(1e-12));
  CHECK(d.roc.front().false_positive_rate == 0.0);
  CHECK(d.roc.back().true_positive_rate == 1.0);
  CHECK(d.roc.back().false_positive_rate == 1.0);
}

TEST_CASE("The AUC standard error reproduces Hanley & McNeil's worked example", "[evaluate]") {
  // Hanley & McNeil (1982), Radiology 143:29-36, Table 1 (from memory): 58 normal and 51 abnormal
  // images rated on five categories; normal counts 33, 6, 6, 11, 2; abnormal 3, 2, 2, 11, 33.
  // Published: area 0.893, standard error 0.032 (from memory; both agree with the formula).
  const int normal[] = {33, 6, 6, 11, 2};
  const int abnormal[] = {3, 2, 2, 11, 33};
  std::vector<double> scores;
  std::vector<std::uint8_t> observed;
  for (int category = 0; category < 5; ++category) {
    for (int i = 0; i < normal[category]; ++i) {
      scores.push_back(category);
      observed.push_back(0);
    }
    for (int i = 0; i < abnormal[category]; ++i) {
      scores.push_back(category);
      observed.push_back(1);
    }
  }
  const Discrimination d = discriminate(scores, observed);
  CHECK(d.presences == 51);
  CHECK(d.absences == 58);
  CHECK(std::fabs(d.auc - 0.893) < 0.0005);
  CHECK(std::fabs(d.auc_se - 0.032) < 0.0005);
  // The interval uses the exact normal quantile: R's qnorm(0.975) = 1.959963984540054, not 1.96
  // (at 1e-12 the rounded value fails: it moves the limit by 1.2e-6).
  CHECK(d.auc_lower == Approx(d.auc - 1.959963984540054 * d.auc_se).epsilon(1e-12));
  CHECK(d.auc_upper == Approx(d.auc + 1.959963984540054 * d.auc_se).epsilon(1e-12));
}

TEST_CASE("The AUC interval is clipped at 1 when the normal interval passes it", "[evaluate]") {
  // 5 presences, 5 absences, one absence above one presence: AUC = 24/25 = 0.96 (Mann-Whitney by
  // hand); Hanley & McNeil's SE with n = 5 is large enough that 0.96 + 1.96 SE > 1.
  const std::vector<double> scores{0.9, 0.8, 0.7, 0.6, 0.45, 0.5, 0.4, 0.35, 0.2, 0.1};
  const std::vector<std::uint8_t> observed{1, 1, 1, 1, 1, 0, 0, 0, 0, 0};
  const Discrimination d = discriminate(scores, observed);
  CHECK(d.auc == Approx(0.96).epsilon(1e-15));
  REQUIRE(d.auc + 1.959963984540054 * d.auc_se > 1.0);
  CHECK(d.auc_upper == 1.0);
  CHECK(d.auc_lower == Approx(d.auc - 1.959963984540054 * d.auc_se).epsilon(1e-12));
}

TEST_CASE("Sensitivity, specificity and the TSS-maximising threshold match a hand count", "[evaluate]") {
  // TSS = sensitivity + specificity - 1 (Allouche, Tsoar & Kadmon 2006, J. Appl. Ecol. 43:1223).
  // At 0.5: presences >= 0.5 are 0.9, 0.8, 0.5 (TP 3, FN 1); absences >= 0.5 are 0.7, 0.5 (FP 2,
  // TN 3): sensitivity 3/4, specificity 3/5, TSS 0.35.
  const Confusion c = confusion_at(kScores, kObserved, 0.5);
  CHECK(c.true_positive == 3);
  CHECK(c.false_negative == 1);
  CHECK(c.false_positive == 2);
  CHECK(c.true_negative == 3);
  CHECK(c.sensitivity() == Approx(0.75));
  CHECK(c.specificity() == Approx(0.6));
  CHECK(c.tss() == Approx(0.35));
  // Sweep by hand: thresholds 0.9 -> 0.25, 0.8 -> 0.5, 0.7 -> 0.3, 0.5 -> 0.35, 0.4 -> 0.6,
  // 0.3 -> 0.4, 0.2 -> 0.2, 0.1 -> 0. The best is 0.4 with every presence found and 2 of 5
  // absences predicted present.
  const Discrimination d = discriminate(kScores, kObserved);
  CHECK(d.best.threshold == 0.4);
  CHECK(d.best.tss() == Approx(0.6));
  CHECK(d.best.true_positive == 4);
  CHECK(d.best.false_positive == 2);
}

TEST_CASE("Discrimination without presences or without absences is refused with the way out", "[evaluate]") {
  CHECK_THROWS_WITH(discriminate({0.1, 0.2}, {0, 0}), Catch::Contains("0 presences and 2 absences") &&
                                                           Catch::Contains("--presence-only"));
}

TEST_CASE("The calibration table bins predictions and reports observed rates by hand count", "[evaluate]") {
  const auto table = calibration_table({0.05, 0.15, 0.12, 0.95, 0.85, 0.5, 1.0}, {0, 0, 1, 1, 1, 0, 1}, 2);
  REQUIRE(table.size() == 2);
  CHECK(table[0].count == 3);
  CHECK(table[0].presences == 1);
  CHECK(table[0].mean_predicted == Approx((0.05 + 0.15 + 0.12) / 3.0));
  CHECK(table[0].observed_rate == Approx(1.0 / 3.0));
  CHECK(table[1].count == 4);  // 0.5 opens the upper bin; 1.0 is inside the last bin
  CHECK(table[1].presences == 3);
  CHECK(table[1].mean_predicted == Approx((0.95 + 0.85 + 0.5 + 1.0) / 4.0));
  const auto empty = calibration_table({0.1}, {1}, 4);
  CHECK(std::isnan(empty[3].observed_rate));
  CHECK_THROWS_WITH(calibration_table({0.2, 3.5}, {0, 1}, 10), Catch::Contains("not a probability"));
}

TEST_CASE("The continuous Boyce index matches a hand-worked example of its definition", "[evaluate]") {
  // Definition: Hirzel, Le Lay, Helfer, Randin & Guisan (2006), Ecological Modelling 199:142-152.
  // Scores span 0..1; width 0.5 of the range moved in 2 steps gives windows [0, 0.5],
  // [0.25, 0.75], [0.5, 1]. Presences 0.55, 0.7, 0.9, 1.0, 0.3; background 0, 0.1, 0.3, 0.6,
  // 0.8, 1.0. By hand: P = 1/5, 3/5, 4/5; E = 3/6, 2/6, 3/6; F = 0.4, 1.8, 1.6. Spearman of F
  // against the window centres: ranks (1, 3, 2) vs (1, 2, 3), rho = 1 - 6 x 2 / (3 x 8) = 0.5.
  const BoyceResult r = boyce_index({0.55, 0.7, 0.9, 1.0, 0.3}, {0.0, 0.1, 0.3, 0.6, 0.8, 1.0}, 0.5, 2);
  REQUIRE(r.windows.size() == 3);
  CHECK(r.windows[0].ratio == Approx(0.4));
  CHECK(r.windows[1].ratio == Approx(1.8));
  CHECK(r.windows[2].ratio == Approx(1.6));
  CHECK(r.index == Approx(0.5));
}

TEST_CASE("Spearman's correlation uses mid-ranks for ties", "[evaluate]") {
  CHECK(spearman_correlation({1, 2, 3, 4}, {10, 20, 30, 40}) == Approx(1.0));
  CHECK(spearman_correlation({1, 2, 3, 4}, {4, 3, 2, 1}) == Approx(-1.0));
  // Ties: x ranks (1.5, 1.5, 3, 4); y ranks (1, 2, 3, 4); Pearson of the ranks by hand:
  // centred x (-1, -1, 0.5, 1.5), y (-1.5, -0.5, 0.5, 1.5); sum xy 4.5, sum xx 4.5, sum yy 5.
  CHECK(spearman_correlation({1, 1, 2, 3}, {1, 2, 3, 4}) == Approx(4.5 / std::sqrt(4.5 * 5.0)));
  CHECK(std::isnan(spearman_correlation({1, 1, 1}, {1, 2, 3})));
}
