#include "core/stats/calibration.hpp"

#include <algorithm>
#include <cmath>
#include <limits>

#include "core/base/error.hpp"

namespace habcast {

std::vector<CalibrationBin> calibration_table(const std::vector<double>& predicted, const std::vector<std::uint8_t>& observed,
                                              int bins) {
  if (bins < 1) throw UsageError("--bins must be 1 or more");
  std::vector<CalibrationBin> table(static_cast<std::size_t>(bins));
  for (int b = 0; b < bins; ++b) {
    table[static_cast<std::size_t>(b)].lower = static_cast<double>(b) / bins;
    table[static_cast<std::size_t>(b)].upper = static_cast<double>(b + 1) / bins;
  }
  std::vector<double> sums(table.size(), 0.0);
  for (std::size_t i = 0; i < predicted.size(); ++i) {
    const double p = predicted[i];
    if (!(p >= 0.0 && p <= 1.0))
      throw InputError("prediction " + std::to_string(p) + " is not a probability in [0, 1]; a calibration table needs "
                       "predicted probabilities (a binomial model's suitability)");
    const auto b = static_cast<std::size_t>(std::min(bins - 1, static_cast<int>(p * bins)));
    table[b].count++;
    if (observed[i]) table[b].presences++;
    sums[b] += p;
  }
  for (std::size_t b = 0; b < table.size(); ++b) {
    const bool empty = table[b].count == 0;
    const auto n = static_cast<double>(table[b].count);
    table[b].mean_predicted = empty ? std::numeric_limits<double>::quiet_NaN() : sums[b] / n;
    table[b].observed_rate = empty ? std::numeric_limits<double>::quiet_NaN() : static_cast<double>(table[b].presences) / n;
  }
  return table;
}

}  // namespace habcast
