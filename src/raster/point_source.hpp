#pragma once
// Field points from a CSV table with coordinate columns, or from any OGR vector source
// (GeoPackage, Shapefile, GeoJSON, ...), with the numeric attributes a command asks for.
#include <string>
#include <vector>

namespace habcast {

struct PointSourceOptions {
  std::string path;
  std::string layer;                 ///< OGR layer name; empty: the first layer
  std::string x_column = "x";        ///< CSV only: the coordinate columns
  std::string y_column = "y";
  std::vector<std::string> columns;  ///< numeric attributes to read, in this order
};

struct Points {
  std::string path;
  std::string crs_wkt;                       ///< CRS the source declares (OGR layers); empty for CSV
  std::vector<double> x;
  std::vector<double> y;
  std::vector<std::string> where;            ///< "points.csv:17" or "sites.gpkg: feature 12", for messages
  std::vector<std::vector<double>> values;   ///< per requested column, per point; NaN where missing
  [[nodiscard]] std::size_t size() const { return x.size(); }
};

/// True when `path` is read by habcast's CSV reader (.csv, .txt, .tsv) rather than through OGR.
bool is_csv_path(const std::string& path);

/// Reads the points. Throws InputError naming the file (and line or feature) for a missing column,
/// a non-numeric value, a missing coordinate, or a geometry that is not a point.
Points read_points(const PointSourceOptions& options);

}  // namespace habcast
