#include "raster/warped_source.hpp"

#include <cpl_string.h>
#include <gdal_alg.h>
#include <gdalwarper.h>

#include <algorithm>
#include <array>
#include <vector>
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
  int piece = 0;  ///< edge of the target pieces a window is warped in; 0: whole windows
  std::vector<double> scratch;

  void warp(const Window& window, double* values);
};

void WarpedCovariateSource::Impl::warp(const Window& window, double* values) {
  std::fill(values, values + window.pixels(), std::numeric_limits<double>::quiet_NaN());
  take_gdal_error();
  if (operation->WarpRegionToBuffer(window.x, window.y, window.width, window.height, values, GDT_Float64) != CE_None) {
    throw IoError(located(path, 0,
                          "warping band " + std::to_string(band_number) + " onto the " + window_text(window) + " of the target grid" +
                              " failed (" + gdal_reason() +
                              "). The file may be truncated or corrupt: check it with gdalinfo -checksum."));
  }
  take_gdal_error();  // warnings of the transformer at points outside its domain are not failures
}

WarpedCovariateSource::WarpedCovariateSource(const std::string& path, int band, const RasterGrid& target,
                                             Resampling method, double error_threshold, double pixel_ratio)
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
  // Much coarser targets read ratio^2 source pixels per target pixel: pieces of a fixed lattice on
  // the target grid keep each source read near kSourcePiece^2 pixels, whatever the window.
  if (pixel_ratio > 2.0) self.piece = std::max(1, static_cast<int>(kSourcePiece / pixel_ratio));
  self.operation = std::make_unique<GDALWarpOperation>();
  if (self.operation->Initialize(self.options.get()) != CE_None)
    throw InputError(located(path, 0, "GDAL's warper cannot be set up for it (" + gdal_reason() + ")."));
}

WarpedCovariateSource::~WarpedCovariateSource() = default;

const RasterGrid& WarpedCovariateSource::grid() const { return impl_->target; }

std::int64_t WarpedCovariateSource::read(const Window& window, double* values, std::uint8_t* valid) {
  Impl& self = *impl_;
  const auto count = static_cast<std::size_t>(window.pixels());
  const int piece = self.piece;
  if (piece == 0 || (window.width <= piece && window.height <= piece && window.x % piece == 0 && window.y % piece == 0)) {
    self.warp(window, values);
  } else {
    for (int y0 = window.y / piece * piece; y0 < window.y + window.height; y0 += piece) {
      for (int x0 = window.x / piece * piece; x0 < window.x + window.width; x0 += piece) {
        const int x1 = std::min({x0 + piece, window.x + window.width, self.target.width});
        const int y1 = std::min({y0 + piece, window.y + window.height, self.target.height});
        const Window part{std::max(x0, window.x), std::max(y0, window.y), x1 - std::max(x0, window.x),
                          y1 - std::max(y0, window.y)};
        self.scratch.resize(static_cast<std::size_t>(part.pixels()));
        self.warp(part, self.scratch.data());
        for (int r = 0; r < part.height; ++r)
          std::copy_n(self.scratch.data() + static_cast<std::ptrdiff_t>(r) * part.width, part.width,
                      values + static_cast<std::ptrdiff_t>(part.y - window.y + r) * window.width + (part.x - window.x));
      }
    }
  }
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
