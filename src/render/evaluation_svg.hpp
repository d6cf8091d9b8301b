#pragma once
// A small hand-written SVG of an evaluation: the ROC curve beside a calibration plot (observed
// share of presences against mean prediction per bin) or, for presence-only data, the Boyce curve
// (predicted-to-expected ratio along suitability).
#include <string>
#include <vector>

#include "core/stats/boyce_index.hpp"
#include "core/stats/calibration.hpp"
#include "core/stats/discrimination.hpp"

namespace habcast {

std::string evaluation_svg(const Discrimination& d, const std::vector<CalibrationBin>* calibration, const BoyceResult* boyce,
                           const std::string& title);

}  // namespace habcast
