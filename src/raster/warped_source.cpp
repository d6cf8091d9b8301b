#include "raster/warped_source.hpp"

#include <cpl_string.h>
#include <gdal_alg.h>
#include <gdalwarper.h>

#include <array>
#include <cmath>
#include <limits>

#include "core/base/error.hpp"
#include "raster/gdal_handles.hpp"
#include "raster/gdal_session.hpp"

namespace habcast {

namespace {

GDALResampleAlg gdal_method(Resampling method) {
  switch (method) {
    case Resampling::nearest: return GRA_NearestNeighbour;
    case Resampling::bilinear: return GRA_Bilinear;
    case Resampling::cubic: return GRA_Cubic;
    case Resampling::average: return GRA_Average;
    case Resampling::mode: return GRA_Mode;
  }
  return GRA_NearestNeighbour;
}

struct TransformerFree {
  void operator()(void* transformer) const noexcept {
    if (transformer != nullptr) GDALDestroyTransformer(transformer);
  }
};
using TransformerPtr = std::unique_ptr<void, TransformerFree>;

struct WarpOptionsFree {
  void operator()(GDALWarpOptions* options) const noexcept { GDALDestroyWarpOptions(options); }
};

std::string window_text(const Window& window) {
  return "window at column " + std::to_string(window.x) + ", row " + std::to_string(window.y) + " (" +
         std::to_string(window.width) + " x " + std::to_string(window.height) + " pixels) of the target grid";
}

}  // namespace

struct WarpedCovariateSource::Impl {
  std::string path;
  int band_number = 1;
  RasterGrid target;
  DatasetPtr dataset;
  bool scaled = false;
  double scale = 1.0;
  double offset = 0.0;
  // Destroyed in reverse order: the operation refers to the options, the options to the
  // transformer and the dataset.
  TransformerPtr transformer;
  std::unique_ptr<GDALWarpOptions, WarpOptionsFree> options;
  std::unique_ptr<GDALWarpOperation> operation;
};

WarpedCovariateSource::WarpedCovariateSource(const std::string& path, int band, const RasterGrid& target,
                                             Resampling method, double error_threshold)
    : impl_(std::make_unique<Impl>()) {
  ensure_gdal();
  Impl& self = *impl_;
  self.path = path;
  self.band_number = band;
  self.target = target;
  self.dataset = open_input_raster(path);
  GDALRasterBand& source_band = input_band(*self.dataset, path, band);
  const GDALDataType type = source_band.GetRasterDataType();
  if (GDALDataTypeIsComplex(type) != 0)
    throw InputError(located(path, 0, "band " + std::to_string(band) + " holds complex numbers (" +
                                          GDALGetDataTypeName(type) + "); covariates must be real."));
  int has_scale = 0;
  int has_offset = 0;
  self.scale = source_band.GetScale(&has_scale);
  self.offset = source_band.GetOffset(&has_offset);
  self.scaled = (has_scale != 0 && self.scale != 1.0) || (has_offset != 0 && self.offset != 0.0);
  int has_nodata = 0;
  const double nodata = source_band.GetNoDataValue(&has_nodata);
  take_gdal_error();

  // The same transformer gdalwarp builds: source pixels -> source CRS -> target CRS -> target
  // pixels, made from the two datasets as gdalwarp makes it (the target a band-less in-memory
  // dataset carrying only the grid), then wrapped in GDAL's approximation with gdalwarp's -et.
  GDALDriver* memory = GetGDALDriverManager()->GetDriverByName("MEM");
  const DatasetPtr target_dataset(memory != nullptr ? memory->Create("", target.width, target.height, 0, GDT_Byte, nullptr)
                                                    : nullptr);
  if (!target_dataset) throw IoError("GDAL's MEM driver is missing: it is needed to describe the target grid");
  std::array<double, 6> target_transform = target.geotransform;
  target_dataset->SetGeoTransform(target_transform.data());
  if (!target.crs_wkt.empty()) {
    OGRSpatialReference target_srs;
    target_srs.importFromWkt(target.crs_wkt.c_str());
    target_dataset->SetSpatialRef(&target_srs);
  }
  TransformerPtr exact(GDALCreateGenImgProjTransformer2(GDALDataset::ToHandle(self.dataset.get()),
                                                        GDALDataset::ToHandle(target_dataset.get()), nullptr));
  if (!exact)
    throw InputError(located(path, 0, "GDAL cannot transform its grid onto the target grid (" + gdal_reason() +
                                          "). Check both CRSs, for example with gdalsrsinfo."));
  GDALTransformerFunc function = GDALGenImgProjTransform;
  if (error_threshold > 0.0) {
    self.transformer.reset(GDALCreateApproxTransformer(GDALGenImgProjTransform, exact.get(), error_threshold));
    GDALApproxTransformerOwnsSubtransformer(self.transformer.get(), TRUE);
    exact.release();
    function = GDALApproxTransform;
  } else {
    self.transformer = std::move(exact);
  }

  self.options.reset(GDALCreateWarpOptions());
  GDALWarpOptions& o = *self.options;
  o.hSrcDS = GDALDataset::ToHandle(self.dataset.get());
  o.hDstDS = nullptr;  // only WarpRegionToBuffer is used: the target grid exists in our windows only
  o.nBandCount = 1;
  o.panSrcBands = static_cast<int*>(CPLMalloc(sizeof(int)));
  o.panSrcBands[0] = band;
  o.panDstBands = static_cast<int*>(CPLMalloc(sizeof(int)));
  o.panDstBands[0] = 1;
  o.eResampleAlg = gdal_method(method);
  o.eWorkingDataType = GDT_Float64;  // no rounding of source values, whatever their type
  o.pfnTransformer = function;
  o.pTransformerArg = self.transformer.get();
  if (has_nodata != 0) {
    o.padfSrcNoDataReal = static_cast<double*>(CPLMalloc(sizeof(double)));
    o.padfSrcNoDataReal[0] = nodata;
  }
  // NaN marks target pixels the warper leaves without a value: the buffer starts as NaN, and
  // pixels with no valid source are not written.
  o.padfDstNoDataReal = static_cast<double*>(CPLMalloc(sizeof(double)));
  o.padfDstNoDataReal[0] = std::numeric_limits<double>::quiet_NaN();
  // A window entirely outside the source is a window of no data, not a failure.
  // (GDAL accepts that only with INIT_DEST, which WarpRegionToBuffer itself ignores: read() fills
  // the buffer with NaN.)
  o.papszWarpOptions = CSLSetNameValue(o.papszWarpOptions, "INIT_DEST", "NO_DATA");
  o.papszWarpOptions = CSLSetNameValue(o.papszWarpOptions, "ERROR_OUT_IF_EMPTY_SOURCE_WINDOW", "FALSE");
  self.operation = std::make_unique<GDALWarpOperation>();
  if (self.operation->Initialize(self.options.get()) != CE_None)
    throw InputError(located(path, 0, "GDAL's warper cannot be set up for it (" + gdal_reason() + ")."));
}

WarpedCovariateSource::~WarpedCovariateSource() = default;

const RasterGrid& WarpedCovariateSource::grid() const { return impl_->target; }

std::int64_t WarpedCovariateSource::read(const Window& window, double* values, std::uint8_t* valid) {
  Impl& self = *impl_;
  const auto count = static_cast<std::size_t>(window.pixels());
  std::fill(values, values + count, std::numeric_limits<double>::quiet_NaN());
  take_gdal_error();
  if (self.operation->WarpRegionToBuffer(window.x, window.y, window.width, window.height, values, GDT_Float64) !=
      CE_None) {
    throw IoError(located(self.path, 0,
                          "warping band " + std::to_string(self.band_number) + " onto the " + window_text(window) +
                              " failed (" + gdal_reason() +
                              "). The file may be truncated or corrupt: check it with gdalinfo -checksum."));
  }
  take_gdal_error();  // warnings of the transformer at points outside its domain are not failures
  std::int64_t missing = 0;
  for (std::size_t i = 0; i < count; ++i) {
    bool ok = std::isfinite(values[i]);
    if (ok && self.scaled) {
      values[i] = values[i] * self.scale + self.offset;
      ok = std::isfinite(values[i]);
    }
    if (!ok) {
      valid[i] = 0;
      values[i] = std::numeric_limits<double>::quiet_NaN();
      ++missing;
    }
  }
  return missing;
}

}  // namespace habcast
