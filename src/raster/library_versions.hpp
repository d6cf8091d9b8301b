#pragma once
// The versions of the libraries whose results shape habcast's outputs (GDAL reads and writes every
// raster, PROJ every CRS, Eigen does the algebra, Qhull builds the training hulls), so
// `habcast --version` and report.json say what a map was made with.
#include <string>
#include <vector>

namespace habcast {

struct LibraryVersion {
  std::string name;        ///< "GDAL", "PROJ", "Eigen", "Qhull"
  std::string in_use;      ///< the version running now, as the library itself reports it
  std::string built_with;  ///< the version of the headers habcast was compiled against
  bool run_time = true;    ///< false when the library is compiled in (header-only Eigen)
};

/// GDAL, PROJ, Eigen and Qhull, in that order. GDAL and PROJ report their run-time version
/// (GDALVersionInfo, proj_info), Qhull its qh_version; Eigen is header-only, so its version is
/// the one compiled in. Qhull's headers carry no version, so its `built_with` is empty.
std::vector<LibraryVersion> library_versions();

}  // namespace habcast
