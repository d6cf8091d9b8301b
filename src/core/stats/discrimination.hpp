#pragma once
// How well predictions separate presences (1) from absences or background (0): the ROC curve, its
// area (AUC) with a standard error, the threshold that maximises sensitivity + specificity and the
// true skill statistic there, and the confusion counts at any threshold. Pure math; no rasters.
#include <cstdint>
#include <vector>

namespace habcast {

struct Confusion {
  double threshold = 0.0;           ///< predicted present when score >= threshold
  std::int64_t true_positive = 0;
  std::int64_t false_negative = 0;
  std::int64_t true_negative = 0;
  std::int64_t false_positive = 0;
  [[nodiscard]] double sensitivity() const;  ///< TP / (TP + FN)
  [[nodiscard]] double specificity() const;  ///< TN / (TN + FP)
  /// True skill statistic, sensitivity + specificity - 1 (Allouche, Tsoar & Kadmon 2006, Journal
  /// of Applied Ecology 43:1223-1232).
  [[nodiscard]] double tss() const { return sensitivity() + specificity() - 1.0; }
};

struct RocPoint {
  double threshold = 0.0;
  double false_positive_rate = 0.0;
  double true_positive_rate = 0.0;
};

struct Discrimination {
  std::int64_t presences = 0;
  std::int64_t absences = 0;
  double auc = 0.0;         ///< P(score of a random presence > that of a random absence), ties 1/2
  double auc_se = 0.0;      ///< Hanley & McNeil (1982) standard error
  double auc_lower = 0.0;   ///< auc -/+ Phi^-1(0.975) se (1.959963984540054), clipped to [0, 1]
  double auc_upper = 0.0;
  Confusion best;           ///< threshold with the largest TSS (the lowest such threshold on ties)
  std::vector<RocPoint> roc;  ///< from (0, 0) to (1, 1), one point per distinct score
};

/// Computes everything from scores and 0/1 observations (non-zero counts as presence). Throws
/// InputError when there are no presences or no absences.
Discrimination discriminate(const std::vector<double>& scores, const std::vector<std::uint8_t>& observed);

/// AUC as the Mann-Whitney U statistic divided by n1 n0 (Hanley & McNeil 1982, Radiology
/// 143:29-36), from mid-ranks of the pooled scores.
double auc_mann_whitney(const std::vector<double>& scores, const std::vector<std::uint8_t>& observed);

/// Hanley & McNeil (1982), eq. 2: SE of the AUC from Q1 = A/(2-A), Q2 = 2A^2/(1+A).
double auc_standard_error_hanley_mcneil(double auc, std::int64_t presences, std::int64_t absences);

/// Confusion counts at `threshold` (present when score >= threshold).
Confusion confusion_at(const std::vector<double>& scores, const std::vector<std::uint8_t>& observed, double threshold);

}  // namespace habcast
