#pragma once
// Reads windows of one covariate band as double, with a validity mask. One reader owns one GDAL
// dataset handle; give each worker thread its own readers (GDAL handles are not thread-safe).
#include <cstdint>
#include <memory>
#include <string>

#include "raster/window.hpp"

namespace habcast {

class CovariateReader {
 public:
  /// Opens `path` read-only (with GDAL's multi-threaded decoding where the driver offers it when
  /// `decode_threads` > 1). Throws InputError naming the file when it cannot be opened, lacks the
  /// band, or the band's data type is complex.
  CovariateReader(const std::string& path, int band, int decode_threads = 1);
  ~CovariateReader();
  CovariateReader(const CovariateReader&) = delete;
  CovariateReader& operator=(const CovariateReader&) = delete;
  CovariateReader(CovariateReader&&) noexcept;
  CovariateReader& operator=(CovariateReader&&) noexcept;

  /// Reads `window` into `values` (window.pixels() doubles, row-major), applying the band's
  /// scale and offset. Sets valid[i] = 0 where the pixel is nodata (nodata value compared in the
  /// band's own data type, NaN nodata, or a mask band that says so) or not finite; leaves valid[i]
  /// untouched elsewhere, so masks of several covariates combine by calling read() on each.
  /// Pixels without a value hold NaN. Returns how many pixels of the window have no value in this
  /// band. Throws IoError naming the file and window when GDAL fails (e.g. a corrupt tile).
  std::int64_t read(const Window& window, double* values, std::uint8_t* valid);

  [[nodiscard]] const std::string& path() const;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

}  // namespace habcast
