#pragma once
// The warning for a map without a single predicted pixel: which covariate raster is empty
// (nodata everywhere), or that the covariates' valid areas do not overlap.
#include <string>
#include <vector>

#include "predict/prediction_report.hpp"
#include "raster/raster_grid.hpp"

namespace habcast {

/// Reads each covariate until its first valid pixel (so a non-empty raster costs a strip or two)
/// and names those that have none.
std::string empty_map_warning(const std::vector<CovariateInput>& inputs, const RasterGrid& grid);

}  // namespace habcast
