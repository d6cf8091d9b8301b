#include "raster/output_raster.hpp"

#include <sys/statvfs.h>

#include <cerrno>

#include <cpl_conv.h>
#include <cpl_error.h>
#include <cpl_string.h>
#include <gdal_rat.h>
#include <ogr_spatialref.h>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <optional>
#include <sstream>
#include <stdexcept>

#include "core/base/error.hpp"
#include "core/base/number_text.hpp"
#include "raster/creation_options.hpp"
#include "raster/gdal_handles.hpp"
#include "raster/gdal_session.hpp"

namespace habcast {
namespace {

namespace fs = std::filesystem;

void CPL_STDCALL collect_messages(CPLErr /*error_class*/, CPLErrorNum /*number*/, const char* message) {
  static_cast<std::vector<std::string>*>(CPLGetErrorHandlerUserData())->push_back(message != nullptr ? message : "");
}

/// GDAL only warns about options its driver does not know or values it cannot use, then carries
/// on with something else; a user who asked for an option must hear that it was not applied.
void validate_with_driver(GDALDriver& driver, const CPLStringList& options, const std::string& output_path) {
  std::vector<std::string> messages;
  CPLPushErrorHandlerEx(collect_messages, &messages);
  const int valid = GDALValidateCreationOptions(GDALDriver::ToHandle(&driver), options.List());
  CPLPopErrorHandler();
  if (valid != 0) return;
  std::string reasons;
  for (auto message : messages) {
    while (!message.empty() && message.back() == '.') message.pop_back();
    reasons += (reasons.empty() ? "" : "; ") + message;
  }
  throw UsageError(located(output_path, 0,
                           "GDAL's GeoTIFF driver does not accept the creation options (" + reasons +
                               "). Choose options from the GTiff creation options in GDAL's documentation."));
}

void validate_nodata(const OutputSpec& spec) {
  const double nodata = spec.nodata;
  if (spec.type == OutputType::uint8 && !(nodata >= 0.0 && nodata <= 255.0 && std::floor(nodata) == nodata)) {
    throw UsageError(located(spec.final_path, 0,
                             "the nodata value " + significant(nodata, 15) +
                                 " cannot be stored in this 8-bit output. Choose a whole number "
                                 "from 0 to 255."));
  }
  if (spec.type == OutputType::float32 && !value_fits(GDT_Float32, nodata)) {
    throw UsageError(located(spec.final_path, 0,
                             "the nodata value " + significant(nodata, 15) +
                                 " cannot be stored in this 32-bit float output. Choose a value "
                                 "within +-3.4e38, or nan."));
  }
}

void validate_spec(const OutputSpec& spec) {
  if (spec.bands.empty()) throw std::invalid_argument("OutputSpec for " + spec.final_path + " has no bands");
  if (!spec.colours.empty() && spec.type != OutputType::uint8) {
    throw std::invalid_argument("OutputSpec for " + spec.final_path + ": colours need a uint8 output");
  }
  for (const auto& colour : spec.colours) {
    if (colour.value < 0 || colour.value > 255) {
      throw std::invalid_argument("OutputSpec for " + spec.final_path + ": colour value " +
                                  std::to_string(colour.value) + " is outside 0..255");
    }
  }
  for (const auto& [key, value] : spec.metadata) {
    if (key.empty() || key.find('=') != std::string::npos) {
      throw std::invalid_argument("OutputSpec for " + spec.final_path + ": bad metadata key \"" + key + "\"");
    }
  }
  validate_nodata(spec);
}

void check_folder(const std::string& final_path) {
  const fs::path folder = fs::path(final_path).parent_path();
  std::error_code error;
  if (!folder.empty() && !fs::is_directory(folder, error)) {
    throw IoError(located(final_path, 0,
                          "cannot be written: the folder " + folder.string() +
                              " does not exist. Create it first or choose another output path."));
  }
}

void apply_colours(GDALRasterBand& band, const std::vector<ColourEntry>& colours) {
  GDALColorTable table(GPI_RGB);
  int highest = -1;
  for (const auto& colour : colours) {
    const GDALColorEntry entry{colour.r, colour.g, colour.b, colour.a};
    table.SetColorEntry(colour.value, &entry);
    highest = std::max(highest, colour.value);
  }
  // GDAL's category names are a list indexed by pixel value, so values without a name get "".
  std::vector<std::string> names(static_cast<std::size_t>(highest + 1));
  for (const auto& colour : colours) names[static_cast<std::size_t>(colour.value)] = colour.name;
  CPLStringList name_list;
  for (const auto& name : names) name_list.AddString(name.c_str());
  band.SetColorTable(&table);
  if (std::any_of(names.begin(), names.end(), [](const auto& name) { return !name.empty(); })) {
    band.SetCategoryNames(name_list.List());
  }
}

void apply_attributes(GDALRasterBand& band, const AttributeTable& attributes) {
  GDALDefaultRasterAttributeTable table;
  table.CreateColumn("value", GFT_Integer, GFU_MinMax);
  for (std::size_t c = 0; c < attributes.columns.size(); ++c)
    table.CreateColumn(attributes.columns[c].c_str(), GFT_String, c == 0 ? GFU_Name : GFU_Generic);
  table.SetRowCount(static_cast<int>(attributes.rows.size()));
  for (std::size_t r = 0; r < attributes.rows.size(); ++r) {
    const auto& [value, texts] = attributes.rows[r];
    table.SetValue(static_cast<int>(r), 0, value);
    for (std::size_t c = 0; c < texts.size() && c < attributes.columns.size(); ++c)
      table.SetValue(static_cast<int>(r), static_cast<int>(c) + 1, texts[c].c_str());
  }
  band.SetDefaultRAT(&table);
}

/// Sets one config option for this thread and restores the previous value when it goes away.
class ThreadConfig {
 public:
  ThreadConfig(const char* key, const std::string& value) : key_(key) {
    if (const char* old = CPLGetThreadLocalConfigOption(key, nullptr)) previous_ = old;
    CPLSetThreadLocalConfigOption(key, value.empty() ? nullptr : value.c_str());
  }
  ~ThreadConfig() { CPLSetThreadLocalConfigOption(key_, previous_ ? previous_->c_str() : nullptr); }
  ThreadConfig(const ThreadConfig&) = delete;
  ThreadConfig& operator=(const ThreadConfig&) = delete;

 private:
  const char* key_;
  std::optional<std::string> previous_;
};

}  // namespace

struct OutputRaster::Impl {
  OutputSpec spec;
  std::vector<CreationOption> options;
  std::string temporary_path;
  DatasetPtr dataset;
  bool committed = false;
  std::string close_error;  ///< set when close() failed: the file must then never be committed

  Impl() = default;
  ~Impl();
  Impl(const Impl&) = delete;
  Impl& operator=(const Impl&) = delete;

  [[nodiscard]] std::string describe() const { return spec.final_path + " (temporary file " + temporary_path + ")"; }
  /// Why a write failed, in the user's terms: a full device or quota or file-size limit when
  /// the error number or the free space says so (GDAL's own words, e.g. libtiff's "Error
  /// fetching directory count", do not), else GDAL's reason.
  [[nodiscard]] std::string write_failure_reason(int error_number) const {
    const std::string gdal = gdal_reason();
    const fs::path folder = fs::path(spec.final_path).parent_path();
    const std::string storage = storage_problem(folder.empty() ? "." : folder.string(), error_number);
    return storage.empty() ? "(" + gdal + "). Check free disk space and permissions, then run again"
                           : storage + " (" + gdal + ")";
  }
  void create(const RasterGrid& grid);
  void georeference(const RasterGrid& grid);
  void describe_bands();
  template <typename T>
  void write(int band, const Window& window, const T* values, GDALDataType type);
  void flush_completed_blocks(const Window& window);
};

void OutputRaster::Impl::create(const RasterGrid& grid) {
  GDALDriver* driver = GetGDALDriverManager()->GetDriverByName("GTiff");
  if (driver == nullptr) throw IoError("GDAL was built without its GeoTIFF driver; install a full GDAL.");
  CPLStringList option_list;
  for (const auto& [key, value] : options) option_list.SetNameValue(key.c_str(), value.c_str());
  validate_with_driver(*driver, option_list, spec.final_path);
  take_gdal_error();
  const GDALDataType type = spec.type == OutputType::float32 ? GDT_Float32 : GDT_Byte;
  dataset.reset(driver->Create(temporary_path.c_str(), grid.width, grid.height, static_cast<int>(spec.bands.size()),
                               type, option_list.List()));
  if (!dataset) {
    throw IoError(located(spec.final_path, 0,
                          "cannot create the temporary file " + temporary_path + " (" + gdal_reason() +
                              "). Check that the folder is writable and has free space."));
  }
}

void OutputRaster::Impl::georeference(const RasterGrid& grid) {
  if (grid.has_geotransform) {
    std::array<double, 6> transform = grid.geotransform;
    if (dataset->SetGeoTransform(transform.data()) != CE_None) {
      throw IoError(located(temporary_path, 0, "cannot store the geotransform (" + gdal_reason() + ")."));
    }
  }
  if (!grid.crs_wkt.empty()) {
    OGRSpatialReference srs;
    if (srs.importFromWkt(grid.crs_wkt.c_str()) != OGRERR_NONE) {
      throw std::invalid_argument("OutputRaster for " + spec.final_path + ": grid CRS is not valid WKT");
    }
    // Datasets hand out easting/northing order whatever the CRS says, as GDAL's own readers do.
    srs.SetAxisMappingStrategy(OAMS_TRADITIONAL_GIS_ORDER);
    if (dataset->SetSpatialRef(&srs) != CE_None) {
      throw IoError(located(temporary_path, 0, "cannot store the CRS (" + gdal_reason() + ")."));
    }
  }
}

void OutputRaster::Impl::describe_bands() {
  // Stored as float so that a reader comparing in the band's type finds exactly this value.
  const double nodata =
      spec.type == OutputType::float32 ? static_cast<double>(static_cast<float>(spec.nodata)) : spec.nodata;
  for (std::size_t i = 0; i < spec.bands.size(); ++i) {
    GDALRasterBand& band = *dataset->GetRasterBand(static_cast<int>(i) + 1);
    band.SetNoDataValue(nodata);
    band.SetDescription(spec.bands[i].description.c_str());
    if (!spec.bands[i].units.empty()) band.SetUnitType(spec.bands[i].units.c_str());
  }
  for (const auto& [key, value] : spec.metadata) dataset->SetMetadataItem(key.c_str(), value.c_str());
  if (!spec.colours.empty()) apply_colours(*dataset->GetRasterBand(1), spec.colours);
  if (!spec.attributes.rows.empty()) apply_attributes(*dataset->GetRasterBand(1), spec.attributes);
  if (const std::string reason = take_gdal_error(); !reason.empty()) {
    throw IoError(located(temporary_path, 0, "cannot store band information (" + reason + ")."));
  }
}

template <typename T>
void OutputRaster::Impl::write(int band, const Window& window, const T* values, GDALDataType type) {
  if (!dataset) throw std::logic_error("OutputRaster::write after close() for " + spec.final_path);
  if ((type == GDT_Float32) != (spec.type == OutputType::float32)) {
    throw std::logic_error("OutputRaster::write with the wrong pixel type for " + spec.final_path);
  }
  if (band < 1 || band > dataset->GetRasterCount() || window.x < 0 || window.y < 0 || window.width <= 0 ||
      window.height <= 0 || window.width > dataset->GetRasterXSize() - window.x ||
      window.height > dataset->GetRasterYSize() - window.y) {
    throw std::out_of_range("OutputRaster::write: band " + std::to_string(band) + ", " + window_text(window) +
                            " is outside " + spec.final_path);
  }
  take_gdal_error();
  errno = 0;
  // RasterIO takes a non-const buffer for both directions; GF_Write only reads from it.
  const CPLErr result =
      dataset->GetRasterBand(band)->RasterIO(GF_Write, window.x, window.y, window.width, window.height,
                                             const_cast<T*>(values), window.width, window.height, type, 0, 0, nullptr);
  if (result != CE_None) {
    throw IoError("writing band " + std::to_string(band) + ", " + window_text(window) + ", of " + describe() +
                  " failed: " + write_failure_reason(errno));
  }
}

void OutputRaster::Impl::flush_completed_blocks(const Window& window) {
  if (!dataset) throw std::logic_error("OutputRaster::flush_completed_blocks after close() for " + spec.final_path);
  int block_width = 0, block_height = 0;
  dataset->GetRasterBand(1)->GetBlockSize(&block_width, &block_height);
  const int width = dataset->GetRasterXSize(), height = dataset->GetRasterYSize();
  // Block b's last row/column, clipped to the raster; the block is complete once the window that
  // holds its bottom-right pixel is written (windows arrive in row-major order).
  const auto last_row = [&](int by) { return std::min((by + 1) * block_height, height) - 1; };
  const auto last_col = [&](int bx) { return std::min((bx + 1) * block_width, width) - 1; };
  take_gdal_error();
  for (int by = window.y / block_height; by <= (window.y + window.height - 1) / block_height; ++by) {
    if (last_row(by) >= window.y + window.height) continue;
    for (int bx = window.x / block_width; bx <= (window.x + window.width - 1) / block_width; ++bx) {
      if (last_col(bx) >= window.x + window.width) continue;
      // Band 1 first: for pixel-interleaved files its write covers every band's part of the block.
      // Written, not dropped: the clean block stays in GDAL's cache, whose eviction then recycles
      // its memory for a new block (dropping it would free and re-allocate 256 KiB per block).
      for (int band = 1; band <= dataset->GetRasterCount(); ++band) {
        GDALRasterBlock* block = dataset->GetRasterBand(band)->TryGetLockedBlockRef(bx, by);
        if (block == nullptr) continue;
        errno = 0;
        const CPLErr written = block->GetDirty() ? block->Write() : CE_None;
        block->DropLock();
        if (written != CE_None) {
          throw IoError("writing block " + std::to_string(bx) + "," + std::to_string(by) + " of band " +
                        std::to_string(band) + " of " + describe() + " failed: " + write_failure_reason(errno));
        }
      }
    }
  }
}

OutputRaster::OutputRaster(const OutputSpec& spec, const RasterGrid& grid) : impl_(std::make_unique<Impl>()) {
  ensure_gdal();
  validate_spec(spec);
  impl_->spec = spec;
  impl_->options = merged_creation_options(spec.type, spec.creation_options, spec.final_path);
  check_folder(spec.final_path);
  impl_->temporary_path = temporary_path_for(spec.final_path);  // from here on, Impl cleans up
  impl_->create(grid);
  impl_->georeference(grid);
  impl_->describe_bands();
}

// The clean-up lives in Impl rather than in ~OutputRaster so that it also runs when the
// constructor fails after the file was created (e.g. the CRS cannot be stored).
OutputRaster::Impl::~Impl() {
  if (committed || temporary_path.empty()) return;
  if (dataset) {
    // Nothing written so far is wanted: skip flushing it and let GDAL delete the file.
    dataset->MarkSuppressOnClose();
    dataset.reset();
    take_gdal_error();
  }
  std::error_code ignored;
  fs::remove(temporary_path, ignored);
  fs::remove(sidecar_of(temporary_path), ignored);
}

OutputRaster::~OutputRaster() = default;

void OutputRaster::write(int band, const Window& window, const float* values) {
  impl_->write(band, window, values, GDT_Float32);
}

void OutputRaster::write(int band, const Window& window, const std::uint8_t* values) {
  impl_->write(band, window, values, GDT_Byte);
}

void OutputRaster::flush_completed_blocks(const Window& window) { impl_->flush_completed_blocks(window); }

void OutputRaster::add_metadata(const std::string& key, const std::string& value) {
  if (!impl_->dataset) throw std::logic_error("OutputRaster::add_metadata after close() for " + impl_->spec.final_path);
  take_gdal_error();
  if (impl_->dataset->SetMetadataItem(key.c_str(), value.c_str()) != CE_None)
    throw IoError(located(impl_->temporary_path, 0, "cannot store metadata item " + key + " (" + gdal_reason() + ")."));
}

void OutputRaster::build_overviews() {
  Impl& self = *impl_;
  if (!self.dataset) throw std::logic_error("OutputRaster::build_overviews after close() for " + self.spec.final_path);
  const int smaller_side = std::min(self.dataset->GetRasterXSize(), self.dataset->GetRasterYSize());
  std::vector<int> factors;
  for (int factor = 2; smaller_side / factor >= 256; factor *= 2) factors.push_back(factor);
  if (factors.empty()) return;
  // Overviews are compressed like the full-resolution image, so the file stays uniformly small.
  const ThreadConfig compress("COMPRESS_OVERVIEW", option_value(self.options, "COMPRESS"));
  const ThreadConfig predictor("PREDICTOR_OVERVIEW", option_value(self.options, "PREDICTOR"));
  const char* resampling = self.spec.type == OutputType::float32 ? "AVERAGE" : "NEAREST";
  take_gdal_error();
  errno = 0;
  if (self.dataset->BuildOverviews(resampling, static_cast<int>(factors.size()), factors.data(), 0, nullptr, nullptr,
                                   nullptr) != CE_None) {
    throw IoError("building overviews of " + self.describe() + " failed: " + self.write_failure_reason(errno));
  }
}

void OutputRaster::close() {
  Impl& self = *impl_;
  if (!self.dataset) return;
  take_gdal_error();
  CPLErrorReset();
  // GDALClose returns nothing in GDAL 3.6; a failed flush of the last blocks or of the TIFF
  // directory (disk full, quota) is only visible as the thread's last error.
  errno = 0;
  GDALClose(GDALDataset::ToHandle(self.dataset.release()));
  const int error_number = errno;
  const CPLErr last = CPLGetLastErrorType();
  if (last == CE_Failure || last == CE_Fatal) {
    self.close_error = "finishing " + self.describe() + " failed: " + self.write_failure_reason(error_number);
    throw IoError(self.close_error);
  }
}

void OutputRaster::commit() {
  Impl& self = *impl_;
  if (self.committed) return;
  close();
  if (!self.close_error.empty()) throw IoError(self.close_error);  // an incomplete file keeps its temporary name
  std::error_code error;
  fs::rename(self.temporary_path, self.spec.final_path, error);
  if (error) {
    throw IoError(located(self.spec.final_path, 0,
                          "cannot replace it with the finished file " + self.temporary_path + " (" + error.message() +
                              "). Check permissions on the folder and whether another "
                              "program holds the file open."));
  }
  self.committed = true;
  move_sidecar(self.temporary_path, self.spec.final_path);
}

std::string OutputRaster::hand_over() {
  Impl& self = *impl_;
  close();
  if (!self.close_error.empty()) throw IoError(self.close_error);
  self.committed = true;  // no longer ours to delete
  return self.temporary_path;
}

std::string storage_problem(const std::string& folder, int error_number) {
  struct statvfs info {};
  const bool known = statvfs(folder.empty() ? "." : folder.c_str(), &info) == 0;
  const unsigned long long free_bytes = known ? static_cast<unsigned long long>(info.f_bavail) * info.f_frsize : 0;
  if (error_number == ENOSPC || (known && free_bytes < (1ull << 20)))
    return "no space left on the device holding " + folder + " (" + std::to_string(free_bytes >> 10) +
           " KiB free); free some space or write elsewhere, then run again";
  if (error_number == EDQUOT) return "disk quota exceeded on " + folder + "; free some space or write elsewhere";
  if (error_number == EFBIG)
    return "the file would exceed the largest file allowed here (the process's file-size limit, ulimit -f, or the "
           "filesystem's); write elsewhere or raise the limit";
  return "";
}

std::string sidecar_of(const std::string& path) { return path + ".aux.xml"; }

void move_sidecar(const std::string& temporary_path, const std::string& final_path) {
  // The sidecar holds what GeoTIFF cannot (category names); one left by an earlier run would
  // override the new file's own information, so it goes when there is no new one.
  std::error_code error;
  const std::string sidecar = sidecar_of(temporary_path);
  if (fs::exists(sidecar, error)) {
    fs::rename(sidecar, sidecar_of(final_path), error);
  } else {
    fs::remove(sidecar_of(final_path), error);
  }
  if (error) {
    throw IoError(located(sidecar_of(final_path), 0,
                          "cannot be updated (" + error.message() + "). Category names of " + final_path +
                              " may be wrong; check permissions on the folder."));
  }
}

const std::string& OutputRaster::temporary_path() const { return impl_->temporary_path; }
const std::string& OutputRaster::final_path() const { return impl_->spec.final_path; }

}  // namespace habcast
