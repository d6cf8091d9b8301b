#include "raster/covariate_source.hpp"

#include <cmath>

namespace habcast {

DirectCovariateSource::DirectCovariateSource(const std::string& path, int band, const RasterGrid& grid, int decode_threads)
    : grid_(grid), reader_(path, band, decode_threads) {}

std::int64_t DirectCovariateSource::read(const Window& window, double* values, std::uint8_t* valid) {
  return reader_.read(window, values, valid);
}

}  // namespace habcast
