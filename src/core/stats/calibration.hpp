#pragma once
// A calibration table: predictions grouped into bins, with the mean prediction and the observed
// share of presences in each (a reliability diagram in numbers). Pure math.
#include <cstdint>
#include <vector>

namespace habcast {

struct CalibrationBin {
  double lower = 0.0;   ///< bin covers [lower, upper), the last bin includes its upper edge
  double upper = 0.0;
  std::int64_t count = 0;
  std::int64_t presences = 0;
  double mean_predicted = 0.0;  ///< NaN for an empty bin
  double observed_rate = 0.0;   ///< presences / count; NaN for an empty bin
};

/// `bins` equal-width bins over [0, 1] (predictions are probabilities). Throws InputError when a
/// prediction lies outside [0, 1].
std::vector<CalibrationBin> calibration_table(const std::vector<double>& predicted, const std::vector<std::uint8_t>& observed,
                                              int bins);

}  // namespace habcast
