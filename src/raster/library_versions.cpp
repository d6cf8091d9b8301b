#include "raster/library_versions.hpp"

#include <Eigen/Core>
#include <gdal.h>
#include <proj.h>

#include "core/numeric/qhull_facets.hpp"

namespace habcast {

namespace {

std::string dotted(int major, int minor, int patch) {
  return std::to_string(major) + "." + std::to_string(minor) + "." + std::to_string(patch);
}

}  // namespace

std::vector<LibraryVersion> library_versions() {
  // GDALVersionInfo and proj_info need no driver registration and no context: safe at any time.
  const PJ_INFO proj = proj_info();
  return {
      {"GDAL", GDALVersionInfo("RELEASE_NAME"), GDAL_RELEASE_NAME, true},
      {"PROJ", proj.version != nullptr ? proj.version : "",
       dotted(PROJ_VERSION_MAJOR, PROJ_VERSION_MINOR, PROJ_VERSION_PATCH), true},
      {"Eigen", dotted(EIGEN_WORLD_VERSION, EIGEN_MAJOR_VERSION, EIGEN_MINOR_VERSION),
       dotted(EIGEN_WORLD_VERSION, EIGEN_MAJOR_VERSION, EIGEN_MINOR_VERSION), false},
      {"Qhull", qhull_version(), "", true},
  };
}

}  // namespace habcast
