#pragma once
// Region-wide files made from finished tiles with GDAL's own utilities: a VRT that shows many
// GeoTIFFs as one layer, and a Cloud Optimized GeoTIFF copy of it. Each is written exactly at the
// path given, which the caller makes a temporary name and commits with the rest of its set
// (pipeline/output_set.hpp), so old mosaics stay until the new ones are all complete.
#include <functional>
#include <string>
#include <vector>

namespace habcast {

/// GDALBuildVRT of `sources` (in this order; where tiles overlap the later one shows) into
/// `vrt_path`. Sources below the VRT's folder are stored relative to it, as GDAL does; so are
/// sources elsewhere within `relative_within` (e.g. "../tiles/a/ssp5/change.tif" for a VRT in a
/// sub-folder of the output folder), so that folder can be moved as a whole. Throws IoError
/// naming the file with GDAL's reason.
void build_vrt(const std::string& vrt_path, const std::vector<std::string>& sources,
               const std::string& relative_within = "");

/// GDALTranslate of `source` into a COG at `cog_path` (DEFLATE, overviews resampled with
/// `overview_resampling`, e.g. "AVERAGE" or "NEAREST"). Throws IoError naming the file.
/// `keep_going` is asked as GDAL progresses; when it says no, the copy stops (IoError).
void write_cog(const std::string& source, const std::string& cog_path, const std::string& overview_resampling,
               const std::function<bool()>& keep_going = [] { return true; });

}  // namespace habcast
