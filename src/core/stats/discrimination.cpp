#include "core/stats/discrimination.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numeric>

#include "core/base/error.hpp"
#include "core/numeric/normal_distribution.hpp"

namespace habcast {

double Confusion::sensitivity() const {
  const auto n = true_positive + false_negative;
  return n > 0 ? static_cast<double>(true_positive) / static_cast<double>(n) : 0.0;
}

double Confusion::specificity() const {
  const auto n = true_negative + false_positive;
  return n > 0 ? static_cast<double>(true_negative) / static_cast<double>(n) : 0.0;
}

double auc_mann_whitney(const std::vector<double>& scores, const std::vector<std::uint8_t>& observed) {
  const std::size_t n = scores.size();
  std::vector<std::size_t> order(n);
  std::iota(order.begin(), order.end(), 0);
  std::sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return scores[a] < scores[b]; });
  // Mid-ranks: tied scores share the mean of their ranks, which counts a tie as 1/2.
  double rank_sum = 0.0;
  double n1 = 0.0;
  for (std::size_t i = 0; i < n;) {
    std::size_t j = i;
    while (j < n && scores[order[j]] == scores[order[i]]) ++j;
    const double mid_rank = (static_cast<double>(i + 1) + static_cast<double>(j)) / 2.0;
    for (std::size_t k = i; k < j; ++k)
      if (observed[order[k]]) {
        rank_sum += mid_rank;
        n1 += 1.0;
      }
    i = j;
  }
  const double n0 = static_cast<double>(n) - n1;
  const double u = rank_sum - n1 * (n1 + 1.0) / 2.0;
  return u / (n1 * n0);
}

double auc_standard_error_hanley_mcneil(double auc, std::int64_t presences, std::int64_t absences) {
  const double q1 = auc / (2.0 - auc);
  const double q2 = 2.0 * auc * auc / (1.0 + auc);
  const auto na = static_cast<double>(presences);
  const auto nn = static_cast<double>(absences);
  const double var = (auc * (1.0 - auc) + (na - 1.0) * (q1 - auc * auc) + (nn - 1.0) * (q2 - auc * auc)) / (na * nn);
  return std::sqrt(std::max(var, 0.0));
}

Confusion confusion_at(const std::vector<double>& scores, const std::vector<std::uint8_t>& observed, double threshold) {
  Confusion c;
  c.threshold = threshold;
  for (std::size_t i = 0; i < scores.size(); ++i) {
    const bool predicted = scores[i] >= threshold;
    if (observed[i]) (predicted ? c.true_positive : c.false_negative)++;
    else (predicted ? c.false_positive : c.true_negative)++;
  }
  return c;
}

Discrimination discriminate(const std::vector<double>& scores, const std::vector<std::uint8_t>& observed) {
  Discrimination d;
  for (std::uint8_t o : observed) (o ? d.presences : d.absences)++;
  if (d.presences == 0 || d.absences == 0)
    throw InputError("the points hold " + std::to_string(d.presences) + " presences and " + std::to_string(d.absences) +
                     " absences; discrimination needs both (for presence-only data use --presence-only, which samples "
                     "background points from the grid)");
  d.auc = auc_mann_whitney(scores, observed);
  d.auc_se = auc_standard_error_hanley_mcneil(d.auc, d.presences, d.absences);
  // The exact 97.5 % normal quantile (1.959963984540054), not the rounded 1.96. The normal
  // interval can pass 1 (or 0) for an AUC near the edge; it is clipped there, which is documented.
  const double z = normal_quantile(0.975);
  d.auc_lower = std::max(0.0, d.auc - z * d.auc_se);
  d.auc_upper = std::min(1.0, d.auc + z * d.auc_se);

  // Sweep the distinct scores from high to low: lowering the threshold to a score moves every
  // point with that score to "predicted present" at once.
  std::vector<std::size_t> order(scores.size());
  std::iota(order.begin(), order.end(), 0);
  std::sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return scores[a] > scores[b]; });
  const auto np = static_cast<double>(d.presences);
  const auto na = static_cast<double>(d.absences);
  std::int64_t tp = 0;
  std::int64_t fp = 0;
  d.roc.push_back({std::numeric_limits<double>::infinity(), 0.0, 0.0});
  double best_tss = -2.0;
  for (std::size_t i = 0; i < order.size();) {
    const double t = scores[order[i]];
    std::size_t j = i;
    for (; j < order.size() && scores[order[j]] == t; ++j) (observed[order[j]] ? tp : fp)++;
    const double tpr = static_cast<double>(tp) / np;
    const double fpr = static_cast<double>(fp) / na;
    d.roc.push_back({t, fpr, tpr});
    const double tss = tpr - fpr;  // sensitivity + specificity - 1
    if (tss >= best_tss) {         // ">=": on ties keep the lower threshold, which finds more presences
      best_tss = tss;
      d.best = Confusion{t, tp, d.presences - tp, d.absences - fp, fp};
    }
    i = j;
  }
  return d;
}

}  // namespace habcast
