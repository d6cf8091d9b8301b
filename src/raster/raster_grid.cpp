#include "raster/raster_grid.hpp"

#include <cpl_conv.h>
#include <ogr_spatialref.h>

#include <algorithm>
#include <cmath>
#include <memory>
#include <sstream>

#include "core/base/error.hpp"
#include "core/base/number_text.hpp"
#include "raster/gdal_handles.hpp"
#include "raster/gdal_session.hpp"

namespace habcast {
namespace {

void describe_crs(const OGRSpatialReference& srs, RasterGrid& grid) {
  // WKT2 keeps what WKT1 cannot express (datum ensembles, some projections), so the CRS survives
  // the trip into our outputs unchanged.
  const char* const options[] = {"FORMAT=WKT2_2019", nullptr};
  char* wkt = nullptr;
  srs.exportToWkt(&wkt, options);
  const std::unique_ptr<char, CplFree> owned(wkt);
  grid.crs_wkt = wkt != nullptr ? wkt : "";
  grid.crs_name = srs.GetName() != nullptr ? srs.GetName() : "";
  if (srs.IsProjected()) {
    const char* unit_name = nullptr;
    grid.linear_units_to_metre = srs.GetLinearUnits(&unit_name);
    grid.linear_units = unit_name != nullptr ? unit_name : "";
  }
}

std::string size_text(const RasterGrid& grid) {
  return std::to_string(grid.width) + " x " + std::to_string(grid.height) + " pixels";
}

std::string transform_text(const RasterGrid& grid) {
  const auto& gt = grid.geotransform;
  std::string text =
      "origin (" + significant(gt[0], 15) + ", " + significant(gt[3], 15) + "), pixel size " + significant(gt[1], 15) + " x " + significant(gt[5], 15);
  if (gt[2] != 0.0 || gt[4] != 0.0) text += ", rotation terms " + significant(gt[2], 15) + " and " + significant(gt[4], 15);
  return text;
}

OGRSpatialReference parse_crs(const std::string& path, const RasterGrid& grid) {
  OGRSpatialReference srs;
  if (srs.importFromWkt(grid.crs_wkt.c_str()) != OGRERR_NONE) {
    throw InputError(located(path, 0,
                             "has a CRS that GDAL cannot parse. Assign a valid CRS (for example "
                             "with gdal_edit.py -a_srs EPSG:<code>)."));
  }
  return srs;
}

std::string crs_argument(const std::string& path, const RasterGrid& grid) {
  if (!grid.crs_wkt.empty()) {
    const OGRSpatialReference srs = parse_crs(path, grid);
    const char* authority = srs.GetAuthorityName(nullptr);
    const char* code = srs.GetAuthorityCode(nullptr);
    if (authority != nullptr && code != nullptr) return std::string(authority) + ":" + code;
  }
  return "<the CRS of " + path + ", which gdalsrsinfo " + path + " prints>";
}

// What to do is nearly always the same: bring the file onto the reference grid. Spelling out the
// reference's extent and resolution saves the user a gdalinfo round trip.
std::string resample_hint(const std::string& reference_path, const RasterGrid& reference) {
  std::string hint = " Resample or crop it to " + reference_path + "'s grid (for example with gdalwarp";
  const auto& gt = reference.geotransform;
  if (reference.has_geotransform && gt[2] == 0.0 && gt[4] == 0.0) {
    const double x_end = gt[0] + gt[1] * reference.width;
    const double y_end = gt[3] + gt[5] * reference.height;
    hint += " -te " + significant(std::min(gt[0], x_end), 15) + " " + significant(std::min(gt[3], y_end), 15) + " " +
            significant(std::max(gt[0], x_end), 15) + " " + significant(std::max(gt[3], y_end), 15) + " -tr " + significant(std::abs(gt[1]), 15) +
            " " + significant(std::abs(gt[5]), 15);
  }
  if (!reference.crs_wkt.empty()) hint += " -t_srs " + crs_argument(reference_path, reference);
  return hint + ").";
}

/// Largest distance, in reference pixels, between where the two geotransforms put the same pixel
/// corner. The difference of two affine maps is affine, so its maximum over the raster is reached
/// at one of the four corners; this bounds the misregistration everywhere, including drift from a
/// slightly different pixel size that a check of the origin alone would miss.
double misalignment_in_pixels(const RasterGrid& reference, const RasterGrid& other) {
  const auto& r = reference.geotransform;
  const auto& o = other.geotransform;
  const double determinant = r[1] * r[5] - r[2] * r[4];
  double worst = 0.0;
  for (const double column : {0.0, static_cast<double>(reference.width)}) {
    for (const double row : {0.0, static_cast<double>(reference.height)}) {
      const double dx = (o[0] + o[1] * column + o[2] * row) - (r[0] + r[1] * column + r[2] * row);
      const double dy = (o[3] + o[4] * column + o[5] * row) - (r[3] + r[4] * column + r[5] * row);
      const double d_column = (r[5] * dx - r[2] * dy) / determinant;
      const double d_row = (r[1] * dy - r[4] * dx) / determinant;
      worst = std::max({worst, std::abs(d_column), std::abs(d_row)});
    }
  }
  return worst;
}

void check_transform(const std::string& reference_path, const RasterGrid& reference, const std::string& other_path,
                     const RasterGrid& other, double pixel_tolerance) {
  const std::string lead = other_path + " is not on the same grid as " + reference_path + ": ";
  if (reference.has_geotransform != other.has_geotransform) {
    const std::string& missing = reference.has_geotransform ? other_path : reference_path;
    const std::string& present = reference.has_geotransform ? reference_path : other_path;
    throw InputError(lead + missing + " has no georeferencing (geotransform) but " + present + " has (" +
                     transform_text(reference.has_geotransform ? reference : other) + ")." +
                     resample_hint(reference_path, reference));
  }
  if (!reference.has_geotransform) return;  // both in plain pixel space, sizes already equal
  if (reference.pixel_area() == 0.0 || !std::isfinite(reference.pixel_area())) {
    throw InputError(
        located(reference_path, 0,
                "has a geotransform with no pixel area (" + transform_text(reference) + "). Fix its georeferencing."));
  }
  const double misalignment = misalignment_in_pixels(reference, other);
  if (!(misalignment <= pixel_tolerance)) {  // written so that NaN fails too
    throw InputError(lead + transform_text(other) + " vs " + transform_text(reference) + "; the grids are up to " +
                     significant(misalignment, 15) + " pixels apart (tolerance " + significant(pixel_tolerance, 15) + " pixels)." +
                     resample_hint(reference_path, reference));
  }
}

std::string crs_label(const OGRSpatialReference& srs, const RasterGrid& grid, bool with_definition) {
  std::string label = "\"" + (grid.crs_name.empty() ? std::string("unnamed CRS") : grid.crs_name) + "\"";
  if (with_definition) {
    char* proj = nullptr;
    srs.exportToProj4(&proj);
    const std::unique_ptr<char, CplFree> owned(proj);
    if (proj != nullptr) label += std::string(" (") + proj + ")";
  }
  return label;
}

void check_crs(const std::string& reference_path, const RasterGrid& reference, const std::string& other_path,
               const RasterGrid& other) {
  const std::string lead = other_path + " is not on the same grid as " + reference_path + ": ";
  if (reference.crs_wkt.empty() && other.crs_wkt.empty()) return;
  if (reference.crs_wkt.empty() || other.crs_wkt.empty()) {
    const bool other_missing = other.crs_wkt.empty();
    const std::string& missing = other_missing ? other_path : reference_path;
    const std::string& present = other_missing ? reference_path : other_path;
    const RasterGrid& present_grid = other_missing ? reference : other;
    throw InputError(lead + missing + " has no CRS but " + present + " has \"" + present_grid.crs_name + "\". If " +
                     missing +
                     " is in fact in that CRS, assign it (for example with "
                     "gdal_edit.py -a_srs " +
                     crs_argument(present, present_grid) + " " + missing + "); otherwise resample it.");
  }
  const OGRSpatialReference reference_srs = parse_crs(reference_path, reference);
  const OGRSpatialReference other_srs = parse_crs(other_path, other);
  // The axis mapping is a property of how a dataset hands out coordinates, not of the CRS.
  const char* const options[] = {"IGNORE_DATA_AXIS_TO_SRS_AXIS_MAPPING=YES", nullptr};
  if (reference_srs.IsSame(&other_srs, options)) return;
  // Two different CRSs can share a name (e.g. both "unknown"); then only the definitions tell.
  const bool same_names = reference.crs_name == other.crs_name;
  throw InputError(lead + "different CRS: " + crs_label(other_srs, other, same_names) + " vs " +
                   crs_label(reference_srs, reference, same_names) + "." + resample_hint(reference_path, reference));
}

}  // namespace

double RasterGrid::pixel_area() const {
  if (!has_geotransform) return 0.0;
  return std::abs(geotransform[1] * geotransform[5] - geotransform[2] * geotransform[4]);
}

RasterGrid read_grid(const std::string& path, int band) {
  const DatasetPtr dataset = open_input_raster(path);
  // Failures GDAL survived while opening; a CRS it cannot parse is one (e.g. a VRT's <SRS>).
  const std::string open_failure = take_gdal_error();
  GDALRasterBand& raster_band = input_band(*dataset, path, band);
  RasterGrid grid;
  grid.width = dataset->GetRasterXSize();
  grid.height = dataset->GetRasterYSize();
  std::array<double, 6> transform{};
  if (dataset->GetGeoTransform(transform.data()) == CE_None) {
    grid.geotransform = transform;
    grid.has_geotransform = true;
  }
  take_gdal_error();  // a missing geotransform is reported by GDAL but is not a failure here
  if (const OGRSpatialReference* srs = dataset->GetSpatialRef(); srs != nullptr && !srs->IsEmpty()) {
    describe_crs(*srs, grid);
  } else if (!open_failure.empty()) {
    // GDAL drops a CRS it cannot parse and opens the file without one; taking that silently would
    // produce outputs with no CRS, or a misleading "has no CRS" message.
    throw InputError(located(path, 0,
                             "has no usable CRS: GDAL could not read it (" + open_failure +
                                 "). Assign a valid CRS (for example with gdal_edit.py -a_srs EPSG:<code>)."));
  }
  raster_band.GetBlockSize(&grid.block_width, &grid.block_height);
  return grid;
}

void check_same_grid(const std::string& reference_path, const RasterGrid& reference, const std::string& other_path,
                     const RasterGrid& other, double pixel_tolerance) {
  ensure_gdal();  // the CRS comparison may raise OGR errors, which must not reach stderr
  if (reference.width != other.width || reference.height != other.height) {
    throw InputError(other_path + " is not on the same grid as " + reference_path + ": " + size_text(other) + " vs " +
                     size_text(reference) + "." + resample_hint(reference_path, reference));
  }
  check_transform(reference_path, reference, other_path, other, pixel_tolerance);
  check_crs(reference_path, reference, other_path, other);
}

}  // namespace habcast
