#pragma once
// Covariate values at points (already in the rasters' CRS): the value of the pixel that contains
// each point, or a bilinear interpolation of the four nearest pixel centres. Points outside the
// grid or on nodata are marked, not silently given a value.
#include <Eigen/Core>
#include <cstdint>
#include <map>
#include <memory>
#include <string>
#include <vector>

#include "raster/covariate_source.hpp"
#include "raster/raster_grid.hpp"

namespace habcast {

struct SamplingInput {
  std::string name;
  std::string path;
  int band = 1;
  bool categorical = false;  ///< categorical rasters are never interpolated
};

enum class PointStatus : std::uint8_t { ok, not_transformed, outside, nodata };

struct SampledPoints {
  Eigen::ArrayXXd raw;                  ///< points x inputs; NaN unless status is ok
  std::vector<PointStatus> status;
  std::vector<int> nodata_input;        ///< for status nodata: the first input that was nodata
  std::vector<std::int64_t> pixel;      ///< row * width + column of the containing pixel; -1 outside
  std::int64_t bilinear_fallbacks = 0;  ///< points where a neighbour was nodata or off the grid,
                                        ///< so the containing pixel's value was used
};

/// Column and row (fractional) of map coordinates (x, y) on `grid`.
void map_to_pixel(const RasterGrid& grid, double x, double y, double& column, double& row);

/// Samples every input at every point with transformed[i] = 1. All inputs must share `grid`.
SampledPoints sample_points(const RasterGrid& grid, const std::vector<SamplingInput>& inputs, const std::vector<double>& x,
                            const std::vector<double>& y, const std::vector<std::uint8_t>& transformed, bool bilinear);

/// The same, reading input k through readers[k] (sources delivering values on `grid`, e.g.
/// covariates aligned onto it by raster/alignment_plan.hpp).
SampledPoints sample_points(const RasterGrid& grid, const std::vector<SamplingInput>& inputs,
                            std::vector<std::unique_ptr<CovariateSource>>& readers, const std::vector<double>& x,
                            const std::vector<double>& y, const std::vector<std::uint8_t>& transformed, bool bilinear);

/// GDAL category names of a band (code -> name), empty when it has none.
std::map<std::int64_t, std::string> category_names(const std::string& path, int band);

}  // namespace habcast
