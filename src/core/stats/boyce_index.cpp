#include "core/stats/boyce_index.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numeric>

#include "core/base/error.hpp"

namespace habcast {

namespace {

std::vector<double> mid_ranks(const std::vector<double>& v) {
  std::vector<std::size_t> order(v.size());
  std::iota(order.begin(), order.end(), 0);
  std::sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return v[a] < v[b]; });
  std::vector<double> ranks(v.size());
  for (std::size_t i = 0; i < order.size();) {
    std::size_t j = i;
    while (j < order.size() && v[order[j]] == v[order[i]]) ++j;
    const double mid = (static_cast<double>(i + 1) + static_cast<double>(j)) / 2.0;
    for (std::size_t k = i; k < j; ++k) ranks[order[k]] = mid;
    i = j;
  }
  return ranks;
}

double count_in(const std::vector<double>& v, double lo, double hi) {
  return static_cast<double>(std::count_if(v.begin(), v.end(), [&](double s) { return s >= lo && s <= hi; }));
}

}  // namespace

double spearman_correlation(const std::vector<double>& a, const std::vector<double>& b) {
  const std::vector<double> ra = mid_ranks(a);
  const std::vector<double> rb = mid_ranks(b);
  const auto n = static_cast<double>(a.size());
  const double ma = std::accumulate(ra.begin(), ra.end(), 0.0) / n;
  const double mb = std::accumulate(rb.begin(), rb.end(), 0.0) / n;
  double sab = 0.0, saa = 0.0, sbb = 0.0;
  for (std::size_t i = 0; i < ra.size(); ++i) {
    sab += (ra[i] - ma) * (rb[i] - mb);
    saa += (ra[i] - ma) * (ra[i] - ma);
    sbb += (rb[i] - mb) * (rb[i] - mb);
  }
  if (saa == 0.0 || sbb == 0.0) return std::numeric_limits<double>::quiet_NaN();
  return sab / std::sqrt(saa * sbb);
}

BoyceResult boyce_index(const std::vector<double>& presence_scores, const std::vector<double>& background_scores,
                        double width_fraction, int steps) {
  if (presence_scores.empty() || background_scores.empty())
    throw InputError("the Boyce index needs presences and background points; got " +
                     std::to_string(presence_scores.size()) + " presences and " +
                     std::to_string(background_scores.size()) + " background points");
  if (!(width_fraction > 0.0 && width_fraction <= 1.0) || steps < 2)
    throw UsageError("the Boyce window width must lie in (0, 1] of the range and there must be 2 or more steps");
  double lo = std::numeric_limits<double>::infinity();
  double hi = -lo;
  for (const auto* v : {&presence_scores, &background_scores})
    for (double s : *v) {
      lo = std::min(lo, s);
      hi = std::max(hi, s);
    }
  const double width = width_fraction * (hi - lo);
  const auto np = static_cast<double>(presence_scores.size());
  const auto nb = static_cast<double>(background_scores.size());
  BoyceResult r;
  r.range_low = lo;
  r.range_high = hi;
  std::vector<double> centres;
  std::vector<double> ratios;
  for (int k = 0; k <= steps; ++k) {
    const double start = lo + (hi - lo - width) * static_cast<double>(k) / steps;
    BoyceWindow w{start, start + width, 0.0, 0.0, 0.0};
    w.predicted_share = count_in(presence_scores, w.lower, w.upper) / np;
    w.expected_share = count_in(background_scores, w.lower, w.upper) / nb;
    if (w.expected_share == 0.0) continue;
    w.ratio = w.predicted_share / w.expected_share;
    r.windows.push_back(w);
    centres.push_back((w.lower + w.upper) / 2.0);
    ratios.push_back(w.ratio);
  }
  r.index = r.windows.size() >= 2 ? spearman_correlation(ratios, centres) : std::numeric_limits<double>::quiet_NaN();
  return r;
}

}  // namespace habcast
