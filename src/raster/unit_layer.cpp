#include "raster/unit_layer.hpp"

#include <gdal_priv.h>
#include <ogrsf_frmts.h>

#include <cmath>
#include <map>
#include <memory>

#include "core/base/error.hpp"
#include "core/base/number_text.hpp"
#include "raster/gdal_handles.hpp"
#include "raster/gdal_session.hpp"

namespace habcast {

namespace {

OGRLayer& units_layer(GDALDataset& ds, const UnitLayerOptions& o) {
  std::string names;
  for (int i = 0; i < ds.GetLayerCount(); ++i) names += (names.empty() ? "" : ", ") + std::string(ds.GetLayer(i)->GetName());
  if (o.layer.empty()) {
    if (ds.GetLayerCount() == 1) return *ds.GetLayer(0);
    if (ds.GetLayerCount() == 0) throw InputError(o.path + ": holds no vector layers; give a layer of unit polygons");
    // Several layers and none named: taking the first would be a guess.
    throw InputError(o.path + ": holds several layers (" + names + "); name the one with the units with --units-layer");
  }
  if (OGRLayer* layer = ds.GetLayerByName(o.layer.c_str())) return *layer;
  throw InputError(o.path + ": has no layer \"" + o.layer + "\"; its layers are " + names);
}

void add_polygon(const OGRPolygon& poly, const std::array<double, 6>& gt, std::vector<std::vector<Point2>>& outers,
                 std::vector<std::vector<std::vector<Point2>>>& holes) {
  auto ring_cells = [&](const OGRLinearRing* ring) {
    std::vector<Point2> pts;
    if (!ring) return pts;
    pts.reserve(static_cast<std::size_t>(ring->getNumPoints()));
    for (int i = 0; i < ring->getNumPoints(); ++i)
      pts.push_back({(ring->getX(i) - gt[0]) / gt[1], (ring->getY(i) - gt[3]) / gt[5]});
    return pts;
  };
  if (poly.IsEmpty()) return;
  outers.push_back(ring_cells(poly.getExteriorRing()));
  holes.emplace_back();
  for (int i = 0; i < poly.getNumInteriorRings(); ++i) holes.back().push_back(ring_cells(poly.getInteriorRing(i)));
}

std::string srs_name(const OGRSpatialReference* srs) {
  if (!srs) return "none";
  const char* name = srs->GetName();
  return name ? name : "unnamed";
}

}  // namespace

namespace {

ManagementUnits read_units_on(const UnitLayerOptions& o, const RasterGrid* grid_or_null) {
  ensure_gdal();
  static const RasterGrid kNoGrid;
  const RasterGrid& grid = grid_or_null ? *grid_or_null : kNoGrid;
  const auto& gt = grid.geotransform;
  if (grid_or_null && !grid.has_geotransform)
    throw InputError("the prediction grid has no georeferencing, so the units of " + o.path + " cannot be placed on it");
  if (grid_or_null && (gt[2] != 0.0 || gt[4] != 0.0))
    throw InputError("the prediction grid is rotated (geotransform terms " + significant(gt[2], 6) + ", " + significant(gt[4], 6) +
                     "); unit summaries need north-up cells: warp the covariates to a north-up grid first");
  GDALDatasetUniquePtr ds =
      open_input_vector(o.path, "give the units as a GeoPackage, Shapefile, GeoJSON or other OGR polygon source");
  OGRLayer& layer = units_layer(*ds, o);
  ManagementUnits u;
  u.source = o;
  u.layer_name = layer.GetName();
  int id_index = -1;
  if (!o.id_field.empty()) {
    id_index = layer.GetLayerDefn()->GetFieldIndex(o.id_field.c_str());
    if (id_index < 0) {
      std::string names;
      for (int i = 0; i < layer.GetLayerDefn()->GetFieldCount(); ++i)
        names += (names.empty() ? "" : ", ") + std::string(layer.GetLayerDefn()->GetFieldDefn(i)->GetNameRef());
      throw InputError(o.path + ": layer \"" + u.layer_name + "\" has no field \"" + o.id_field + "\"; its fields are " +
                       (names.empty() ? std::string("(none)") : names));
    }
  }
  u.id_name = o.id_field.empty() ? "fid" : o.id_field;

  // The units' CRS against the grid's: transformed when they differ; refused when only one side has
  // a CRS (the units could be in any units then, and guessing would place them anywhere).
  const OGRSpatialReference* layer_srs = layer.GetSpatialRef();
  // A GeoPackage layer without a CRS reports the standard's placeholders (srs_id 0 and -1).
  if (layer_srs && layer_srs->GetName() &&
      (std::string(layer_srs->GetName()) == "Undefined geographic SRS" ||
       std::string(layer_srs->GetName()) == "Undefined Cartesian SRS"))
    layer_srs = nullptr;
  OGRSpatialReference grid_srs;
  const bool grid_has_crs = !grid.crs_wkt.empty() && grid_srs.importFromWkt(grid.crs_wkt.c_str()) == OGRERR_NONE;
  u.crs_name = srs_name(layer_srs);
  if (grid_or_null && static_cast<bool>(layer_srs) != grid_has_crs)
    throw InputError(o.path + ": " + (layer_srs ? "the units have a CRS (" + u.crs_name + ") but the prediction grid has none"
                                                : "the units have no CRS but the prediction grid is in " + grid.crs_name) +
                     "; assign the missing CRS (e.g. gdal_edit.py -a_srs or ogr2ogr -a_srs) so the two can be matched");
  std::unique_ptr<OGRCoordinateTransformation, TransformDeleter> ct;
  if (grid_or_null && layer_srs && grid_has_crs && !layer_srs->IsSame(&grid_srs)) {
    OGRSpatialReference from(*layer_srs), to(grid_srs);
    from.SetAxisMappingStrategy(OAMS_TRADITIONAL_GIS_ORDER);
    to.SetAxisMappingStrategy(OAMS_TRADITIONAL_GIS_ORDER);
    ct.reset(OGRCreateCoordinateTransformation(&from, &to));
    if (!ct)
      throw InputError(o.path + ": cannot transform the units from " + u.crs_name + " to the grid's " + grid.crs_name + " (" +
                       gdal_reason() + ")");
    u.transformed = true;
  }

  std::map<std::string, std::string> seen;  // id -> where, to name both features of a duplicate
  layer.ResetReading();
  for (auto& feature : layer) {
    const std::string where = o.path + ": feature " + std::to_string(feature->GetFID());
    std::string id = std::to_string(feature->GetFID());
    if (id_index >= 0) {
      if (!feature->IsFieldSetAndNotNull(id_index))
        throw InputError(where + " has no value in the id field \"" + o.id_field + "\"; give every unit an id");
      id = feature->GetFieldAsString(id_index);
    }
    if (auto [it, fresh] = seen.emplace(id, where); !fresh)
      throw InputError(o.path + ": the id \"" + id + "\" of field \"" + u.id_name + "\" is used by " + it->second + " and by " +
                       where + "; unit ids must be unique (choose another field with --units-id)");
    u.fids.push_back(feature->GetFID());
    u.ids.push_back(id);
    u.where.push_back(where);

    const OGRGeometry* g = feature->GetGeometryRef();
    if (!grid_or_null) {
      u.polygons.emplace_back();
      u.status.emplace_back();
      continue;
    }
    if (!g || g->IsEmpty()) {
      u.polygons.emplace_back();
      u.status.emplace_back("no geometry");
      continue;
    }
    std::unique_ptr<OGRGeometry> linear(g->hasCurveGeometry() ? g->getLinearGeometry() : g->clone());
    const OGRwkbGeometryType type = wkbFlatten(linear->getGeometryType());
    if (type != wkbPolygon && type != wkbMultiPolygon)
      throw InputError(where + " is a " + std::string(linear->getGeometryName()) +
                       ", not a polygon; units must be polygons or multipolygons");
    if (ct && linear->transform(ct.get()) != OGRERR_NONE)
      throw InputError(where + ": cannot transform its geometry from " + u.crs_name + " to " + grid.crs_name);
    std::vector<std::vector<Point2>> outers;
    std::vector<std::vector<std::vector<Point2>>> holes;
    if (type == wkbPolygon) {
      add_polygon(*linear->toPolygon(), gt, outers, holes);
    } else {
      for (const OGRPolygon* part : *linear->toMultiPolygon()) add_polygon(*part, gt, outers, holes);
    }
    CoveragePolygon poly = coverage_polygon(outers, holes);
    const bool outside = poly.rings.empty() || poly.max_x <= 0.0 || poly.max_y <= 0.0 || poly.min_x >= grid.width ||
                         poly.min_y >= grid.height;
    u.status.emplace_back(poly.rings.empty() ? "no area" : outside ? "outside the raster" : "");
    u.polygons.push_back(std::move(poly));
  }
  if (u.size() == 0) throw InputError(o.path + ": layer \"" + u.layer_name + "\" holds no features");
  return u;
}

}  // namespace

ManagementUnits read_units(const UnitLayerOptions& options, const RasterGrid& grid) { return read_units_on(options, &grid); }

ManagementUnits read_unit_ids(const UnitLayerOptions& options) { return read_units_on(options, nullptr); }

std::vector<double> cell_area_ha_by_row(const RasterGrid& grid, const std::string& what) {
  const auto& gt = grid.geotransform;
  OGRSpatialReference srs;
  if (grid.crs_wkt.empty() || srs.importFromWkt(grid.crs_wkt.c_str()) != OGRERR_NONE)
    throw InputError(what + ": the prediction grid has no CRS, so cell areas (hectares) are unknown; assign its CRS");
  std::vector<double> area(static_cast<std::size_t>(grid.height));
  if (srs.IsProjected()) {
    const double to_metre = srs.GetLinearUnits();
    if (!(to_metre > 0.0)) throw InputError(what + ": the grid's linear unit is unknown, so cell areas cannot be computed");
    const double ha = std::fabs(gt[1] * gt[5] - gt[2] * gt[4]) * to_metre * to_metre / 1e4;
    std::fill(area.begin(), area.end(), ha);
    return area;
  }
  if (!srs.IsGeographic())
    throw InputError(what + ": the grid's CRS (" + grid.crs_name + ") is neither projected nor geographic; cell areas unknown");
  // The area of a cell between latitudes phi1 and phi2, dlambda wide, on an ellipsoid with
  // semi-minor axis b and eccentricity e: (b^2 dlambda / 2) [F(phi2) - F(phi1)] with
  // F(phi) = sin(phi) / (1 - e^2 sin^2(phi)) + ln((1 + e sin(phi)) / (1 - e sin(phi))) / (2e)
  // (the integral of the ellipsoid's area element; e -> 0 gives the sphere's R^2 dlambda dsin(phi)).
  OGRErr err = OGRERR_NONE;
  const double a = srs.GetSemiMajor(&err);
  const double inv_f = srs.GetInvFlattening(&err);
  const double f = inv_f > 0.0 ? 1.0 / inv_f : 0.0;
  const double e2 = f * (2.0 - f);
  const double e = std::sqrt(e2);
  const double b2 = a * a * (1.0 - e2);
  const double to_radian = srs.GetAngularUnits();
  auto F = [&](double phi) {
    const double s = std::sin(phi);
    if (e < 1e-12) return 2.0 * s;
    return s / (1.0 - e2 * s * s) + std::log((1.0 + e * s) / (1.0 - e * s)) / (2.0 * e);
  };
  const double dlambda = std::fabs(gt[1]) * to_radian;
  for (int r = 0; r < grid.height; ++r) {
    const double y0 = gt[3] + r * gt[5], y1 = gt[3] + (r + 1) * gt[5];
    const double p0 = std::clamp(std::min(y0, y1) * to_radian, -M_PI / 2, M_PI / 2);
    const double p1 = std::clamp(std::max(y0, y1) * to_radian, -M_PI / 2, M_PI / 2);
    area[static_cast<std::size_t>(r)] = b2 * dlambda / 2.0 * (F(p1) - F(p0)) / 1e4;
  }
  return area;
}

}  // namespace habcast
