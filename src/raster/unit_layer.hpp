#pragma once
// Management units (reserves, parcels, watersheds, survey blocks): polygons from any OGR source,
// transformed to the prediction grid's CRS and expressed in its cell coordinates, ready for exact
// per-cell coverage; and the per-row area of a grid cell in hectares.
#include <string>
#include <vector>

#include "core/numeric/cell_coverage.hpp"
#include "raster/raster_grid.hpp"

namespace habcast {

struct UnitLayerOptions {
  std::string path;      ///< any OGR vector source (GeoPackage, Shapefile, GeoJSON, ...)
  std::string layer;     ///< layer name; empty: the only layer (several layers and none named is an error)
  std::string id_field;  ///< field naming each unit; empty: the feature id (FID)
};

struct ManagementUnits {
  UnitLayerOptions source;
  std::string layer_name;
  std::string id_name;                    ///< the id field's name, or "fid"
  std::vector<long long> fids;            ///< feature ids, in reading order
  std::vector<std::string> ids;           ///< unit ids (unique), in reading order
  std::vector<std::string> where;         ///< "units.gpkg: feature 12", for messages
  std::vector<CoveragePolygon> polygons;  ///< cell coordinates of the grid; empty rings: nothing to cover
  std::vector<std::string> status;        ///< "" or why the unit has no pixels ("outside the raster", ...)
  bool transformed = false;               ///< the layer's CRS differs from the grid's and was transformed
  std::string crs_name;                   ///< the layer's CRS, for the report
  [[nodiscard]] std::size_t size() const { return ids.size(); }
};

/// Reads the units and prepares them for `grid`. Throws InputError naming the file (and feature)
/// for an unreadable source, an ambiguous or missing layer, a missing id field, duplicate ids (both
/// features named), a geometry that is not a polygon, or a CRS that one side lacks. Throws
/// InputError for a grid whose geotransform is rotated (cells are then not axis-aligned).
ManagementUnits read_units(const UnitLayerOptions& options, const RasterGrid& grid);

/// Reads only the units' ids (same checks of layer, id field and duplicates; no geometry is
/// placed): for merging per-unit sums of several tiles.
ManagementUnits read_unit_ids(const UnitLayerOptions& options);

/// Area of one cell of `grid` per row, in hectares: constant for a projected CRS (the cell's area
/// in its linear unit, converted to metres); for a geographic CRS the exact area of the cell on
/// the CRS's ellipsoid between its two latitudes. Throws InputError when the grid has no CRS or
/// its units are unknown (areas would mean nothing).
std::vector<double> cell_area_ha_by_row(const RasterGrid& grid, const std::string& what);

}  // namespace habcast
