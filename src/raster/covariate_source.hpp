#pragma once
// Where a covariate's values for a window of the target grid come from: the raster itself when it
// is already on that grid (DirectCovariateSource, today's fast path), or GDAL's warper bringing it
// there window by window (WarpedCovariateSource, raster/warped_source.hpp). The prediction reads
// every covariate through this interface and never knows which one it has.
//
// A source owns GDAL handles, which are not thread-safe: give each worker thread its own sources
// (open_covariate_source in raster/alignment_plan.hpp makes them).
#include <cstdint>
#include <string>

#include "raster/covariate_reader.hpp"
#include "raster/raster_grid.hpp"
#include "raster/window.hpp"

namespace habcast {

class CovariateSource {
 public:
  virtual ~CovariateSource() = default;
  CovariateSource() = default;
  CovariateSource(const CovariateSource&) = delete;
  CovariateSource& operator=(const CovariateSource&) = delete;

  /// The grid the values are delivered on (the target grid).
  [[nodiscard]] virtual const RasterGrid& grid() const = 0;

  /// Reads `window` of the target grid into `values` (window.pixels() doubles, row-major). Sets
  /// valid[i] = 0 (and values[i] = NaN) where the covariate has no value, leaving valid[i]
  /// untouched elsewhere, so the masks of several covariates combine. Returns how many pixels of
  /// the window this source had no value for (outside its extent or nodata), for the report.
  /// Throws IoError naming the file and window when GDAL fails.
  virtual std::int64_t read(const Window& window, double* values, std::uint8_t* valid) = 0;
};

/// A raster already on the target grid: reads it as it is (CovariateReader: nodata in the band's
/// own type, mask bands, scale and offset).
class DirectCovariateSource final : public CovariateSource {
 public:
  DirectCovariateSource(const std::string& path, int band, const RasterGrid& grid, int decode_threads = 1);
  [[nodiscard]] const RasterGrid& grid() const override { return grid_; }
  std::int64_t read(const Window& window, double* values, std::uint8_t* valid) override;

 private:
  RasterGrid grid_;
  CovariateReader reader_;
};

}  // namespace habcast
