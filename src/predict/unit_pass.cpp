#include "predict/unit_pass.hpp"

#include <charconv>
#include <cmath>
#include <fstream>
#include <functional>
#include <limits>
#include <sstream>

#include "core/base/error.hpp"
#include "core/base/number_text.hpp"
#include "predict/prediction_report.hpp"
#include "render/unit_map.hpp"

namespace habcast {

namespace {

std::optional<double> parse_number(const std::string& text) {
  double v = 0.0;
  const auto [end, ec] = std::from_chars(text.data(), text.data() + text.size(), v);
  if (ec != std::errc() || end != text.data() + text.size()) return std::nullopt;
  return v;
}

UnitThreshold threshold_from_evaluate_report(const std::string& path) {
  std::ifstream in(path);
  if (!in) throw UsageError("--units-threshold " + path + ": neither a number nor a readable file");
  nlohmann::json j;
  try {
    in >> j;
  } catch (const nlohmann::json::exception& e) {
    throw InputError(path + ": not a JSON report of habcast evaluate (" + e.what() + ")");
  }
  // The threshold the evaluation applied: its binary map's, else the one given with --threshold,
  // else the TSS-maximising one. The report names which was taken.
  const char* keys[][2] = {{"binary_map", "the threshold of its binary map"},
                           {"at_threshold", "the threshold given to evaluate with --threshold"},
                           {"max_tss", "the threshold maximising TSS"}};
  for (const auto& [key, what] : keys) {
    if (j.contains(key) && j[key].is_object() && j[key].contains("threshold") && j[key]["threshold"].is_number())
      return {j[key]["threshold"].get<double>(), std::string(what) + " in " + path};
  }
  throw InputError(path + ": holds no threshold (expected binary_map, at_threshold or max_tss from habcast evaluate --json)");
}

}  // namespace

std::optional<UnitThreshold> resolve_unit_threshold(const std::string& text, Family family) {
  if (text.empty()) return std::nullopt;
  UnitThreshold t;
  if (auto v = parse_number(text)) {
    t = {*v, "given with --units-threshold"};
  } else {
    t = threshold_from_evaluate_report(text);
  }
  if (!std::isfinite(t.value)) throw UsageError("--units-threshold must be a finite number, got " + text);
  if (family == Family::binomial && !(t.value > 0.0 && t.value < 1.0))
    throw UsageError("--units-threshold for a probability must lie strictly between 0 and 1, got " + format_value(t.value));
  return t;
}

UnitPlan plan_units(const UnitOptions& options, const RasterGrid& grid, Family family) {
  UnitPlan plan;
  plan.threshold = resolve_unit_threshold(options.threshold_text, family);
  plan.units = read_units(options.layer, grid);
  plan.cell_area_ha = cell_area_ha_by_row(grid, options.layer.path);
  return plan;
}

void cover_window(const UnitPlan& plan, const Window& w, BlockUnitCover& cover) {
  cover.clear();
  const ManagementUnits& units = plan.units;
  for (std::size_t u = 0; u < units.size(); ++u) {
    if (!units.status[u].empty()) continue;
    const CoveragePolygon& p = units.polygons[u];
    if (p.max_x <= w.x || p.min_x >= w.x + w.width || p.max_y <= w.y || p.min_y >= w.y + w.height) continue;
    visit_cell_coverage(p, w.y, w.y + w.height, w.x, w.x + w.width, [&](int row, int col, double fraction) {
      cover.pixel.push_back(static_cast<std::uint32_t>((row - w.y) * w.width + (col - w.x)));
      cover.unit.push_back(static_cast<std::uint32_t>(u));
      cover.area_ha.push_back(fraction * plan.cell_area_ha[static_cast<std::size_t>(row)]);
    });
  }
  cover.sort();
}

nlohmann::ordered_json unit_sums_json(const UnitSums& s) {
  nlohmann::ordered_json g = nlohmann::ordered_json::array();
  for (Eigen::Index i = 0; i < s.sum_gradient.size(); ++i) g.push_back(s.sum_gradient[i]);
  return {{"area_ha", s.area_ha},
          {"data_area_ha", s.data_area_ha},
          {"checked_area_ha", s.checked_area_ha},
          {"sum_mu", s.sum_mu},
          {"above_area_ha", s.above_area_ha},
          {"flagged_area_ha", s.flagged_area_ha},
          {"cause_area_ha", s.cause_area_ha},
          {"sum_gradient", g}};
}

UnitSums unit_sums_from_json(const nlohmann::json& j, const std::string& where) {
  try {
    UnitSums s;
    s.area_ha = j.at("area_ha").get<double>();
    s.data_area_ha = j.at("data_area_ha").get<double>();
    s.checked_area_ha = j.at("checked_area_ha").get<double>();
    s.sum_mu = j.at("sum_mu").get<double>();
    s.above_area_ha = j.at("above_area_ha").get<double>();
    s.flagged_area_ha = j.at("flagged_area_ha").get<double>();
    s.cause_area_ha = j.at("cause_area_ha").get<std::array<double, 5>>();
    const auto g = j.at("sum_gradient").get<std::vector<double>>();
    if (!g.empty()) s.sum_gradient = Eigen::Map<const Eigen::VectorXd>(g.data(), static_cast<Eigen::Index>(g.size()));
    return s;
  } catch (const nlohmann::json::exception& e) {
    throw InputError(where + ": the unit sums are incomplete or malformed (" + e.what() + "); redo the tile");
  }
}

UnitResults summarise_units(const UnitPlan& plan, const std::vector<UnitSums>& sums, const ModelSpec& spec, double z,
                            double level) {
  UnitResults r;
  r.sums = sums;
  const Eigen::MatrixXd* V = spec.covariance ? &*spec.covariance : nullptr;
  std::size_t outside = 0, empty = 0;
  for (std::size_t u = 0; u < plan.units.size(); ++u) {
    r.summaries.push_back(summarise_unit(sums[u], spec.link, V, z));
    if (!plan.units.status[u].empty() || !(sums[u].area_ha > 0.0)) ++outside;
    else if (!r.summaries.back().has_prediction) ++empty;
  }
  r.report = {{"file", plan.units.source.path},
              {"layer", plan.units.layer_name},
              {"id_field", plan.units.id_name},
              {"units", plan.units.size()},
              {"units_without_pixels", outside},
              {"units_without_prediction", empty},
              {"crs", plan.units.crs_name},
              {"transformed_to_grid_crs", plan.units.transformed},
              {"pixel_weights", "exact share of each cell's area inside the unit (polygon clipping), times the cell's area"},
              {"standard_errors", "delta method on the unit mean: sqrt(g' V g), g the area-weighted mean gradient of the "
                                  "prediction with respect to the coefficients"},
              {"interval", "formed on the link scale of the unit mean and back-transformed, at level " + format_value(level)}};
  if (plan.threshold) r.report["threshold"] = {{"value", plan.threshold->value}, {"source", plan.threshold->source}};
  if (!V) r.warnings.push_back("the model has no covariance matrix, so unit summaries carry no standard errors or intervals");
  if (outside > 0)
    r.warnings.push_back(std::to_string(outside) + (outside == 1 ? " unit has" : " units have") +
                         " no pixels on the prediction grid (outside it, or without area); " +
                         (outside == 1 ? "it is" : "they are") + " listed with status and zero area");
  return r;
}

namespace {

/// The table's columns: name, what it holds for one unit (nullopt: no value).
struct Column {
  const char* name;
  std::function<std::optional<double>(const UnitSummary&)> value;
};

std::vector<Column> unit_columns(const UnitPlan& plan, const ModelSpec& spec) {
  auto when_predicted = [](double UnitSummary::*field) {
    return [field](const UnitSummary& s) -> std::optional<double> {
      if (!s.has_prediction) return std::nullopt;
      return s.*field;
    };
  };
  auto when_se = [](double UnitSummary::*field) {
    return [field](const UnitSummary& s) -> std::optional<double> {
      if (!s.has_se) return std::nullopt;
      return s.*field;
    };
  };
  std::vector<Column> c{
      {"area_ha", [](const UnitSummary& s) -> std::optional<double> { return s.area_ha; }},
      {"data_area_ha", [](const UnitSummary& s) -> std::optional<double> { return s.data_area_ha; }},
      {"nodata_area_ha", [](const UnitSummary& s) -> std::optional<double> { return s.nodata_area_ha; }},
      {"mean", when_predicted(&UnitSummary::mean)},
      {"mean_se", when_se(&UnitSummary::mean_se)},
      {"mean_lower", when_se(&UnitSummary::mean_lower)},
      {"mean_upper", when_se(&UnitSummary::mean_upper)}};
  if (spec.family == Family::binomial) {
    c.push_back({"expected_ha", when_predicted(&UnitSummary::expected_ha)});
    c.push_back({"expected_se_ha", when_se(&UnitSummary::expected_se_ha)});
    c.push_back({"expected_lower_ha", when_se(&UnitSummary::expected_lower_ha)});
    c.push_back({"expected_upper_ha", when_se(&UnitSummary::expected_upper_ha)});
  }
  if (plan.threshold) c.push_back({"above_threshold_ha", [](const UnitSummary& s) -> std::optional<double> { return s.above_area_ha; }});
  c.push_back({"extrapolated_share", [](const UnitSummary& s) -> std::optional<double> {
                 if (!(s.checked_area_ha > 0.0)) return std::nullopt;
                 return s.flagged_share;
               }});
  static const std::array<const char*, 5> share_names{"share_range", "share_hull", "share_unseen_class", "share_nt2",
                                                      "share_pairs"};
  for (std::size_t k = 0; k < share_names.size(); ++k)
    c.push_back({share_names[k], [k](const UnitSummary& s) -> std::optional<double> {
                   if (!(s.checked_area_ha > 0.0)) return std::nullopt;
                   return s.cause_share[k];
                 }});
  return c;
}

std::string csv_cell(const std::string& text) {
  if (text.find_first_of(",\"\n") == std::string::npos) return text;
  std::string q = "\"";
  for (char ch : text) q += ch == '"' ? std::string("\"\"") : std::string(1, ch);
  return q + "\"";
}

std::string status_text(const UnitPlan& plan, const UnitSummary& s, std::size_t u) {
  if (!plan.units.status[u].empty()) return plan.units.status[u];
  if (!(s.area_ha > 0.0)) return "outside the raster";
  return s.has_prediction ? "ok" : "no prediction (no data under the unit)";
}

}  // namespace

std::vector<UnitTableColumn> unit_table_columns(const UnitPlan& plan, const UnitResults& results, const ModelSpec& spec) {
  std::vector<UnitTableColumn> out;
  for (const Column& c : unit_columns(plan, spec)) {
    UnitTableColumn t{c.name, {}};
    for (const UnitSummary& s : results.summaries) t.values.push_back(c.value(s));
    out.push_back(std::move(t));
  }
  return out;
}

std::vector<std::string> unit_status(const UnitPlan& plan, const UnitResults& results) {
  std::vector<std::string> s;
  for (std::size_t u = 0; u < results.summaries.size(); ++u) s.push_back(status_text(plan, results.summaries[u], u));
  return s;
}

Figure units_map(const UnitPlan& plan, const UnitResults& results, const ModelSpec& spec, const RasterGrid& grid) {
  UnitMapInput in;
  in.title = (spec.name.empty() ? std::string("Prediction") : spec.name) + ": mean per unit";
  in.value_label = spec.family == Family::binomial ? "Mean suitability (probability)" : "Mean " + spec.response;
  in.grid = grid;
  double lo = 0.0, hi = 1.0;
  if (spec.family != Family::binomial) {
    lo = std::numeric_limits<double>::infinity();
    hi = -lo;
    for (const UnitSummary& s : results.summaries)
      if (s.has_prediction) {
        lo = std::min(lo, s.mean);
        hi = std::max(hi, s.mean);
      }
    if (!(hi > lo)) {
      lo = std::isfinite(lo) ? lo - 0.5 : 0.0;
      hi = lo + 1.0;
    }
  }
  in.lo = lo;
  in.hi = hi;
  for (std::size_t u = 0; u < plan.units.size(); ++u) {
    UnitMapUnit m;
    m.rings = plan.units.polygons[u].rings;
    const UnitSummary& s = results.summaries[u];
    if (s.has_prediction) m.mean = s.mean;
    m.mostly_extrapolated = s.checked_area_ha > 0.0 && s.flagged_share > 0.5;
    in.units.push_back(std::move(m));
  }
  return unit_map_figure(in);
}

std::string units_csv(const UnitPlan& plan, const UnitResults& results, const ModelSpec& spec) {
  const std::vector<Column> columns = unit_columns(plan, spec);
  std::ostringstream out;
  out << "unit_id,status";
  for (const Column& c : columns) out << ',' << c.name;
  out << '\n';
  for (std::size_t u = 0; u < results.summaries.size(); ++u) {
    out << csv_cell(plan.units.ids[u]) << ',' << csv_cell(status_text(plan, results.summaries[u], u));
    for (const Column& c : columns) {
      out << ',';
      if (auto v = c.value(results.summaries[u])) out << significant(*v, 17);
    }
    out << '\n';
  }
  return out.str();
}

nlohmann::ordered_json units_json(const UnitPlan& plan, const UnitResults& results, const ModelSpec& spec, double level) {
  const std::vector<Column> columns = unit_columns(plan, spec);
  nlohmann::ordered_json j = results.report;
  j["level"] = level;
  nlohmann::ordered_json rows = nlohmann::ordered_json::array();
  for (std::size_t u = 0; u < results.summaries.size(); ++u) {
    nlohmann::ordered_json row{{"unit_id", plan.units.ids[u]}, {"status", status_text(plan, results.summaries[u], u)}};
    for (const Column& c : columns) {
      if (auto v = c.value(results.summaries[u])) row[c.name] = *v;
      else row[c.name] = nullptr;
    }
    row["sums"] = unit_sums_json(results.sums[u]);
    rows.push_back(std::move(row));
  }
  j["rows"] = std::move(rows);
  return j;
}

}  // namespace habcast
