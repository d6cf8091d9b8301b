#pragma once
// Per-covariate novelty formulas, applied to model values (after transform and standardisation).
#include <cstddef>
#include <cstdint>
#include <vector>

namespace habcast {

/// Similarity of value `p` to a covariate's training values (`sorted` ascending, at least two
/// distinct values), in percent, after Elith, Kearney & Phillips 2010 (Methods in Ecology and
/// Evolution 1:330-342). With f the percentage of training values smaller than p and min/max the
/// training extremes:
///   f = 0:          100 (p - min) / (max - min)   (0 at the minimum, negative below it)
///   0 < f <= 50:    2 f
///   50 <= f < 100:  2 (100 - f)
///   f = 100:        100 (max - p) / (max - min)   (negative above the maximum)
/// The multivariate similarity (MESS) is the minimum over covariates.
double mess_similarity(const std::vector<double>& sorted, double p);

/// A covariate's sorted training values with a bucket table over their range, so that the
/// number of values smaller than p (std::lower_bound's index) is found in a couple of steps
/// instead of a dozen unpredictable ones of a binary search over thousands of values. Exact: the
/// bucket's answer is verified against its neighbours and a full search settles any doubt.
class SortedValues {
 public:
  explicit SortedValues(std::vector<double> sorted);  ///< ascending, at least one value

  [[nodiscard]] const std::vector<double>& values() const { return sorted_; }
  /// Index of the first value not less than p (0 .. size).
  [[nodiscard]] std::size_t count_below(double p) const;
  /// mess_similarity(values(), p), faster.
  [[nodiscard]] double mess_similarity(double p) const;
  /// mess_similarity() of `n` values p[0..n) into out[0..n): the same values, one call per block.
  void mess_similarity_columns(const double* p, std::size_t n, double* out) const;

 private:
  static constexpr std::size_t kWindow = 8;  ///< values counted without branches
  [[nodiscard]] std::size_t count_below_here(double p) const;
  [[nodiscard]] double similarity_here(double p) const;
  std::vector<double> sorted_;
  std::vector<double> padded_;  ///< -inf, sorted_, and kWindow times +inf
  std::vector<double> inner_similarity_;  ///< per count 1 .. size - 1 of values below p: the similarity
  double origin_ = 0.0;
  double buckets_per_unit_ = 0.0;                  ///< 0 when all values are equal
  std::vector<std::uint32_t> first_at_or_above_;  ///< per bucket edge k: lower_bound(origin + k / buckets_per_unit)
};

/// One covariate's term of NT1 (Mesgaran, Cousens & Webber 2014, Diversity and Distributions
/// 20:1147-1159): min(p - min, max - p, 0) / (max - min). Zero inside the range, negative outside;
/// NT1 is the sum over covariates.
double nt1_term(double min, double max, double p);

}  // namespace habcast
