#include "raster/point_source.hpp"

#include <gdal_priv.h>
#include <ogrsf_frmts.h>

#include <algorithm>
#include <cctype>
#include <charconv>
#include <cmath>
#include <filesystem>
#include <limits>
#include <memory>

#include "core/base/csv_table.hpp"
#include "core/base/error.hpp"
#include "raster/gdal_handles.hpp"
#include "raster/gdal_session.hpp"

namespace habcast {

namespace {

std::string lower_extension(const std::string& path) {
  std::string ext = std::filesystem::path(path).extension().string();
  std::transform(ext.begin(), ext.end(), ext.begin(), [](unsigned char c) { return static_cast<char>(std::tolower(c)); });
  return ext;
}

Points read_csv_points(const PointSourceOptions& o) {
  const CsvTable t = read_csv_table(o.path);
  const std::size_t xc = t.require_column(o.x_column, "x coordinate; choose another with --x");
  const std::size_t yc = t.require_column(o.y_column, "y coordinate; choose another with --y");
  std::vector<std::size_t> cols;
  for (const std::string& c : o.columns) cols.push_back(t.require_column(c, "requested on the command line"));
  Points p;
  p.path = o.path;
  p.values.resize(cols.size());
  for (std::size_t r = 0; r < t.rows.size(); ++r) {
    if (is_missing_cell(t.rows[r][xc]) || is_missing_cell(t.rows[r][yc]))
      throw InputError(located(o.path, t.lines[r], "the point has no coordinates; give both \"" + o.x_column + "\" and \"" +
                                                        o.y_column + "\" or remove the row"));
    p.x.push_back(t.number(r, xc));
    p.y.push_back(t.number(r, yc));
    p.where.push_back(o.path + ":" + std::to_string(t.lines[r]));
    for (std::size_t c = 0; c < cols.size(); ++c) p.values[c].push_back(t.number_or_nan(r, cols[c]));
  }
  return p;
}

double field_value(OGRFeature& f, int index, const std::string& where, const std::string& name) {
  if (!f.IsFieldSetAndNotNull(index)) return std::numeric_limits<double>::quiet_NaN();
  const OGRFieldType type = f.GetFieldDefnRef(index)->GetType();
  if (type == OFTInteger || type == OFTInteger64 || type == OFTReal) return f.GetFieldAsDouble(index);
  const std::string text = f.GetFieldAsString(index);
  if (is_missing_cell(text)) return std::numeric_limits<double>::quiet_NaN();
  double v = 0.0;
  const auto [ptr, ec] = std::from_chars(text.data(), text.data() + text.size(), v);
  if (ec != std::errc() || ptr != text.data() + text.size() || !std::isfinite(v))
    throw InputError(where + ": field \"" + name + "\" holds \"" + text + "\", which is not a number");
  return v;
}

OGRLayer& pick_layer(GDALDataset& ds, const PointSourceOptions& o) {
  OGRLayer* layer = o.layer.empty() ? ds.GetLayer(0) : ds.GetLayerByName(o.layer.c_str());
  if (layer) return *layer;
  std::string names;
  for (int i = 0; i < ds.GetLayerCount(); ++i) names += (names.empty() ? "" : ", ") + std::string(ds.GetLayer(i)->GetName());
  throw InputError(o.path + ": " + (o.layer.empty() ? std::string("has no layers") : "has no layer \"" + o.layer + "\"") +
                   (names.empty() ? "" : "; its layers are " + names + " (choose one with --layer)"));
}

Points read_ogr_points(const PointSourceOptions& o) {
  GDALDatasetUniquePtr ds =
      open_input_vector(o.path, "give a CSV with x/y columns or a GeoPackage, Shapefile or other OGR point source");
  OGRLayer& layer = pick_layer(*ds, o);
  Points p;
  p.path = o.path;
  if (const OGRSpatialReference* srs = layer.GetSpatialRef()) {
    char* wkt = nullptr;
    const char* const options[] = {"FORMAT=WKT2_2019", nullptr};
    srs->exportToWkt(&wkt, options);
    const std::unique_ptr<char, CplFree> owned(wkt);
    p.crs_wkt = wkt ? wkt : "";
  }
  std::vector<int> fields;
  for (const std::string& name : o.columns) {
    const int index = layer.GetLayerDefn()->GetFieldIndex(name.c_str());
    if (index < 0) {
      std::string names;
      for (int i = 0; i < layer.GetLayerDefn()->GetFieldCount(); ++i)
        names += (names.empty() ? "" : ", ") + std::string(layer.GetLayerDefn()->GetFieldDefn(i)->GetNameRef());
      throw InputError(o.path + ": layer \"" + layer.GetName() + "\" has no field \"" + name + "\"; its fields are " + names);
    }
    fields.push_back(index);
  }
  p.values.resize(fields.size());
  layer.ResetReading();
  for (auto& feature : layer) {
    const std::string where = o.path + ": feature " + std::to_string(feature->GetFID());
    const OGRGeometry* g = feature->GetGeometryRef();
    if (!g || g->IsEmpty()) throw InputError(where + " has no geometry; every feature must be a point");
    if (wkbFlatten(g->getGeometryType()) != wkbPoint)
      throw InputError(where + " is a " + std::string(g->getGeometryName()) +
                       ", not a point; convert the layer to points first (e.g. ogr2ogr -nlt POINT, or centroids)");
    const auto* pt = g->toPoint();
    p.x.push_back(pt->getX());
    p.y.push_back(pt->getY());
    p.where.push_back(where);
    for (std::size_t c = 0; c < fields.size(); ++c) p.values[c].push_back(field_value(*feature, fields[c], where, o.columns[c]));
  }
  return p;
}

}  // namespace

bool is_csv_path(const std::string& path) {
  const std::string ext = lower_extension(path);
  return ext == ".csv" || ext == ".txt" || ext == ".tsv";
}

Points read_points(const PointSourceOptions& options) {
  Points p = is_csv_path(options.path) ? read_csv_points(options) : read_ogr_points(options);
  if (p.size() == 0) throw InputError(options.path + ": holds no points");
  return p;
}

}  // namespace habcast
