#include "batch/region_report.hpp"

#include <cstdio>
#include <ctime>
#include <filesystem>
#include <map>

#include "core/base/number_text.hpp"
#include "core/base/utc_time.hpp"
#include "core/domain/extrapolation_flags.hpp"
#include "pipeline/atomic_file.hpp"

namespace habcast {

namespace {

using json = nlohmann::ordered_json;

/// Counts of one tile (or the total) that the report adds up.
struct Counts {
  std::int64_t total_pixels = 0, valid = 0, predicted = 0, checked = 0, flagged = 0;
  double response_sum = 0.0;  ///< mean x predicted, so means combine exactly as sums
  double hectares_per_pixel = 0.0;  ///< 0 when the CRS has no known linear units
  double area_ha = 0.0;             ///< checked area
  std::map<std::string, std::int64_t> causes;
  std::map<std::string, std::int64_t> covariates;
  std::map<std::string, double> cause_area_ha, covariate_area_ha;
  double flagged_area_ha = 0.0;

  void add(const Counts& o) {
    total_pixels += o.total_pixels;
    valid += o.valid;
    predicted += o.predicted;
    checked += o.checked;
    flagged += o.flagged;
    response_sum += o.response_sum;
    area_ha += o.area_ha;
    flagged_area_ha += o.flagged_area_ha;
    for (const auto& [k, v] : o.causes) causes[k] += v;
    for (const auto& [k, v] : o.covariates) covariates[k] += v;
    for (const auto& [k, v] : o.cause_area_ha) cause_area_ha[k] += v;
    for (const auto& [k, v] : o.covariate_area_ha) covariate_area_ha[k] += v;
  }
};

const json& report_entry(const json& j, const char* key) {
  static const json none;
  return j.is_object() && j.contains(key) ? j[key] : none;
}

std::int64_t get_int(const json& j, const char* key) {
  const json& v = report_entry(j, key);
  return v.is_number() ? v.get<std::int64_t>() : 0;
}

/// A tile's counts from its report.json: predict's (or a scenario run's baseline/report.json), or
/// a model set's, which has no valid-pixel count and no causes or covariates of the union.
Counts counts_of(const json& report, const ModelSpec& spec, bool model_set) {
  Counts c;
  const json& px = report_entry(report, "pixels");
  c.total_pixels = get_int(px, "total");
  c.valid = get_int(px, "with_data");
  c.predicted = get_int(px, "predicted");
  const json& mean = report_entry(report_entry(report, "response"), "mean");
  if (mean.is_number() && c.predicted > 0) c.response_sum = mean.get<double>() * static_cast<double>(c.predicted);
  const json& ex = report_entry(report, "extrapolation");
  if (!ex.is_object()) return c;
  c.checked = get_int(ex, "checked_pixels");
  c.flagged = get_int(ex, "flagged_pixels");
  const json& area = report_entry(ex, "checked_area_ha");
  if (area.is_number() && c.checked > 0) {
    c.area_ha = area.get<double>();
    c.hectares_per_pixel = c.area_ha / static_cast<double>(c.checked);
  }
  const double ha = c.hectares_per_pixel;
  c.flagged_area_ha = static_cast<double>(c.flagged) * ha;
  if (model_set) return c;
  for (int b = 0; b < flag::cause_count; ++b) {
    const std::string name = flag_name(b);
    const std::int64_t n = get_int(report_entry(report_entry(ex, "causes"), name.c_str()), "pixels");
    c.causes[name] = n;
    c.cause_area_ha[name] = static_cast<double>(n) * ha;
  }
  for (const Covariate& cov : spec.covariates) {
    const json& e = report_entry(report_entry(ex, "covariates"), cov.name.c_str());
    const std::int64_t n = cov.categorical ? get_int(e, "unseen_level_pixels") : get_int(e, "below_pixels") + get_int(e, "above_pixels");
    c.covariates[cov.name] = n;
    c.covariate_area_ha[cov.name] = static_cast<double>(n) * ha;
  }
  return c;
}

double share(std::int64_t part, std::int64_t whole) {
  return whole > 0 ? static_cast<double>(part) / static_cast<double>(whole) : 0.0;
}

/// Causes in bit order and covariates in the model's order, as in each tile's report.json.
json counts_json(const Counts& c, const ModelSpec& spec, bool with_extrapolation, bool with_area, bool model_set) {
  json j;
  j["pixels"] = c.total_pixels;
  j["valid_pixels"] = model_set ? json() : json(c.valid);
  j["predicted_pixels"] = c.predicted;
  j["mean_suitability"] = c.predicted > 0 ? json(c.response_sum / static_cast<double>(c.predicted)) : json(nullptr);
  if (!with_extrapolation) {
    j["extrapolation"] = nullptr;
    return j;
  }
  json ex;
  ex["checked_pixels"] = c.checked;
  ex["pixels"] = c.flagged;
  ex["share"] = share(c.flagged, c.checked);
  ex["area_ha"] = with_area ? json(c.flagged_area_ha) : json(nullptr);
  if (model_set) {
    // The union of the models' flags has no single cause or covariate; each tile's report.json
    // has every model's own.
    ex["causes"] = nullptr;
    ex["covariates"] = nullptr;
    j["extrapolation"] = ex;
    return j;
  }
  json causes = json::object();
  for (int b = 0; b < flag::cause_count; ++b) {
    const std::string name = flag_name(b);
    const std::int64_t n = c.causes.count(name) ? c.causes.at(name) : 0;
    const double area = c.cause_area_ha.count(name) ? c.cause_area_ha.at(name) : 0.0;
    causes[name] = {{"pixels", n}, {"share", share(n, c.checked)}, {"area_ha", with_area ? json(area) : json(nullptr)}};
  }
  ex["causes"] = causes;
  json covs = json::object();
  for (const Covariate& cov : spec.covariates) {
    const std::int64_t n = c.covariates.count(cov.name) ? c.covariates.at(cov.name) : 0;
    const double area = c.covariate_area_ha.count(cov.name) ? c.covariate_area_ha.at(cov.name) : 0.0;
    covs[cov.name] = {{"pixels", n}, {"share", share(n, c.checked)}, {"area_ha", with_area ? json(area) : json(nullptr)}};
  }
  ex["covariates"] = covs;
  j["extrapolation"] = ex;
  return j;
}

std::string csv_field(const std::string& text) {
  if (text.find_first_of(",\"\n") == std::string::npos) return text;
  std::string out = "\"";
  for (const char c : text) out += c == '"' ? std::string("\"\"") : std::string(1, c == '\n' ? ' ' : c);
  return out + "\"";
}

std::string csv_number(double v) { return significant(v, 10); }

std::string csv_row(const std::string& id, const std::string& status, bool ran, double seconds, const Counts& c,
                    bool done, const ModelSpec& spec, bool with_area, bool model_set, const std::string& reason) {
  std::string row = csv_field(id) + "," + status + "," + (ran ? "yes" : "no") + "," + csv_number(seconds);
  auto num = [&](double v) { row += "," + (done ? csv_number(v) : std::string()); };
  auto area = [&](double v) { row += "," + (done && with_area ? csv_number(v) : std::string()); };
  // Known only per model for a model set: left empty, as for a tile that is not done.
  auto detail = [&](double v) { row += "," + (done && !model_set ? csv_number(v) : std::string()); };
  auto detail_area = [&](double v) { row += "," + (done && with_area && !model_set ? csv_number(v) : std::string()); };
  detail(static_cast<double>(c.valid));
  num(static_cast<double>(c.predicted));
  row += "," + (done && c.predicted > 0 ? csv_number(c.response_sum / static_cast<double>(c.predicted)) : std::string());
  num(static_cast<double>(c.flagged));
  num(share(c.flagged, c.checked));
  area(c.flagged_area_ha);
  for (int b = 0; b < flag::cause_count; ++b) {
    const std::string name = flag_name(b);
    detail(static_cast<double>(c.causes.count(name) ? c.causes.at(name) : 0));
    detail(share(c.causes.count(name) ? c.causes.at(name) : 0, c.checked));
    detail_area(c.cause_area_ha.count(name) ? c.cause_area_ha.at(name) : 0.0);
  }
  for (const Covariate& cov : spec.covariates) {
    const std::int64_t n = c.covariates.count(cov.name) ? c.covariates.at(cov.name) : 0;
    detail(static_cast<double>(n));
    detail(share(n, c.checked));
    detail_area(c.covariate_area_ha.count(cov.name) ? c.covariate_area_ha.at(cov.name) : 0.0);
  }
  return row + "," + csv_field(reason) + "\n";
}

std::string csv_header(const ModelSpec& spec) {
  std::string h = "tile,status,ran_this_run,seconds,valid_pixels,predicted_pixels,mean_suitability,"
                  "extrapolated_pixels,extrapolated_share,extrapolated_area_ha";
  for (int b = 0; b < flag::cause_count; ++b) {
    const std::string n = flag_name(b);
    h += "," + n + "_pixels," + n + "_share," + n + "_area_ha";
  }
  for (const Covariate& cov : spec.covariates)
    h += ",outside_" + cov.name + "_pixels,outside_" + cov.name + "_share,outside_" + cov.name + "_area_ha";
  return h + ",reason\n";
}

bool is_done(const RegionTile& t) { return t.status == "done" || t.status == "up_to_date"; }

}  // namespace

RegionReport region_report(const RegionReportInput& in) {
  const ModelSpec& spec = *in.spec;
  RegionReport out;
  out.has_extrapolation = spec.training_samples.has_value() && in.every_model_trained;
  Counts total;
  std::vector<Counts> per_tile;
  bool with_area = true;
  double seconds = 0.0;
  std::map<std::string, int> status_counts;
  for (const RegionTile& t : in.tiles) {
    per_tile.push_back(is_done(t) && t.tile_report.is_object() ? counts_of(t.tile_report, spec, in.model_set) : Counts{});
    if (is_done(t)) {
      total.add(per_tile.back());
      if (per_tile.back().checked > 0 && per_tile.back().hectares_per_pixel <= 0.0) with_area = false;
    }
    seconds += t.seconds;
    ++status_counts[t.status];
  }
  with_area = with_area && out.has_extrapolation && total.checked > 0 && total.area_ha > 0.0;

  json tiles = json::array();
  out.csv = csv_header(spec);
  for (std::size_t i = 0; i < in.tiles.size(); ++i) {
    const RegionTile& t = in.tiles[i];
    json row{{"id", t.id}, {"status", t.status}, {"ran_this_run", t.ran_this_run}, {"seconds", t.seconds}};
    if (!t.reason.empty()) row["reason"] = t.reason;
    if (is_done(t)) row.update(counts_json(per_tile[i], spec, out.has_extrapolation, with_area, in.model_set));
    tiles.push_back(row);
    out.csv += csv_row(t.id, t.status, t.ran_this_run, t.seconds, per_tile[i], is_done(t), spec, with_area, in.model_set,
                       t.reason);
  }
  auto count = [&](const char* status) { return status_counts.count(status) ? status_counts.at(status) : 0; };
  const int done = count("done") + count("up_to_date");
  out.csv += csv_row("TOTAL", std::to_string(done) + "/" + std::to_string(in.tiles.size()) + " done", false, seconds,
                     total, true, spec, with_area, in.model_set, "");
  out.extrapolated_share = share(total.flagged, total.checked);

  json& j = out.json;
  j["habcast_version"] = in.tool_version;
  j["command"] = "batch";
  j["generated_utc"] = utc_now();
  j["manifest"] = in.manifest_path;
  if (in.model_paths.empty()) j["model"] = spec.path;
  else j["model"] = in.model_paths;
  j["output"] = in.output_dir;
  j["tiles_total"] = in.tiles.size();
  j["tiles_done"] = done;
  j["tiles_not_done"] = static_cast<int>(in.tiles.size()) - done;
  j["status_counts"] = status_counts;
  json t = counts_json(total, spec, out.has_extrapolation, with_area, in.model_set);
  t["seconds"] = seconds;
  j["total"] = t;
  j["tiles"] = tiles;
  j["mosaic"] = in.mosaic;
  if (in.max_extrapolated_percent) j["max_extrapolated_percent"] = *in.max_extrapolated_percent;
  j["caution"] =
      "Model predictions are not ground truth. Tiles that are not done are holes in the mosaic; extrapolated "
      "areas need field checks before any decision.";
  return out;
}

std::vector<std::string> write_region_report(const std::string& output_dir, const RegionReport& report) {
  const std::string json_path = (std::filesystem::path(output_dir) / "batch-report.json").string();
  const std::string csv_path = (std::filesystem::path(output_dir) / "batch-report.csv").string();
  write_file_atomically(json_path, report.json.dump(2) + "\n");
  write_file_atomically(csv_path, report.csv);
  return {json_path, csv_path};
}

}  // namespace habcast
