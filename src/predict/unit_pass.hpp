#pragma once
// Management-unit summaries inside predict's streaming pass: which units cover each window's
// pixels and by how much (exact cell coverage), the sums merged in window order, and the
// finished table (CSV, JSON and a GeoPackage layer with the units' own geometry). docs/units.md.
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <vector>

#include "core/model/model_spec.hpp"
#include "core/prediction/unit_sums.hpp"
#include "raster/unit_layer.hpp"
#include "raster/unit_layer_writer.hpp"
#include "raster/window.hpp"
#include "render/figure.hpp"

namespace habcast {

struct UnitOptions {
  UnitLayerOptions layer;              ///< empty path: no unit summaries
  std::string threshold_text;          ///< a probability/value, or an evaluate JSON report; empty: none
  std::string map_path;                ///< a picture of the units (.png, .pdf, .svg); empty: none
  [[nodiscard]] bool active() const { return !layer.path.empty(); }
};

/// The threshold for "area above the threshold": a number, or the one an `habcast evaluate --json`
/// report used (its binary map's, else its --threshold's, else its max-TSS threshold); `source`
/// says which, for the report.
struct UnitThreshold {
  double value = 0.0;
  std::string source;
};
std::optional<UnitThreshold> resolve_unit_threshold(const std::string& text, Family family);

/// The units prepared for one run: polygons in cell coordinates and cell areas per row.
struct UnitPlan {
  ManagementUnits units;
  std::vector<double> cell_area_ha;  ///< per grid row
  std::optional<UnitThreshold> threshold;
};
UnitPlan plan_units(const UnitOptions& options, const RasterGrid& grid, Family family);

/// Fills `cover` with every (pixel, unit, area) of window `w`, sorted by pixel then unit.
void cover_window(const UnitPlan& plan, const Window& w, BlockUnitCover& cover);

/// Finished per-unit numbers and where they were written.
struct UnitResults {
  std::vector<UnitSums> sums;  ///< what the summaries were formed from (units.json keeps them for merging)
  std::vector<UnitSummary> summaries;
  nlohmann::ordered_json report;  ///< summary for report.json: counts, files, rules
  std::vector<std::string> warnings;
};

/// A unit's sums as JSON (every double round-trips exactly) and back, so that the sums of several
/// tiles can be merged into the region's (habcast batch).
nlohmann::ordered_json unit_sums_json(const UnitSums& sums);
UnitSums unit_sums_from_json(const nlohmann::json& json, const std::string& where);

/// Forms the summaries from the merged sums.
UnitResults summarise_units(const UnitPlan& plan, const std::vector<UnitSums>& sums, const ModelSpec& spec, double z,
                            double level);

/// The table's numeric columns (names documented in docs/units.md) and each unit's status, for
/// the GeoPackage layer.
std::vector<UnitTableColumn> unit_table_columns(const UnitPlan& plan, const UnitResults& results, const ModelSpec& spec);
std::vector<std::string> unit_status(const UnitPlan& plan, const UnitResults& results);

/// The picture of the units (render/unit_map.hpp) coloured by their means.
Figure units_map(const UnitPlan& plan, const UnitResults& results, const ModelSpec& spec, const RasterGrid& grid);

/// The CSV and JSON text of the unit table.
std::string units_csv(const UnitPlan& plan, const UnitResults& results, const ModelSpec& spec);
nlohmann::ordered_json units_json(const UnitPlan& plan, const UnitResults& results, const ModelSpec& spec, double level);

}  // namespace habcast
