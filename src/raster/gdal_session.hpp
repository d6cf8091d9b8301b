#pragma once
// GDAL setup for the process: drivers registered once, GDAL's error handler routed into a
// per-thread record so failures become exceptions with GDAL's own words at the adapter boundary.
#include <string>

namespace habcast {

/// Registers GDAL drivers and installs the error handler; safe to call many times, from any thread.
void ensure_gdal();

/// Last CE_Failure/CE_Fatal message GDAL reported on this thread (empty if none), then clears it.
std::string take_gdal_error();

/// Sets GDAL's block cache, in bytes.
void set_gdal_cache(long long bytes);

}  // namespace habcast
