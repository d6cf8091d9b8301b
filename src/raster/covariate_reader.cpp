#include "raster/covariate_reader.hpp"

#include <cmath>
#include <limits>
#include <stdexcept>
#include <vector>

#include "core/base/error.hpp"
#include "core/base/pixel_loops.hpp"
#include "raster/gdal_handles.hpp"
#include "raster/gdal_session.hpp"

namespace habcast {

// Named, not anonymous: CovariateReader::Impl holds one, and a member whose type has internal
// linkage is a hazard GCC warns about (-Wsubobject-linkage) when sources are built together.
namespace covariate_detail {
struct Nodata {
  bool exact = false;  ///< compare pixels with `value`; NaN nodata needs no test (see read())
  double value = 0.0;
};
}  // namespace covariate_detail

namespace {

using covariate_detail::Nodata;

/// The band's nodata value as it would be stored in the band's own data type, so that the
/// comparison with pixels (read as double, which holds every value of types up to 32 bits
/// exactly) says the same as GDAL would in that type.
Nodata nodata_of(GDALRasterBand& band) {
  const GDALDataType type = band.GetRasterDataType();
  int has_nodata = 0;
  double value = 0.0;
  // 64-bit integers are read as double like everything else, so values beyond 2^53 that round to
  // the same double as the nodata value would also count as nodata; covariates never get there.
  if (type == GDT_Int64) {
    value = static_cast<double>(band.GetNoDataValueAsInt64(&has_nodata));
  } else if (type == GDT_UInt64) {
    value = static_cast<double>(band.GetNoDataValueAsUInt64(&has_nodata));
  } else {
    value = band.GetNoDataValue(&has_nodata);
  }
  if (has_nodata == 0 || std::isnan(value)) return {};
  if (GDALDataTypeIsInteger(type) != 0) {
    value = std::round(value);
    if (!value_fits(type, value)) return {};  // no pixel can hold it
  } else if (type == GDT_Float32) {
    if (!value_fits(type, value)) return {};
    value = static_cast<double>(static_cast<float>(value));
  }
  return {true, value};
}

/// The mask band to read, or nullptr when nodata (handled by nodata_of) or nothing marks pixels.
GDALRasterBand* mask_to_honour(GDALRasterBand& band) {
  const int flags = band.GetMaskFlags();
  if ((flags & GMF_ALL_VALID) != 0 || flags == GMF_NODATA) return nullptr;
  return band.GetMaskBand();  // explicit mask, alpha band or a per-dataset nodata mask
}

}  // namespace

struct CovariateReader::Impl {
  std::string path;
  int band_number = 1;
  DatasetPtr dataset;
  GDALRasterBand* band = nullptr;
  covariate_detail::Nodata nodata;
  bool scaled = false;
  double scale = 1.0;
  double offset = 0.0;
  GDALRasterBand* mask = nullptr;
  std::vector<std::uint8_t> mask_values;

  void check_window(const Window& window) const;
  void read_into(GDALRasterBand& source, const Window& window, void* buffer, GDALDataType type, const char* what) const;
};

void CovariateReader::Impl::check_window(const Window& window) const {
  if (window.x < 0 || window.y < 0 || window.width <= 0 || window.height <= 0 ||
      window.width > dataset->GetRasterXSize() - window.x || window.height > dataset->GetRasterYSize() - window.y) {
    throw std::out_of_range(path + ": " + window_text(window) + " is outside the raster");
  }
}

void CovariateReader::Impl::read_into(GDALRasterBand& source, const Window& window, void* buffer, GDALDataType type,
                                      const char* what) const {
  take_gdal_error();
  const CPLErr result = source.RasterIO(GF_Read, window.x, window.y, window.width, window.height, buffer, window.width,
                                        window.height, type, 0, 0, nullptr);
  if (result != CE_None) {
    throw IoError(located(path, 0,
                          std::string("reading ") + what + " of band " + std::to_string(band_number) + ", " +
                              window_text(window) + ", failed (" + gdal_reason() +
                              "). The file may be truncated or corrupt: check it with gdalinfo -checksum "
                              "and re-create or copy it again."));
  }
}

CovariateReader::CovariateReader(const std::string& path, int band, int decode_threads)
    : impl_(std::make_unique<Impl>()) {
  impl_->path = path;
  impl_->band_number = band;
  std::vector<std::string> open_options;
  // Only drivers that decode blocks in parallel (GTiff) know this option; others ignore it.
  if (decode_threads > 1) open_options.push_back("NUM_THREADS=" + std::to_string(decode_threads));
  impl_->dataset = open_input_raster(path, open_options);
  impl_->band = &input_band(*impl_->dataset, path, band);
  const GDALDataType type = impl_->band->GetRasterDataType();
  if (GDALDataTypeIsComplex(type) != 0) {
    throw InputError(located(path, 0,
                             "band " + std::to_string(band) + " holds complex numbers (" + GDALGetDataTypeName(type) +
                                 "); covariates must be real. Convert it first, for example to its "
                                 "amplitude with gdal_calc.py."));
  }
  impl_->nodata = nodata_of(*impl_->band);
  int has_scale = 0;
  int has_offset = 0;
  impl_->scale = impl_->band->GetScale(&has_scale);
  impl_->offset = impl_->band->GetOffset(&has_offset);
  impl_->scaled = (has_scale != 0 && impl_->scale != 1.0) || (has_offset != 0 && impl_->offset != 0.0);
  impl_->mask = mask_to_honour(*impl_->band);
  take_gdal_error();  // querying absent nodata, scale or masks is not a failure
}

CovariateReader::~CovariateReader() = default;
CovariateReader::CovariateReader(CovariateReader&&) noexcept = default;
CovariateReader& CovariateReader::operator=(CovariateReader&&) noexcept = default;

namespace {

// The validity pass over a decoded window, right after GDAL wrote it, without branches so that it
// vectorises. A NaN nodata value needs no comparison of its own: non-finite pixels are never
// valid. (The flag is written as a byte of `was & ok`: a select or an &= on the byte, or a count
// kept in a double, keeps GCC 12 from vectorising the loop.)
HABCAST_PIXEL_LOOPS std::int64_t mark_missing(double* __restrict values, std::uint8_t* __restrict valid,
                                              std::size_t count, const Nodata& nodata) {
  const double nan = std::numeric_limits<double>::quiet_NaN();
  const double nodata_value = nodata.exact ? nodata.value : nan;  // NaN equals nothing
  std::int64_t missing = 0;
  for (std::size_t i = 0; i < count; ++i) {
    const double raw = values[i];
    const bool ok = (std::fabs(raw) <= std::numeric_limits<double>::max()) & (raw != nodata_value);
    values[i] = ok ? raw : nan;
    const bool was = valid[i] != 0;
    valid[i] = static_cast<std::uint8_t>(was & ok);
    missing += !ok;
  }
  return missing;
}

}  // namespace

std::int64_t CovariateReader::read(const Window& window, double* values, std::uint8_t* valid) {
  Impl& self = *impl_;
  self.check_window(window);
  self.read_into(*self.band, window, values, GDT_Float64, "values");
  const auto count = static_cast<std::size_t>(window.pixels());
  if (self.mask == nullptr && !self.scaled) return mark_missing(values, valid, count, self.nodata);
  if (self.mask != nullptr) {
    self.mask_values.resize(count);
    self.read_into(*self.mask, window, self.mask_values.data(), GDT_Byte, "the mask");
  }
  std::int64_t missing = 0;
  for (std::size_t i = 0; i < count; ++i) {
    const double raw = values[i];
    bool ok = std::isfinite(raw) && !(self.nodata.exact && raw == self.nodata.value) &&
              (self.mask == nullptr || self.mask_values[i] != 0);
    if (ok && self.scaled) {
      values[i] = raw * self.scale + self.offset;
      ok = std::isfinite(values[i]);
    }
    if (!ok) {
      valid[i] = 0;
      // NaN keeps a nodata value from passing for data if a caller ignores the mask.
      values[i] = std::numeric_limits<double>::quiet_NaN();
      ++missing;
    }
  }
  return missing;
}

const std::string& CovariateReader::path() const { return impl_->path; }

}  // namespace habcast
