#pragma once
// A GeoTIFF output written under a temporary name in its destination folder and renamed onto its
// final name only by commit(). If the object is destroyed without commit() (an error, an interrupt),
// the temporary file is deleted, so no partial output ever carries a final name.
#include <cstdint>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "raster/raster_grid.hpp"
#include "raster/window.hpp"

namespace habcast {

enum class OutputType { float32, uint8 };

struct ColourEntry {
  int value = 0;
  std::uint8_t r = 0, g = 0, b = 0;
  std::uint8_t a = 255;  ///< GeoTIFF palettes hold no alpha: GDAL reads every entry back as 255
  std::string name;  ///< category name for this value (GDAL category names), may be empty
};

struct OutputBandInfo {
  std::string description;  ///< GDAL band description, e.g. "suitability (probability of presence)"
  std::string units;        ///< GDAL unit type, may be empty
};

/// A raster attribute table for band 1: an integer "value" column, then text columns (the first
/// is the class name GIS software shows). GeoTIFF keeps it in the .aux.xml sidecar.
struct AttributeTable {
  std::vector<std::string> columns;  ///< names of the text columns
  std::vector<std::pair<int, std::vector<std::string>>> rows;  ///< value -> one text per column
};

struct OutputSpec {
  std::string final_path;
  OutputType type = OutputType::float32;
  std::vector<OutputBandInfo> bands;  ///< one entry per band
  double nodata = -9999.0;
  std::vector<ColourEntry> colours;   ///< colour table + category names (band 1), uint8 only
  AttributeTable attributes;          ///< raster attribute table of band 1 (none when empty)
  std::vector<std::string> creation_options;  ///< "KEY=VALUE", applied over habcast's defaults
  std::vector<std::pair<std::string, std::string>> metadata;  ///< dataset metadata items
};

class OutputRaster {
 public:
  /// Creates the temporary file next to spec.final_path on `grid` (size, geotransform, CRS).
  /// Defaults: TILED=YES, BLOCKXSIZE=BLOCKYSIZE=256, COMPRESS=DEFLATE, PREDICTOR=3 for float32 and
  /// 2 for uint8, BIGTIFF=IF_SAFER, NUM_THREADS=ALL_CPUS (predict puts its
  /// --threads there); spec.creation_options override them.
  /// Throws IoError naming the path when creation fails, UsageError for a malformed option.
  OutputRaster(const OutputSpec& spec, const RasterGrid& grid);
  ~OutputRaster();
  OutputRaster(const OutputRaster&) = delete;
  OutputRaster& operator=(const OutputRaster&) = delete;

  void write(int band, const Window& window, const float* values);
  void write(int band, const Window& window, const std::uint8_t* values);

  /// Hands GDAL every block whose last pixel lies in `window` (so complete, when windows are
  /// written in row-major order) to compress and write now, in block order. Without this GDAL
  /// writes dirty blocks when its cache evicts them, an order that depends on the other threads'
  /// reads, and identical runs would give files with the same pixels but different bytes.
  void flush_completed_blocks(const Window& window);

  /// Adds a dataset metadata item once the run knows it (e.g. counts); call before close().
  /// Throws IoError naming the file when GDAL refuses it.
  void add_metadata(const std::string& key, const std::string& value);

  /// Builds internal overviews (AVERAGE for float32, NEAREST for uint8) at factors 2,4,8,...
  /// while the smaller side stays >= 256 pixels.
  void build_overviews();

  /// Flushes and closes the dataset, checking GDALClose()'s result (write errors surface there).
  /// After close() the file is complete but still under its temporary name.
  void close();
  /// Renames the temporary file onto final_path (atomic within a filesystem), calling close()
  /// first if needed. GDAL's .aux.xml sidecar (category names) follows it; a sidecar left beside
  /// final_path by an earlier run is removed.
  void commit();

  /// For outputs committed as a set (pipeline/output_set.hpp): closes the file (checked, as
  /// commit() does) and hands its temporary file, and any sidecar beside it, to the caller, who
  /// renames or deletes it; this object no longer deletes it. Returns the temporary path.
  std::string hand_over();

  [[nodiscard]] const std::string& temporary_path() const;
  [[nodiscard]] const std::string& final_path() const;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

/// Checks the user's GeoTIFF creation options before any work, against GDAL's own list for the
/// GeoTIFF driver (unknown key, value not among the allowed ones, not a whole number) and
/// libtiff's rules that GDAL's list does not state (tile edges multiples of 16; no 8-bit-only
/// compression for Float32 outputs). Throws UsageError naming the option.
void check_creation_options(const std::vector<std::string>& user_options);

/// Temporary name used for `final_path`: ".<name>.<pid>.partial" in the same folder.
std::string temporary_path_for(const std::string& final_path);

/// What a failed write into `folder` says about its storage, in the user's words ("no space left
/// on ...", a quota, a file-size limit), from `error_number` (errno after the failure) or the
/// folder's free space; empty when neither points at the storage.
std::string storage_problem(const std::string& folder, int error_number);

/// GDAL's .aux.xml sidecar of a raster file (category names, attribute table).
std::string sidecar_of(const std::string& path);

/// After a raster was renamed from `temporary_path` to `final_path`: GDAL's .aux.xml sidecar
/// (category names, attribute table) follows it, and a sidecar an earlier run left beside
/// final_path goes when there is no new one. Throws IoError naming the sidecar.
void move_sidecar(const std::string& temporary_path, const std::string& final_path);

/// Deletes leftover temporary files (".NAME.PID.partial" and what GDAL put beside them) of
/// `final_names` in `folder`, whatever their pid. Call it only while holding the folder's lock
/// (pipeline/folder_lock.hpp): then no live run writes there. Returns how many were removed.
int remove_stale_partials(const std::string& folder, const std::vector<std::string>& final_names);

}  // namespace habcast
