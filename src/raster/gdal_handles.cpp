#include "raster/gdal_handles.hpp"

#include <cpl_string.h>

#include <cmath>
#include <cstdint>
#include <limits>

#include "core/base/error.hpp"
#include "raster/gdal_session.hpp"

namespace habcast {

std::string gdal_reason() {
  std::string reason = take_gdal_error();
  // Our messages put GDAL's words in parentheses inside a sentence, so its final full stop goes.
  while (!reason.empty() && (reason.back() == '.' || reason.back() == ' ' || reason.back() == '\n')) {
    reason.pop_back();
  }
  return reason.empty() ? std::string("GDAL gave no further detail") : reason;
}

namespace {

template <typename T>
bool within_limits(double value) {
  return value >= static_cast<double>(std::numeric_limits<T>::lowest()) &&
         value <= static_cast<double>(std::numeric_limits<T>::max());
}

}  // namespace

bool value_fits(GDALDataType type, double value) {
  switch (type) {
    case GDT_Byte:
      return within_limits<std::uint8_t>(value);
    case GDT_UInt16:
      return within_limits<std::uint16_t>(value);
    case GDT_Int16:
      return within_limits<std::int16_t>(value);
    case GDT_UInt32:
      return within_limits<std::uint32_t>(value);
    case GDT_Int32:
      return within_limits<std::int32_t>(value);
    case GDT_UInt64:
      return within_limits<std::uint64_t>(value);
    case GDT_Int64:
      return within_limits<std::int64_t>(value);
    case GDT_Float32:
      return !std::isfinite(value) || within_limits<float>(value);
    default:
      return true;
  }
}

GDALDatasetUniquePtr open_input_vector(const std::string& path, const std::string& what_to_give) {
  ensure_gdal();
  take_gdal_error();  // a message left by an earlier call must not be blamed on this file
  GDALDatasetUniquePtr ds(GDALDataset::Open(path.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY));
  if (!ds) throw InputError(path + ": cannot open as a vector data source (" + gdal_reason() + "); " + what_to_give);
  return ds;
}

DatasetPtr open_input_raster(const std::string& path, const std::vector<std::string>& open_options) {
  ensure_gdal();
  take_gdal_error();  // a message left by an earlier call must not be blamed on this file
  CPLStringList options;
  for (const auto& option : open_options) options.AddString(option.c_str());
  DatasetPtr dataset(GDALDataset::FromHandle(GDALOpenEx(
      path.c_str(), GDAL_OF_RASTER | GDAL_OF_READONLY | GDAL_OF_VERBOSE_ERROR, nullptr, options.List(), nullptr)));
  if (!dataset) {
    throw InputError(located(path, 0,
                             "cannot be opened as a raster (" + gdal_reason() +
                                 "). Check that the path is right and that the file is a GeoTIFF or "
                                 "another raster format GDAL reads (gdalinfo shows whether it does)."));
  }
  return dataset;
}

GDALRasterBand& input_band(GDALDataset& dataset, const std::string& path, int band) {
  const int count = dataset.GetRasterCount();
  if (count == 0) {
    throw InputError(located(path, 0, "has no raster bands. Give a raster with at least one band."));
  }
  if (band < 1 || band > count) {
    throw InputError(located(path, 0,
                             "has " + std::to_string(count) + (count == 1 ? " band" : " bands") + ", so band " +
                                 std::to_string(band) + " does not exist. Choose a band from 1 to " +
                                 std::to_string(count) + "."));
  }
  return *dataset.GetRasterBand(band);
}

}  // namespace habcast
