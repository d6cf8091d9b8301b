#include "pipeline/resource_limits.hpp"

#include <algorithm>
#include <cstdio>

#include "core/base/error.hpp"
#include "core/prediction/block_predictor.hpp"

namespace habcast {

namespace {

std::string mebibytes(std::int64_t bytes) {
  char text[32];
  std::snprintf(text, sizeof text, "%.0f MiB", static_cast<double>(bytes) / (1024.0 * 1024.0));
  return text;
}

}  // namespace

void check_raster_size(const std::string& path, const RasterGrid& grid) {
  const std::int64_t pixels = static_cast<std::int64_t>(grid.width) * grid.height;
  if (grid.width <= 0 || grid.height <= 0 || pixels > kMaxRasterPixels)
    throw InputError(located(path, 0,
                             "claims " + std::to_string(grid.width) + " x " + std::to_string(grid.height) +
                                 " pixels; habcast accepts rasters of 1 to " + std::to_string(kMaxRasterPixels) +
                                 " pixels. A header this size usually means a damaged or mis-written file: check "
                                 "it with gdalinfo, or split the region into tiles."));
}

std::int64_t predict_working_memory(std::int64_t window_pixels, std::int64_t covariates, std::int64_t terms,
                                    int threads) {
  // Per pixel of a window being read: one double per covariate and a validity byte; of a
  // finished window: suitability, standard error and two limits as float plus the flag byte.
  const std::int64_t reading = window_pixels * (8 * covariates + 1);
  const std::int64_t finished = window_pixels * (4 * 4 + 1 + 1);
  // Per chunk row: model values, design matrix and X*V (doubles), six prediction vectors.
  const std::int64_t chunk_rows = std::min<std::int64_t>(window_pixels, BlockPredictor::kChunk);
  const std::int64_t chunk = chunk_rows * 8 * (covariates + 2 * terms + 7);
  return threads * (reading + chunk) + 2 * static_cast<std::int64_t>(threads) * finished;
}

void check_working_memory(std::int64_t window_pixels, std::int64_t covariates, std::int64_t terms, int threads,
                          std::int64_t limit_bytes) {
  const std::int64_t need = predict_working_memory(window_pixels, covariates, terms, threads);
  if (need <= limit_bytes) return;
  throw UsageError("windows of " + std::to_string(window_pixels) + " pixels on " + std::to_string(threads) +
                   " threads need about " + mebibytes(need) + " of working memory, more than --max-memory " +
                   mebibytes(limit_bytes) + ". Use a smaller --block-size or fewer --threads, or raise --max-memory "
                   "if the machine has the memory.");
}

}  // namespace habcast
