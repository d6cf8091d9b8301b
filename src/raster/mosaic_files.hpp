#pragma once
// Region-wide files made from finished tiles with GDAL's own utilities: a VRT that shows many
// GeoTIFFs as one layer, and a Cloud Optimized GeoTIFF copy of it. Both appear atomically: they are
// written under a temporary name in their folder and renamed when GDAL closed them cleanly.
#include <string>
#include <vector>

namespace habcast {

/// GDALBuildVRT of `sources` (in this order; where tiles overlap the later one shows) into
/// `vrt_path`. Sources are stored relative to the VRT when they share a folder tree, so the
/// output folder can be moved as a whole. Throws IoError naming the file with GDAL's reason.
void build_vrt(const std::string& vrt_path, const std::vector<std::string>& sources);

/// GDALTranslate of `source` into a COG at `cog_path` (DEFLATE, overviews resampled with
/// `overview_resampling`, e.g. "AVERAGE" or "NEAREST"). Throws IoError naming the file.
void write_cog(const std::string& source, const std::string& cog_path, const std::string& overview_resampling);

}  // namespace habcast
