#pragma once
// Internal to the raster layer: owners for GDAL handles and the shared way of opening an input.
#include <gdal_priv.h>
#include <ogr_spatialref.h>

#include <memory>
#include <string>
#include <vector>

namespace habcast {

struct DatasetCloser {
  void operator()(GDALDataset* dataset) const noexcept { GDALClose(GDALDataset::ToHandle(dataset)); }
};
/// Owns an open dataset; closing ignores errors, which is right for inputs only. Outputs close
/// explicitly and check the result (see OutputRaster::close).
using DatasetPtr = std::unique_ptr<GDALDataset, DatasetCloser>;

/// Owns a coordinate transformation made by OGRCreateCoordinateTransformation.
struct TransformDeleter {
  void operator()(OGRCoordinateTransformation* t) const noexcept { OGRCoordinateTransformation::DestroyCT(t); }
};

/// Frees text that GDAL/OGR allocated for the caller (exportToWkt and the like).
struct CplFree {
  void operator()(char* text) const noexcept { CPLFree(text); }
};

/// Opens `path` read-only as a raster. Throws InputError naming the file with GDAL's reason.
DatasetPtr open_input_raster(const std::string& path, const std::vector<std::string>& open_options = {});

/// Opens `path` read-only as a vector source. Throws InputError naming the file with GDAL's reason
/// and `what_to_give` (e.g. "give the units as a GeoPackage, ...").
GDALDatasetUniquePtr open_input_vector(const std::string& path, const std::string& what_to_give);

/// Throws InputError naming the file when `band` is not one of its bands.
GDALRasterBand& input_band(GDALDataset& dataset, const std::string& path, int band);

/// Whether `value` can be stored in a pixel of `type` (integers: within the type's range;
/// floats: NaN, infinities and finite values within the type's range). GDAL 3.6 has no public
/// equivalent.
bool value_fits(GDALDataType type, double value);

/// GDAL's last failure message on this thread, or a placeholder when GDAL said nothing; clears it.
std::string gdal_reason();

}  // namespace habcast
