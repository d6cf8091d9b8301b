#include "raster/unit_layer_writer.hpp"

#include <gdal_priv.h>
#include <ogrsf_frmts.h>

#include <filesystem>

#include "core/base/error.hpp"
#include "raster/gdal_handles.hpp"
#include "raster/gdal_session.hpp"
#include "raster/output_raster.hpp"

namespace habcast {

void write_units_geopackage(const std::string& path, const ManagementUnits& units, const std::vector<std::string>& status,
                            const std::vector<UnitTableColumn>& columns) {
  GDALDatasetUniquePtr source = open_input_vector(units.source.path, "the units file changed during the run");
  OGRLayer* in = source->GetLayerByName(units.layer_name.c_str());
  if (!in) throw InputError(units.source.path + ": the layer \"" + units.layer_name + "\" disappeared during the run");

  GDALDriver* driver = GetGDALDriverManager()->GetDriverByName("GPKG");
  if (!driver) throw IoError("GDAL has no GeoPackage driver, so " + path + " cannot be written");
  const std::string& temporary = path;  // the caller's temporary name: it renames the finished file
  std::error_code ignored;
  std::filesystem::remove(temporary, ignored);
  GDALDataset* raw = driver->Create(temporary.c_str(), 0, 0, 0, GDT_Unknown, nullptr);
  if (!raw) throw IoError(path + ": cannot create the GeoPackage (" + gdal_reason() + ")");
  bool closed = false;
  auto discard = [&] {
    if (!closed) GDALClose(GDALDataset::ToHandle(raw));
    closed = true;
    std::filesystem::remove(temporary, ignored);
  };
  try {
    OGRSpatialReference* srs = nullptr;
    std::unique_ptr<OGRSpatialReference> srs_copy;
    if (const OGRSpatialReference* s = in->GetSpatialRef()) {
      srs_copy = std::make_unique<OGRSpatialReference>(*s);
      srs = srs_copy.get();
    }
    const char* const layer_options[] = {"GEOMETRY_NAME=geom", nullptr};
    OGRLayer* out = raw->CreateLayer("units", srs, wkbMultiPolygon, const_cast<char**>(layer_options));
    if (!out) throw IoError(path + ": cannot create the layer (" + gdal_reason() + ")");
    OGRFieldDefn id_field("unit_id", OFTString);
    OGRFieldDefn status_field("status", OFTString);
    if (out->CreateField(&id_field) != OGRERR_NONE || out->CreateField(&status_field) != OGRERR_NONE)
      throw IoError(path + ": cannot create the fields (" + gdal_reason() + ")");
    for (const UnitTableColumn& c : columns) {
      OGRFieldDefn f(c.name.c_str(), OFTReal);
      if (out->CreateField(&f) != OGRERR_NONE) throw IoError(path + ": cannot create field " + c.name + " (" + gdal_reason() + ")");
    }
    if (raw->StartTransaction() != OGRERR_NONE) throw IoError(path + ": cannot start writing (" + gdal_reason() + ")");
    for (std::size_t u = 0; u < units.size(); ++u) {
      std::unique_ptr<OGRFeature> src(in->GetFeature(units.fids[u]));
      OGRFeature f(out->GetLayerDefn());
      if (src && src->GetGeometryRef()) {
        std::unique_ptr<OGRGeometry> g(src->GetGeometryRef()->hasCurveGeometry() ? src->GetGeometryRef()->getLinearGeometry()
                                                                                : src->GetGeometryRef()->clone());
        f.SetGeometryDirectly(OGRGeometryFactory::forceToMultiPolygon(g.release()));
      }
      f.SetField("unit_id", units.ids[u].c_str());
      f.SetField("status", status[u].c_str());
      for (std::size_t c = 0; c < columns.size(); ++c) {
        const auto& v = columns[c].values[u];
        if (v) f.SetField(static_cast<int>(c + 2), *v);
        else f.SetFieldNull(static_cast<int>(c + 2));
      }
      if (out->CreateFeature(&f) != OGRERR_NONE) throw IoError(path + ": cannot write unit " + units.ids[u] + " (" + gdal_reason() + ")");
    }
    if (raw->CommitTransaction() != OGRERR_NONE) throw IoError(path + ": cannot finish writing (" + gdal_reason() + ")");
    closed = true;
    take_gdal_error();
    CPLErrorReset();
    // GDALClose returns nothing in GDAL 3.6: a failed final write shows only as the last error.
    GDALClose(GDALDataset::ToHandle(raw));
    const CPLErr last = CPLGetLastErrorType();
    if (last == CE_Failure || last == CE_Fatal)
      throw IoError(path + ": finishing the GeoPackage failed (" + gdal_reason() + "); check free disk space and permissions");
  } catch (...) {
    discard();
    throw;
  }
}

}  // namespace habcast
