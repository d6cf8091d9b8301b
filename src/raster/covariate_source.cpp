#include "raster/covariate_source.hpp"

#include <cmath>

namespace habcast {

DirectCovariateSource::DirectCovariateSource(const std::string& path, int band, const RasterGrid& grid, int decode_threads)
    : grid_(grid), reader_(path, band, decode_threads) {}

std::int64_t DirectCovariateSource::read(const Window& window, double* values, std::uint8_t* valid) {
  reader_.read(window, values, valid);
  // The reader writes NaN exactly where it found no value; counting them costs one pass over a
  // window already in cache.
  std::int64_t missing = 0;
  const std::int64_t n = window.pixels();
  for (std::int64_t i = 0; i < n; ++i) missing += std::isnan(values[i]) ? 1 : 0;
  return missing;
}

}  // namespace habcast
