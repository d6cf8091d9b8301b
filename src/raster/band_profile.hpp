#pragma once
// What a raster band says about its own values before any of them is used as a covariate: a
// category-name table or attribute table (class codes), an integer data type, and which codes
// occur how often. `habcast fit` uses it so that class codes are never fitted as a number by
// accident and classes without training points are named before predict meets them.
#include <cstdint>
#include <map>
#include <string>

namespace habcast {

struct BandProfile {
  std::map<std::int64_t, std::string> category_names;  ///< code -> non-empty name (GDAL category names)
  bool attribute_table = false;                         ///< the band has a GDAL raster attribute table
  bool integer_type = false;                            ///< Byte, (U)Int16, (U)Int32, (U)Int64
  std::string data_type;                                ///< GDAL's name, e.g. "Byte", "Float32"
  [[nodiscard]] bool declares_classes() const { return !category_names.empty() || attribute_table; }
};

/// Reads the band's metadata (not its pixels). Throws InputError naming the file.
BandProfile profile_band(const std::string& path, int band);

/// Pixel counts per value of a band, streamed block by block (memory bounded by `max_classes`).
struct ClassCensus {
  std::map<std::int64_t, std::int64_t> pixels;  ///< whole-number value -> pixels
  std::int64_t valid_pixels = 0;                ///< pixels that are not nodata
  std::int64_t fractional_pixels = 0;           ///< valid pixels whose value is not a whole number
  bool truncated = false;                       ///< more than max_classes distinct values: counting stopped adding
};

ClassCensus count_classes(const std::string& path, int band, std::size_t max_classes = 4096);

}  // namespace habcast
