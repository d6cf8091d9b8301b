#include "raster/gdal_session.hpp"

#include <cpl_conv.h>
#include <cpl_error.h>
#include <gdal.h>

#include <mutex>
#include <utility>

namespace habcast {
namespace {

// GDAL calls the handler on the thread that raised the error, so a thread-local record keeps
// the message of one worker from being reported as another's failure.
thread_local std::string last_gdal_error;

void CPL_STDCALL record_gdal_error(CPLErr error_class, CPLErrorNum /*number*/, const char* message) {
  // Warnings and debug output are dropped rather than printed: they would interleave with our
  // own progress output, and anything that matters surfaces as a failure at the adapter boundary.
  if (error_class == CE_Failure || error_class == CE_Fatal) {
    last_gdal_error = message != nullptr ? message : "";
  }
}

}  // namespace

void ensure_gdal() {
  static std::once_flag once;
  std::call_once(once, [] {
    GDALAllRegister();
    CPLSetErrorHandler(record_gdal_error);
  });
}

std::string take_gdal_error() { return std::exchange(last_gdal_error, std::string()); }

void set_gdal_cache(long long bytes) {
  ensure_gdal();
  GDALSetCacheMax64(static_cast<GIntBig>(bytes));
}

}  // namespace habcast
