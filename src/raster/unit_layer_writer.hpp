#pragma once
// Writes the per-unit table as a GeoPackage layer that carries each unit's own geometry (as read,
// in the units' own CRS), so the summary opens in a GIS beside the source polygons.
#include <optional>
#include <string>
#include <vector>

#include "raster/unit_layer.hpp"

namespace habcast {

struct UnitTableColumn {
  std::string name;
  std::vector<std::optional<double>> values;  ///< per unit; nullopt writes a null field
};

/// Writes the GeoPackage `path` (the caller's temporary name; it renames the finished file, and
/// `path` is deleted when writing fails):
/// layer "units" with the source's geometry of each unit, a text field `unit_id`, a text field
/// `status`, and one Real field per column. Throws IoError naming the file when writing fails.
void write_units_geopackage(const std::string& path, const ManagementUnits& units, const std::vector<std::string>& status,
                            const std::vector<UnitTableColumn>& columns);

}  // namespace habcast
