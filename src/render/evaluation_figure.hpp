#pragma once
// The picture of an evaluation: the ROC curve beside a calibration plot (observed share of
// presences against mean prediction per bin) or, for presence-only data, the Boyce curve
// (predicted-to-expected ratio along suitability). One Figure, written as SVG, PNG or PDF.
#include <string>
#include <vector>

#include "core/stats/boyce_index.hpp"
#include "core/stats/calibration.hpp"
#include "core/stats/discrimination.hpp"
#include "render/figure.hpp"

namespace habcast {

/// Two square panels at A4 text width. `calibration` or `boyce` (or neither) fills the right one.
Figure evaluation_figure(const Discrimination& d, const std::vector<CalibrationBin>* calibration, const BoyceResult* boyce,
                         const std::string& title);

}  // namespace habcast
