#include "core/domain/novelty_indices.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <utility>

#include "core/base/pixel_loops.hpp"

namespace habcast {

namespace {

double similarity_from_count(const std::vector<double>& sorted, double p, std::size_t smaller) {
  const double lo = sorted.front();
  const double hi = sorted.back();
  const double f = 100.0 * static_cast<double>(smaller) / static_cast<double>(sorted.size());
  if (smaller == 0) return 100.0 * (p - lo) / (hi - lo);
  if (smaller == sorted.size()) return 100.0 * (hi - p) / (hi - lo);
  return f <= 50.0 ? 2.0 * f : 2.0 * (100.0 - f);
}

}  // namespace

double mess_similarity(const std::vector<double>& sorted, double p) {
  const auto smaller = static_cast<std::size_t>(std::lower_bound(sorted.begin(), sorted.end(), p) - sorted.begin());
  return similarity_from_count(sorted, p, smaller);
}

SortedValues::SortedValues(std::vector<double> sorted) : sorted_(std::move(sorted)) {
  const std::size_t n = sorted_.size();
  if (n == 0) return;
  const double lo = sorted_.front();
  const double span = sorted_.back() - lo;
  if (!(span > 0.0) || !std::isfinite(span)) return;
  // Eight buckets per value: nearly every bucket then holds zero or one value, the case the block
  // pass settles without branches (with two per value about one pixel in eight fell through to the
  // one-by-one search, which cost what the block pass saved). The table is 32 KiB for 1,000
  // training values, 4 MiB at most.
  const std::size_t buckets = std::min<std::size_t>(std::max<std::size_t>(8 * n, 16), 1u << 20);
  // similarity_from_count() for counts 1 .. n - 1 does not depend on p.
  inner_similarity_.resize(n);
  for (std::size_t k = 1; k < n; ++k) inner_similarity_[k] = similarity_from_count(sorted_, 0.0, k);
  padded_.assign(1, -std::numeric_limits<double>::infinity());
  padded_.insert(padded_.end(), sorted_.begin(), sorted_.end());
  padded_.resize(1 + n + kWindow, std::numeric_limits<double>::infinity());
  origin_ = lo;
  buckets_per_unit_ = static_cast<double>(buckets) / span;
  first_at_or_above_.resize(buckets + 2);
  for (std::size_t k = 0; k < first_at_or_above_.size(); ++k) {
    const double edge = origin_ + static_cast<double>(k) / buckets_per_unit_;
    first_at_or_above_[k] =
        static_cast<std::uint32_t>(std::lower_bound(sorted_.begin(), sorted_.end(), edge) - sorted_.begin());
  }
}

// count_below() and mess_similarity() live in these inline bodies, so that the per-block loop
// below gets them inlined (a call per value cost about as much as the search).
__attribute__((always_inline)) inline std::size_t SortedValues::count_below_here(double p) const {
  const std::size_t n = sorted_.size();
  // Outside the training range (a good share of the pixels flagged at all) there is nothing to search.
  // (std::lower_bound's answers: 0 at or below the minimum and for NaN, n above the maximum.)
  if (n == 0 || !(p > sorted_.front())) return 0;
  if (p > sorted_.back()) return n;
  if (buckets_per_unit_ > 0.0 && p >= origin_) {
    const double position = (p - origin_) * buckets_per_unit_;
    const std::size_t last = first_at_or_above_.size() - 1;
    if (position < static_cast<double>(last)) {
      const auto b = static_cast<std::size_t>(position);
      // One bucket of slack on each side absorbs rounding in `position` and in the edges; the
      // answer is then checked against its neighbours, and a full search settles any doubt.
      const std::size_t lo = first_at_or_above_[b == 0 ? 0 : b - 1];
      const std::size_t hi = first_at_or_above_[std::min(b + 2, last)];
      std::size_t j = lo;
      if (hi - lo <= kWindow) {
        // Count the window's values below p without branches (a binary search over a handful of
        // values mispredicts about every other step); values from hi on are not below p, and the
        // padding after the last value is +inf.
        const double* w = padded_.data() + 1 + lo;
        for (std::size_t t = 0; t < kWindow; ++t) j += w[t] < p ? 1 : 0;
      } else {
        j = static_cast<std::size_t>(std::lower_bound(sorted_.begin() + static_cast<std::ptrdiff_t>(lo),
                                                      sorted_.begin() + static_cast<std::ptrdiff_t>(hi), p) -
                                     sorted_.begin());
      }
      if ((j == 0 || sorted_[j - 1] < p) && (j == n || !(sorted_[j] < p))) return j;
    }
  }
  return static_cast<std::size_t>(std::lower_bound(sorted_.begin(), sorted_.end(), p) - sorted_.begin());
}

__attribute__((always_inline)) inline double SortedValues::similarity_here(double p) const {
  const std::size_t smaller = count_below_here(p);
  // Inside the range the similarity depends on the count alone: looked up, computed as below.
  if (smaller > 0 && smaller < sorted_.size() && !inner_similarity_.empty()) return inner_similarity_[smaller];
  return similarity_from_count(sorted_, p, smaller);
}

HABCAST_PIXEL_LOOPS std::size_t SortedValues::count_below(double p) const { return count_below_here(p); }

HABCAST_PIXEL_LOOPS double SortedValues::mess_similarity(double p) const { return similarity_here(p); }

namespace {

/// The branch-free first pass of SortedValues::mess_similarity_columns(). Outside the training
/// range [lo, hi] the two edge formulas. Inside it a guess at the count of training values below
/// the value, from its bucket: those before the bucket, and the next one when it is smaller (right
/// whenever the bucket holds at most one value); the guess is checked against its neighbours (the
/// count is c exactly when value c - 1 is smaller and value c is not), and where it holds the
/// similarity of that count is looked up; NaN where it fails, for the caller to compute one by
/// one. `padded` is -inf, the training values, then +inf, so both neighbours always exist. (A free
/// function: as a member, GCC 12 did not vectorise the loop.)
HABCAST_PIXEL_LOOPS void similarity_by_bucket(const double* __restrict in, std::size_t n, double* __restrict out,
                                              const std::uint32_t* __restrict first, std::size_t buckets,
                                              const double* __restrict padded, const double* __restrict inner,
                                              std::size_t values, double origin, double per_unit) {
  const double lo = padded[1], hi = padded[values], range = hi - lo;
  const double last = static_cast<double>(buckets);
  const auto count_limit = static_cast<std::int32_t>(values);
  for (std::size_t i = 0; i < n; ++i) {
    const double v = in[i];
    const bool inside = (v > lo) & (v <= hi);
    const double scaled = (v - origin) * per_unit;
    const double unclamped = inside ? scaled : 0.0;
    const double position = unclamped < last ? unclamped : last;
    const auto b = static_cast<std::int32_t>(position);  // at most 2^20 buckets; AVX2 converts to 32 bits only
    const auto before = static_cast<std::int32_t>(first[b]);
    const std::int32_t count = before + (padded[before + 1] < v ? 1 : 0);
    const bool settled = (padded[count] < v) & !(padded[count + 1] < v);
    const double similarity = inner[count < count_limit ? count : 0];
    // similarity_from_count() with every training value below v, or none.
    const double outside = 100.0 * (v > hi ? hi - v : v - lo) / range;
    const double in_range = settled ? similarity : std::numeric_limits<double>::quiet_NaN();
    out[i] = inside ? in_range : outside;
  }
}

}  // namespace

HABCAST_PIXEL_LOOPS void SortedValues::mess_similarity_columns(const double* p, std::size_t n, double* out) const {
  if (first_at_or_above_.empty()) {
    for (std::size_t i = 0; i < n; ++i) out[i] = similarity_here(p[i]);
    return;
  }
  similarity_by_bucket(p, n, out, first_at_or_above_.data(), first_at_or_above_.size() - 2, padded_.data(),
                       inner_similarity_.data(), sorted_.size(), origin_, buckets_per_unit_);
  for (std::size_t i = 0; i < n; ++i)
    if (std::isnan(out[i]) && !std::isnan(p[i])) out[i] = similarity_here(p[i]);
}

double nt1_term(double min, double max, double p) { return std::min({p - min, max - p, 0.0}) / (max - min); }

}  // namespace habcast
