#pragma once
// Coordinates of field points from their CRS into the rasters' CRS with PROJ (through OGR). Both
// CRSs use the traditional GIS axis order (x = easting or longitude, y = northing or latitude),
// whatever the CRS definition says, because that is how coordinate columns are written.
#include <cstdint>
#include <memory>
#include <string>
#include <vector>

namespace habcast {

class PointTransformer {
 public:
  /// `source` is what the user wrote (EPSG:4326, a WKT text, a PROJ string) or a WKT from the
  /// points file; `target_wkt` is the raster's CRS. Throws UsageError naming `source_label` when
  /// a CRS cannot be understood or the rasters have no CRS.
  PointTransformer(const std::string& source, const std::string& target_wkt, const std::string& source_label);
  ~PointTransformer();
  PointTransformer(const PointTransformer&) = delete;
  PointTransformer& operator=(const PointTransformer&) = delete;

  /// True when source and target are the same CRS: coordinates pass unchanged.
  [[nodiscard]] bool identity() const;
  /// Short name of the source CRS, e.g. "WGS 84".
  [[nodiscard]] const std::string& source_name() const;
  /// True when the source CRS is longitude/latitude.
  [[nodiscard]] bool source_geographic() const;

  /// For a longitude/latitude source CRS: throws InputError when a point lies outside any valid
  /// longitude (-180 to 360, so 0-360 data pass) or latitude (-90 to 90). When all points do, the
  /// message says they look projected and that --crs sets their CRS; otherwise it names the first
  /// such line. `crs_origin` says where the CRS came from ("given with --crs", ...). Coordinates
  /// are those of the file, before transform().
  void refuse_impossible_lonlat(const std::vector<double>& x, const std::vector<double>& y,
                                const std::vector<std::string>& where, const std::string& path,
                                const std::string& crs_origin) const;

  /// Transforms in place; ok[i] = 0 where PROJ cannot transform the point (left unchanged).
  /// Returns the number of failures.
  std::size_t transform(std::vector<double>& x, std::vector<double>& y, std::vector<std::uint8_t>& ok) const;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

}  // namespace habcast
