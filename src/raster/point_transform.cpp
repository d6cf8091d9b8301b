#include "raster/point_transform.hpp"

#include <ogr_spatialref.h>

#include <cmath>
#include <limits>

#include "core/base/error.hpp"
#include "core/base/number_text.hpp"
#include "raster/gdal_handles.hpp"
#include "raster/gdal_session.hpp"

namespace habcast {

struct PointTransformer::Impl {
  OGRSpatialReference source;
  OGRSpatialReference target;
  std::unique_ptr<OGRCoordinateTransformation, TransformDeleter> transform;
  std::string name;
};

PointTransformer::PointTransformer(const std::string& source, const std::string& target_wkt,
                                   const std::string& source_label)
    : impl_(std::make_unique<Impl>()) {
  ensure_gdal();
  take_gdal_error();
  if (impl_->source.SetFromUserInput(source.c_str()) != OGRERR_NONE)
    throw UsageError(source_label + ": cannot understand the CRS \"" + source.substr(0, 80) + "\" (" + gdal_reason() +
                     "); give an EPSG code such as EPSG:4326 or EPSG:32630, or a WKT text");
  if (target_wkt.empty())
    throw InputError("the covariate rasters have no CRS, so points in " + source_label +
                     " cannot be placed on them; assign the rasters' CRS (gdal_edit.py -a_srs EPSG:<code>)");
  if (impl_->target.importFromWkt(target_wkt.c_str()) != OGRERR_NONE)
    throw InputError("the covariate rasters' CRS cannot be parsed (" + gdal_reason() + ")");
  // x = longitude/easting, y = latitude/northing, as points files are written, regardless of the
  // axis order the authority defines (EPSG:4326 is latitude first).
  impl_->source.SetAxisMappingStrategy(OAMS_TRADITIONAL_GIS_ORDER);
  impl_->target.SetAxisMappingStrategy(OAMS_TRADITIONAL_GIS_ORDER);
  impl_->name = impl_->source.GetName() ? impl_->source.GetName() : source.substr(0, 40);
  if (impl_->source.IsSame(&impl_->target)) return;
  impl_->transform.reset(OGRCreateCoordinateTransformation(&impl_->source, &impl_->target));
  if (!impl_->transform)
    throw InputError(source_label + ": no coordinate operation from " + impl_->name + " to the rasters' CRS " +
                     (impl_->target.GetName() ? impl_->target.GetName() : "") + " (" + gdal_reason() + ")");
}

PointTransformer::~PointTransformer() = default;

bool PointTransformer::identity() const { return !impl_->transform; }

const std::string& PointTransformer::source_name() const { return impl_->name; }

bool PointTransformer::source_geographic() const { return impl_->source.IsGeographic(); }

void PointTransformer::refuse_impossible_lonlat(const std::vector<double>& x, const std::vector<double>& y,
                                                const std::vector<std::string>& where, const std::string& path,
                                                const std::string& crs_origin) const {
  if (!source_geographic()) return;
  std::size_t bad = 0;
  std::size_t first = x.size();
  for (std::size_t i = 0; i < x.size(); ++i)
    if (!(x[i] >= -180.0 && x[i] <= 360.0 && y[i] >= -90.0 && y[i] <= 90.0)) {
      if (first == x.size()) first = i;
      ++bad;
    }
  if (bad == 0) return;
  const std::string at = "x " + significant(x[first], 10) + ", y " + significant(y[first], 10);
  const std::string range = "longitude -180 to 360, latitude -90 to 90";
  if (bad == x.size())
    throw InputError(path + ": the points are read as longitude/latitude in " + impl_->name + " (" + crs_origin +
                     "), but all " + std::to_string(bad) + " lie outside any longitude/latitude (" + range +
                     "; first: " + where[first] + ", " + at + "). They look projected (eastings and northings, e.g. in "
                     "metres). Give their CRS with --crs, e.g. --crs EPSG:32630 for UTM zone 30N");
  throw InputError(where[first] + ": " + at + " lies outside any longitude/latitude (" + range + "), though the points are "
                   "read as longitude/latitude in " + impl_->name + " (" + crs_origin + "); " + std::to_string(bad) + " of " +
                   std::to_string(x.size()) + " points do. Fix those lines, or give the points' CRS with --crs if the file "
                   "holds projected coordinates");
}

std::size_t PointTransformer::transform(std::vector<double>& x, std::vector<double>& y, std::vector<std::uint8_t>& ok) const {
  ok.assign(x.size(), 1);
  if (!impl_->transform || x.empty()) return 0;
  std::vector<int> success(x.size(), 0);
  // Transform() returns FALSE when any point fails; the per-point flags say which.
  if (x.size() > static_cast<std::size_t>(std::numeric_limits<int>::max()))
    throw UsageError("too many points for one transformation; split the points file");
  impl_->transform->Transform(static_cast<int>(x.size()), x.data(), y.data(), nullptr, success.data());
  take_gdal_error();
  std::size_t failed = 0;
  for (std::size_t i = 0; i < x.size(); ++i)
    if (!success[i] || !std::isfinite(x[i]) || !std::isfinite(y[i])) {
      ok[i] = 0;
      ++failed;
    }
  return failed;
}

}  // namespace habcast
