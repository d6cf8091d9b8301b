#include "predict/scenario_report.hpp"

#include <cmath>
#include <sstream>

#include "core/base/number_text.hpp"
#include "core/domain/extrapolation_flags.hpp"
#include "predict/prediction_report.hpp"

namespace habcast {

namespace {

using json = nlohmann::ordered_json;

double share(std::int64_t part, std::int64_t whole) {
  return whole > 0 ? static_cast<double>(part) / static_cast<double>(whole) : 0.0;
}

/// Area of `pixels` pixels: hectares in a CRS with metric units, else square map units; nothing
/// without a geotransform.
void add_area(json& j, std::int64_t pixels, const RasterGrid& g) {
  if (!g.has_geotransform) return;
  j["area"] = static_cast<double>(pixels) * g.pixel_area();
  if (g.linear_units_to_metre > 0.0)
    j["area_ha"] = static_cast<double>(pixels) * g.pixel_area() * g.linear_units_to_metre * g.linear_units_to_metre / 1e4;
}

std::int64_t class_pixels(const ChangeTally& t, std::size_t cls) {
  std::int64_t n = 0;
  for (std::size_t m = 0; m < 4; ++m) n += t.classes[cls][m];
  return n;
}

std::int64_t class_extrapolated(const ChangeTally& t, std::size_t cls) {
  return t.classes[cls][1] + t.classes[cls][2] + t.classes[cls][3];
}

double in_domain_share(const PredictionTally& t) { return 1.0 - share(t.domain.flagged, t.domain.checked); }

std::string points(double share_difference) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%+.1f", share_difference * 100.0);
  return buf;
}

}  // namespace

std::vector<std::string> scenario_warnings(const ScenarioReportContext& ctx) {
  std::vector<std::string> out;
  const auto& scenarios = ctx.scenarios->scenarios;
  if (!ctx.with_domain)
    out.push_back("The model names no training samples, so no pixel of any scenario is checked against the training "
                  "data: a change may rest entirely on extrapolation and nothing marks it. Add [training] samples.");
  if (!ctx.threshold)
    out.push_back("No threshold was given, so change_class.tif (gain, loss, stable) was not written; give --threshold "
                  "(for example the max-TSS threshold of `habcast evaluate`).");
  for (std::size_t s = 0; s < scenarios.size(); ++s) {
    const std::string& name = scenarios[s].name;
    const PredictionTally& t = *ctx.tallies[s];
    const ChangeTally& c = *ctx.changes[s];
    if (ctx.with_domain && t.domain.checked > 0 && ctx.baseline->domain.checked > 0) {
      const double b = in_domain_share(*ctx.baseline), x = in_domain_share(t);
      if (x < b)
        out.push_back("Under scenario " + name + " the model's domain shrinks: " + format_percent(x) +
                      " of valid pixels lie within the training data, against " + format_percent(b) + " at baseline (" +
                      points(x - b) + " points). Changes outside the domain are projections beyond the data.");
    }
    if (ctx.threshold && ctx.with_domain) {
      for (std::size_t cls : {std::size_t{change_class::gain}, std::size_t{change_class::loss}}) {
        const std::int64_t n = class_pixels(c, cls), x = class_extrapolated(c, cls);
        if (n > 0 && x > 0)
          out.push_back(format_percent(share(x, n)) + " of the pixels classed " +
                        change_class::class_name(static_cast<std::uint8_t>(cls)) + " under scenario " + name +
                        " lie where the baseline or the scenario is extrapolated (marked +16/+32 in change_class.tif).");
      }
    }
    if (c.missing_either > 0)
      out.push_back(std::to_string(c.missing_either) + " pixels have a prediction on one side of scenario " + name +
                    " only (nodata or an undefined term on the other); they have no change.");
  }
  return out;
}

json scenario_report(const ScenarioReportContext& ctx, const std::vector<std::string>& warnings) {
  const ModelSpec& spec = *ctx.spec;
  const auto& scenarios = ctx.scenarios->scenarios;
  json r;
  r["habcast_version"] = ctx.tool_version;
  r["kind"] = "scenarios";
  r["started_utc"] = ctx.started_utc;
  r["elapsed_seconds"] = ctx.elapsed_seconds;
  r["model"] = {{"path", spec.path}, {"name", spec.name}, {"family", to_string(spec.family)}, {"link", to_string(spec.link)}};
  if (!ctx.scenarios->path.empty()) r["scenario_file"] = ctx.scenarios->path;
  r["confidence_level"] = ctx.level;
  r["threshold"] = ctx.threshold ? json{{"value", *ctx.threshold}, {"source", ctx.threshold_source}} : json();
  r["methods"] = {
      {"change", "mu_scenario - mu_baseline on the response scale"},
      {"standard_error", "delta method from the difference of the gradients: sqrt((g_s - g_b)' V (g_s - g_b)), "
                         "g = (d mu / d eta) x; both predictions share the coefficients, so their errors are correlated"},
      {"interval", "change -/+ z se, normal approximation on the response scale"},
      {"probability_of_decline", "Phi(-change / se): the same normal approximation of the change"},
      {"classes", "at the threshold: stable unsuitable, stable suitable, gain, loss when the pixel crosses it and the "
                  "interval excludes zero, not distinguishable when it crosses it and the interval includes zero"}};
  r["area_units"] = !ctx.grid.has_geotransform ? json() : json(ctx.grid.linear_units_to_metre > 0.0 ? "ha" : "square map units");

  auto extrapolation = [&](const PredictionTally& t) {
    json e;
    e["checked_pixels"] = t.domain.checked;
    e["flagged_pixels"] = t.domain.flagged;
    e["flagged_share"] = share(t.domain.flagged, t.domain.checked);
    json causes = json::object();
    for (int b = 0; b < flag::cause_count; ++b)
      causes[flag_name(b)] = {{"pixels", t.domain.cause[b]}, {"share", share(t.domain.cause[b], t.domain.checked)}};
    e["causes"] = causes;
    return e;
  };
  json base;
  base["folder"] = ctx.baseline_folder;
  base["predicted_pixels"] = ctx.baseline->predicted;
  base["extrapolation"] = ctx.with_domain ? extrapolation(*ctx.baseline) : json();
  r["baseline"] = base;

  json list = json::array();
  for (std::size_t s = 0; s < scenarios.size(); ++s) {
    const Scenario& sc = scenarios[s];
    const PredictionTally& t = *ctx.tallies[s];
    const ChangeTally& c = *ctx.changes[s];
    json j;
    j["name"] = sc.name;
    j["description"] = sc.description;
    j["folder"] = ctx.folders[s];
    json replaces = json::object();
    for (const auto& [cov, path] : sc.rasters) replaces[cov] = path;
    j["replaces"] = replaces;
    j["predicted_pixels"] = t.predicted;
    j["compared_pixels"] = c.compared;
    j["one_side_only_pixels"] = c.missing_either;
    j["mean_change"] = c.compared > 0 ? json(c.sum_change / static_cast<double>(c.compared)) : json();
    j["interval_above_zero"] = {{"pixels", c.rose}, {"share", share(c.rose, c.compared)}};
    j["interval_below_zero"] = {{"pixels", c.declined}, {"share", share(c.declined, c.compared)}};
    add_area(j["interval_above_zero"], c.rose, ctx.grid);
    add_area(j["interval_below_zero"], c.declined, ctx.grid);
    if (ctx.threshold) {
      json classes;
      for (std::uint8_t cls = 1; cls <= change_class::class_count; ++cls) {
        const std::int64_t n = class_pixels(c, cls);
        json k{{"pixels", n}, {"share", share(n, c.compared)}};
        add_area(k, n, ctx.grid);
        if (ctx.with_domain) {
          const std::int64_t x = class_extrapolated(c, cls);
          k["extrapolated_pixels"] = x;
          k["extrapolated_share"] = share(x, n);
          k["baseline_extrapolated_pixels"] = c.classes[cls][1] + c.classes[cls][3];
          k["scenario_extrapolated_pixels"] = c.classes[cls][2] + c.classes[cls][3];
        }
        classes[change_class::class_key(cls)] = k;
      }
      j["classes"] = classes;
    }
    if (ctx.with_domain) {
      json e = extrapolation(t);
      e["baseline_flagged_share"] = share(ctx.baseline->domain.flagged, ctx.baseline->domain.checked);
      for (int b = 0; b < flag::cause_count; ++b)
        e["causes"][flag_name(b)]["baseline_share"] = share(ctx.baseline->domain.cause[b], ctx.baseline->domain.checked);
      e["in_domain_share"] = in_domain_share(t);
      e["baseline_in_domain_share"] = in_domain_share(*ctx.baseline);
      e["in_domain_change_points"] = 100.0 * (in_domain_share(t) - in_domain_share(*ctx.baseline));
      j["extrapolation"] = e;
    }
    list.push_back(j);
  }
  r["scenarios"] = list;
  json outs = json::object();
  for (const auto& [role, path] : ctx.outputs) outs[role] = path;
  r["outputs"] = outs;
  r["warnings"] = warnings;
  r["caution"] = "Model output, not ground truth. A projected change is only as good as the model and the scenario "
                 "rasters; where either side is extrapolated it rests on the fitted surface beyond the training data.";
  return r;
}

std::string scenario_csv(const ScenarioReportContext& ctx) {
  std::ostringstream os;
  const bool metric = ctx.grid.has_geotransform && ctx.grid.linear_units_to_metre > 0.0;
  const double pixel_area = !ctx.grid.has_geotransform ? 0.0
                            : metric ? ctx.grid.pixel_area() * ctx.grid.linear_units_to_metre * ctx.grid.linear_units_to_metre / 1e4
                                     : ctx.grid.pixel_area();
  auto area = [&](std::int64_t n) { return ctx.grid.has_geotransform ? significant(static_cast<double>(n) * pixel_area, 10) : std::string(); };
  auto num = [](double v) { return significant(v, 10); };
  os << "scenario,item,pixels,share,area" << (metric ? "_ha" : "")
     << ",extrapolated_pixels,extrapolated_share,baseline_pixels,baseline_share\n";
  const auto& scenarios = ctx.scenarios->scenarios;
  for (std::size_t s = 0; s < scenarios.size(); ++s) {
    const std::string& name = scenarios[s].name;
    const ChangeTally& c = *ctx.changes[s];
    const PredictionTally& t = *ctx.tallies[s];
    if (ctx.threshold) {
      for (std::uint8_t cls = 1; cls <= change_class::class_count; ++cls) {
        const std::int64_t n = class_pixels(c, cls);
        os << name << "," << change_class::class_key(cls) << "," << n << "," << num(share(n, c.compared)) << "," << area(n) << ",";
        if (ctx.with_domain) {
          const std::int64_t x = class_extrapolated(c, cls);
          os << x << "," << num(share(x, n));
        } else {
          os << ",";
        }
        os << ",,\n";
      }
    }
    if (ctx.with_domain) {
      const DomainTally& d = t.domain;
      const DomainTally& b = ctx.baseline->domain;
      os << name << ",extrapolated," << d.flagged << "," << num(share(d.flagged, d.checked)) << "," << area(d.flagged)
         << ",,," << b.flagged << "," << num(share(b.flagged, b.checked)) << "\n";
      for (int bit = 0; bit < flag::cause_count; ++bit)
        os << name << ",extrapolated:" << flag_name(bit) << "," << d.cause[bit] << "," << num(share(d.cause[bit], d.checked))
           << "," << area(d.cause[bit]) << ",,," << b.cause[bit] << "," << num(share(b.cause[bit], b.checked)) << "\n";
    }
  }
  return os.str();
}

}  // namespace habcast
