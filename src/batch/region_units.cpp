#include "batch/region_units.hpp"

#include <filesystem>
#include <fstream>
#include <map>

#include "core/base/error.hpp"
#include "core/model/evaluator.hpp"
#include "pipeline/atomic_file.hpp"
#include "predict/unit_pass.hpp"
#include "raster/output_raster.hpp"
#include "raster/unit_layer_writer.hpp"

namespace habcast {

namespace fs = std::filesystem;

RegionUnits merge_region_units(const BatchManifest& manifest, const ModelSpec& spec, const std::vector<std::string>& tile_dirs) {
  UnitPlan plan;
  plan.units = read_unit_ids({manifest.units_path, manifest.units_layer, manifest.units_id});
  plan.threshold = resolve_unit_threshold(manifest.units_threshold, spec.family);
  std::map<std::string, std::size_t> index;
  for (std::size_t u = 0; u < plan.units.size(); ++u) index.emplace(plan.units.ids[u], u);

  std::vector<UnitSums> sums(plan.units.size());
  for (const std::string& dir : tile_dirs) {
    const std::string path = (fs::path(dir) / "units.json").string();
    std::ifstream in(path);
    if (!in) throw InputError(path + ": missing; the tile was run without units, redo it (habcast batch --force)");
    nlohmann::json j;
    try {
      in >> j;
    } catch (const nlohmann::json::exception& e) {
      throw InputError(path + ": not valid JSON (" + std::string(e.what()) + "); redo the tile");
    }
    if (!j.contains("rows") || !j["rows"].is_array()) throw InputError(path + ": has no rows of units; redo the tile");
    for (const auto& row : j["rows"]) {
      const std::string id = row.value("unit_id", "");
      const auto it = index.find(id);
      if (it == index.end())
        throw InputError(path + ": unit \"" + id + "\" is not in " + manifest.units_path + " any more; redo the tiles");
      if (row.contains("sums")) sums[it->second].merge(unit_sums_from_json(row["sums"], path));
    }
  }
  const Evaluator evaluator(spec, manifest.level, 0.0);
  UnitResults results = summarise_units(plan, sums, spec, evaluator.z(), manifest.level);
  results.report["merged_from_tiles"] = tile_dirs.size();

  RegionUnits r;
  const fs::path out(manifest.output_dir);
  const std::string gpkg = (out / "units.gpkg").string();
  const std::string csv = (out / "units.csv").string();
  const std::string json = (out / "units.json").string();
  // Region outputs are rewritten on every run, like the region report.
  const std::string temporary = temporary_path_for(gpkg);
  write_units_geopackage(temporary, plan.units, unit_status(plan, results), unit_table_columns(plan, results, spec));
  std::error_code ec;
  fs::rename(temporary, gpkg, ec);
  if (ec) throw IoError(gpkg + ": cannot rename the finished GeoPackage into place: " + ec.message());
  write_file_atomically(csv, units_csv(plan, results, spec));
  write_file_atomically(json, units_json(plan, results, spec, manifest.level).dump(2) + "\n");
  r.outputs = {gpkg, csv, json};
  r.report = results.report;
  r.warnings = results.warnings;
  return r;
}

}  // namespace habcast
