#pragma once
// A covariate brought onto a target grid it is not on (another CRS, resolution, origin or extent)
// by GDAL's warper, one processing window at a time: no full-size intermediate is ever written,
// and memory is that of the window plus its source footprint.
#include <memory>
#include <string>

#include "core/model/resampling.hpp"
#include "raster/covariate_source.hpp"

namespace habcast {

class WarpedCovariateSource final : public CovariateSource {
 public:
  /// Opens `path` and prepares GDAL's warper from its grid to `target` with `method`.
  /// `error_threshold` is the largest error, in source pixels, GDAL's approximate transformer may
  /// make (GDAL's own default is 0.125; 0 transforms every pixel exactly). Throws InputError
  /// naming the file when it cannot be opened, lacks the band, holds complex numbers, or GDAL
  /// cannot transform between the two grids.
  /// `pixel_ratio` (target pixel edge / source pixel edge) bounds memory: a window is warped
  /// in pieces whose source footprint stays under about kSourcePiece x kSourcePiece pixels.
  WarpedCovariateSource(const std::string& path, int band, const RasterGrid& target, Resampling method,
                        double error_threshold, double pixel_ratio = 1.0);

  /// Edge, in source pixels, of the largest source footprint warped at once (8 MiB of doubles).
  static constexpr int kSourcePiece = 1024;
  ~WarpedCovariateSource() override;

  [[nodiscard]] const RasterGrid& grid() const override;
  std::int64_t read(const Window& window, double* values, std::uint8_t* valid) override;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

}  // namespace habcast
