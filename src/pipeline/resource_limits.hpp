#pragma once
// Refuses runs that could not finish sensibly, before any output exists: a raster whose header
// claims an absurd size, or windows x threads that would need more working memory than allowed.
// The limits are documented in docs/limits.md.
#include <cstdint>
#include <string>

#include "raster/raster_grid.hpp"

namespace habcast {

/// Largest raster accepted: 2^40 pixels (a 1,048,576 x 1,048,576 grid).
constexpr std::int64_t kMaxRasterPixels = std::int64_t{1} << 40;

/// Throws InputError naming `path` when the grid has more than kMaxRasterPixels pixels.
void check_raster_size(const std::string& path, const RasterGrid& grid);

/// Bytes of working memory a predict run holds at once, excluding GDAL's block cache: per thread
/// its window of covariate values and a chunk's design matrices, plus the finished windows
/// waiting to be written in order (two per thread).
std::int64_t predict_working_memory(std::int64_t window_pixels, std::int64_t covariates, std::int64_t terms,
                                    int threads);

/// Throws UsageError when predict_working_memory exceeds `limit_bytes`, saying which options to change.
void check_working_memory(std::int64_t window_pixels, std::int64_t covariates, std::int64_t terms, int threads,
                          std::int64_t limit_bytes);

}  // namespace habcast
