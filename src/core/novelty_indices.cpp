#include "core/novelty_indices.hpp"

#include <algorithm>

namespace habcast {

double mess_similarity(const std::vector<double>& sorted, double p) {
  const double lo = sorted.front();
  const double hi = sorted.back();
  const auto smaller = std::lower_bound(sorted.begin(), sorted.end(), p) - sorted.begin();
  const double f = 100.0 * static_cast<double>(smaller) / static_cast<double>(sorted.size());
  if (smaller == 0) return 100.0 * (p - lo) / (hi - lo);
  if (static_cast<std::size_t>(smaller) == sorted.size()) return 100.0 * (hi - p) / (hi - lo);
  return f <= 50.0 ? 2.0 * f : 2.0 * (100.0 - f);
}

double nt1_term(double min, double max, double p) { return std::min({p - min, max - p, 0.0}) / (max - min); }

}  // namespace habcast
