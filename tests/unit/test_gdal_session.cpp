#include <cpl_error.h>
#include <gdal.h>

#include <catch2/catch.hpp>
#include <string>
#include <thread>

#include "raster/gdal_session.hpp"

TEST_CASE("GDAL failures are kept per thread and taken once", "[raster][gdal]") {
  habcast::ensure_gdal();
  habcast::take_gdal_error();
  CPLError(CE_Failure, CPLE_AppDefined, "first failure");
  CPLError(CE_Warning, CPLE_AppDefined, "a warning is not a failure");
  CPLError(CE_Failure, CPLE_AppDefined, "second failure");
  std::string seen_by_other_thread = "not run";
  std::thread other([&] { seen_by_other_thread = habcast::take_gdal_error(); });
  other.join();
  CHECK(seen_by_other_thread.empty());
  CHECK(habcast::take_gdal_error() == "second failure");
  CHECK(habcast::take_gdal_error().empty());
}

TEST_CASE("ensure_gdal registers the drivers once, from any thread", "[raster][gdal]") {
  std::thread first([] { habcast::ensure_gdal(); });
  std::thread second([] { habcast::ensure_gdal(); });
  first.join();
  second.join();
  CHECK(GDALGetDriverByName("GTiff") != nullptr);
}

TEST_CASE("set_gdal_cache sets GDAL's block cache size", "[raster][gdal]") {
  const GIntBig before = GDALGetCacheMax64();
  habcast::set_gdal_cache(96LL * 1024 * 1024);
  CHECK(GDALGetCacheMax64() == 96LL * 1024 * 1024);
  GDALSetCacheMax64(before);
}
