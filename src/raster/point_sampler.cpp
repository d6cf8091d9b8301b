#include "raster/point_sampler.hpp"

#include <gdal.h>
#include <gdal_priv.h>

#include <cmath>
#include <limits>

#include "core/base/error.hpp"
#include "raster/covariate_source.hpp"
#include "raster/gdal_handles.hpp"

namespace habcast {

void map_to_pixel(const RasterGrid& grid, double x, double y, double& column, double& row) {
  double gt[6];
  for (int i = 0; i < 6; ++i) gt[i] = grid.geotransform[static_cast<std::size_t>(i)];
  double inv[6];
  if (!GDALInvGeoTransform(gt, inv)) {
    column = row = std::numeric_limits<double>::quiet_NaN();
    return;
  }
  column = inv[0] + inv[1] * x + inv[2] * y;
  row = inv[3] + inv[4] * x + inv[5] * y;
}

namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

/// Value of one pixel, NaN when nodata.
double read_pixel_value(CovariateSource& reader, int column, int row) {
  double v = 0.0;
  std::uint8_t valid = 1;
  reader.read(Window{column, row, 1, 1}, &v, &valid);
  return valid ? v : kNaN;
}

/// Bilinear value between the four pixel centres around (column, row), or NaN when one of them
/// is nodata or off the grid.
double read_bilinear(CovariateSource& reader, const RasterGrid& grid, double column, double row) {
  const double px = column - 0.5;
  const double py = row - 0.5;
  const double x0 = std::floor(px);
  const double y0 = std::floor(py);
  if (x0 < 0.0 || y0 < 0.0 || x0 + 1.0 >= grid.width || y0 + 1.0 >= grid.height) return kNaN;
  double v[4];
  std::uint8_t valid[4] = {1, 1, 1, 1};
  reader.read(Window{static_cast<int>(x0), static_cast<int>(y0), 2, 2}, v, valid);
  if (!(valid[0] && valid[1] && valid[2] && valid[3])) return kNaN;
  const double fx = px - x0;
  const double fy = py - y0;
  return (v[0] * (1.0 - fx) + v[1] * fx) * (1.0 - fy) + (v[2] * (1.0 - fx) + v[3] * fx) * fy;
}

}  // namespace

SampledPoints sample_points(const RasterGrid& grid, const std::vector<SamplingInput>& inputs, const std::vector<double>& x,
                            const std::vector<double>& y, const std::vector<std::uint8_t>& transformed, bool bilinear) {
  std::vector<std::unique_ptr<CovariateSource>> readers;
  for (const SamplingInput& in : inputs) readers.push_back(std::make_unique<DirectCovariateSource>(in.path, in.band, grid));
  return sample_points(grid, inputs, readers, x, y, transformed, bilinear);
}

SampledPoints sample_points(const RasterGrid& grid, const std::vector<SamplingInput>& inputs,
                            std::vector<std::unique_ptr<CovariateSource>>& readers, const std::vector<double>& x,
                            const std::vector<double>& y, const std::vector<std::uint8_t>& transformed, bool bilinear) {
  const std::size_t n = x.size();
  SampledPoints s;
  s.raw = Eigen::ArrayXXd::Constant(static_cast<Eigen::Index>(n), static_cast<Eigen::Index>(inputs.size()), kNaN);
  s.status.assign(n, PointStatus::ok);
  s.nodata_input.assign(n, -1);
  s.pixel.assign(n, -1);
  for (std::size_t i = 0; i < n; ++i) {
    if (!transformed[i]) {
      s.status[i] = PointStatus::not_transformed;
      continue;
    }
    double column = 0.0, row = 0.0;
    map_to_pixel(grid, x[i], y[i], column, row);
    if (!(column >= 0.0 && row >= 0.0 && column < grid.width && row < grid.height)) {
      s.status[i] = PointStatus::outside;
      continue;
    }
    const int c = static_cast<int>(column);
    const int r = static_cast<int>(row);
    s.pixel[i] = static_cast<std::int64_t>(r) * grid.width + c;
    bool fell_back = false;
    for (std::size_t k = 0; k < inputs.size(); ++k) {
      double v = kNaN;
      if (bilinear && !inputs[k].categorical) {
        v = read_bilinear(*readers[k], grid, column, row);
        if (std::isnan(v)) fell_back = true;
      }
      if (std::isnan(v)) v = read_pixel_value(*readers[k], c, r);
      if (std::isnan(v)) {
        s.status[i] = PointStatus::nodata;
        s.nodata_input[i] = static_cast<int>(k);
        break;
      }
      s.raw(static_cast<Eigen::Index>(i), static_cast<Eigen::Index>(k)) = v;
    }
    if (s.status[i] != PointStatus::ok) s.raw.row(static_cast<Eigen::Index>(i)).setConstant(kNaN);
    else if (fell_back) ++s.bilinear_fallbacks;
  }
  return s;
}

std::map<std::int64_t, std::string> category_names(const std::string& path, int band) {
  const DatasetPtr ds = open_input_raster(path);
  GDALRasterBand& b = input_band(*ds, path, band);
  std::map<std::int64_t, std::string> names;
  // GDAL 3.6's GeoTIFF driver loads the .aux.xml sidecar (where category names usually live) only
  // when metadata is first asked for; without this call GetCategoryNames() sees nothing.
  (void)b.GetMetadata();
  if (char** list = b.GetCategoryNames())
    for (std::int64_t code = 0; list[code] != nullptr; ++code)
      if (list[code][0] != '\0') names[code] = list[code];
  return names;
}

}  // namespace habcast
