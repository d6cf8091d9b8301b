#include "predict/prediction_report.hpp"

#include <cmath>
#include <cstdio>
#include <sstream>

#include "core/base/number_text.hpp"
#include "core/domain/extrapolation_flags.hpp"
#include "raster/library_versions.hpp"

namespace habcast {

std::string format_percent(double share) {
  const double pct = share * 100.0;
  if (pct > 0.0 && pct < 0.05) return "< 0.1 %";
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.1f %%", pct);
  return buf;
}

std::string format_value(double value) { return significant(value, 4); }

std::string format_area(std::int64_t pixels, const RasterGrid& grid) {
  if (!grid.has_geotransform) return "";
  const double area = static_cast<double>(pixels) * grid.pixel_area();
  if (grid.linear_units_to_metre > 0.0) {
    const double ha = area * grid.linear_units_to_metre * grid.linear_units_to_metre / 1e4;
    if (ha < 10.0) return format_value(ha) + " ha";
    // Whole hectares with thousands separators: "2,310 ha".
    std::string digits = std::to_string(static_cast<long long>(std::llround(ha)));
    for (auto i = static_cast<long>(digits.size()) - 3; i > 0; i -= 3) digits.insert(static_cast<std::size_t>(i), ",");
    return digits + " ha";
  }
  return format_value(area) + " square map units";
}

namespace {

double share(std::int64_t part, std::int64_t whole) {
  return whole > 0 ? static_cast<double>(part) / static_cast<double>(whole) : 0.0;
}

std::string with_units(double value, const std::string& units) {
  return units.empty() ? format_value(value) : format_value(value) + " " + units;
}

std::string level_name(const Covariate& c, std::int64_t code) {
  const int i = c.level_index(code);
  return i >= 0 ? c.levels[static_cast<std::size_t>(i)].name + " (code " + std::to_string(code) + ")"
                : "code " + std::to_string(code) + " (not a level of the model)";
}

std::string share_and_area(std::int64_t pixels, const ReportContext& ctx) {
  const std::string area = format_area(pixels, ctx.grid);
  return format_percent(share(pixels, ctx.tally->domain.checked)) + " of valid pixels" +
         (area.empty() ? "" : " (" + area + ")");
}

std::string joined(const std::vector<std::string>& items) {
  std::string s;
  for (std::size_t i = 0; i < items.size(); ++i) s += (i == 0 ? "" : (i + 1 == items.size() ? " and " : ", ")) + items[i];
  return s;
}

void novelty_warnings(const ReportContext& ctx, std::vector<std::string>& out) {
  const ModelSpec& spec = *ctx.spec;
  const NoveltyModel& nov = *ctx.novelty;
  const DomainTally& d = ctx.tally->domain;
  for (const std::string& note : nov.notes()) out.push_back(note);
  if (d.cause[1] > 0)
    out.push_back(share_and_area(d.cause[1], ctx) +
                  " have every covariate within its training range, but a combination outside the convex hull of "
                  "the training samples; predictions there carry the fitted surface beyond any sampled combination.");
  for (std::size_t p = 0; p < nov.pairs().size(); ++p) {
    if (p >= d.pair_outside.size() || d.pair_outside[p] == 0) continue;
    const CovariatePair& pair = nov.pairs()[p];
    const std::string a = spec.covariates[static_cast<std::size_t>(pair.a)].name;
    const std::string b = spec.covariates[static_cast<std::size_t>(pair.b)].name;
    out.push_back(share_and_area(d.pair_outside[p], ctx) + " combine " + a + " and " + b +
                  " in a way never seen together in training (each within its range, the pair outside their joint "
                  "hull); predictions there lean on the term" + (pair.terms.size() > 1 ? "s " : " ") +
                  joined(pair.terms) + " beyond the data.");
  }
  if (d.cause[3] > 0)
    out.push_back(share_and_area(d.cause[3], ctx) + " have every covariate in range but lie farther from the centre "
                  "of the training samples (Mahalanobis distance) than " +
                  (nov.options().nt2_threshold == 1.0 ? std::string("any training sample")
                                                      : format_value(nov.options().nt2_threshold) +
                                                            " times the farthest training sample") +
                  " (NT2): an unusual combination of covariates.");
}

void range_warnings(const ReportContext& ctx, std::vector<std::string>& out) {
  const ModelSpec& spec = *ctx.spec;
  const DomainTally& d = ctx.tally->domain;
  for (std::size_t c = 0; c < spec.covariates.size(); ++c) {
    const Covariate& cov = spec.covariates[c];
    if (!cov.categorical && (d.below[c] > 0 || d.above[c] > 0)) {
      std::string sides;
      const auto [lo, hi] = ctx.domain->flag_range(c);  // the training range, or a spline's knots inside it
      if (d.below[c] > 0)
        sides += format_percent(share(d.below[c], d.checked)) + " below " + with_units(lo, cov.units);
      if (d.above[c] > 0)
        sides += std::string(sides.empty() ? "" : ", ") + format_percent(share(d.above[c], d.checked)) + " above " +
                 with_units(hi, cov.units);
      const bool spline = cov.natural_spline || cov.bspline;
      if (ctx.domain->offset_only(c))
        out.push_back(format_percent(share(d.below[c] + d.above[c], d.checked)) +
                      " of valid pixels lie outside the training range of " + cov.name + " (" + sides + "). " +
                      cov.name + " enters only the offset, so it is left out of the joint checks and sets no flag in "
                      "extrapolation.tif; the prediction there scales with it as the offset says, beyond the values the "
                      "model was fitted with.");
      else
        out.push_back(format_percent(share(d.below[c] + d.above[c], d.checked)) +
                      " of valid pixels lie outside the training range of " + cov.name +
                      (spline ? " or beyond its spline's boundary knots" : "") + " (" + sides +
                      "); predictions there extrapolate the fitted curve and may be badly wrong." +
                      (spline ? " Beyond the boundary knots the spline is its own extension (ns: a straight line; "
                                "bs: its last polynomial piece), shaped by no data: extrapolation by construction."
                              : ""));
    }
    if (cov.categorical && d.unseen[c] > 0) {
      std::string codes;
      for (const auto& [code, n] : d.unseen_codes[c]) {
        (void)n;
        codes += (codes.empty() ? "" : ", ") + level_name(cov, code);
      }
      out.push_back(format_percent(share(d.unseen[c], d.checked)) + " of valid pixels have a class of " + cov.name +
                    " that is absent from the training samples: " + codes +
                    ". Classes the model does not declare get no prediction (nodata); declared but unsampled "
                    "classes are predicted from their coefficients alone.");
    }
  }
  if (ctx.novelty) novelty_warnings(ctx, out);
  if (d.flagged > 0)
    out.push_back("In all, " + format_percent(share(d.flagged, d.checked)) +
                  " of valid pixels are flagged in extrapolation.tif. Do not base decisions on the map there "
                  "without field checks.");
}

}  // namespace

std::vector<std::string> prediction_warnings(const ReportContext& ctx) {
  std::vector<std::string> out;
  const PredictionTally& t = *ctx.tally;
  if (!ctx.spec->covariance)
    out.push_back("The model file has no covariance matrix, so no uncertainty.tif was written; the map shows "
                  "point predictions without any measure of their precision.");
  if (!ctx.domain)
    out.push_back("The model file names no training samples ([training] samples), so extrapolation was not "
                  "checked and no extrapolation.tif was written. The map may extrapolate anywhere.");
  else
    range_warnings(ctx, out);
  const LowCertaintyRule certainty = ctx.certainty ? *ctx.certainty : LowCertaintyRule::for_model(*ctx.spec, nullptr);
  if (ctx.spec->covariance && certainty.kind() == LowCertaintyRule::Kind::unavailable)
    out.push_back("No pixel was judged for low certainty. A gaussian mean with an identity link can have any sign, so "
                  "its interval is judged against the spread of the fitted mean over the training samples, and the "
                  "model file names none (or the fitted mean is the same at every sample). Read uncertainty.tif "
                  "beside the map.");
  if (ctx.spec->covariance && t.low_certainty > 0) {
    const std::string what = certainty.description();
    out.push_back(format_percent(share(t.low_certainty, t.predicted)) + " of predicted pixels have " + what +
                  " (level " + format_value(ctx.level) + "); read them as uncertain, not as values (uncertainty.tif).");
  }
  if (t.moved_off_nodata > 0) {
    const bool one = t.moved_off_nodata == 1;
    out.push_back(count_of(t.moved_off_nodata, "predicted value") + " (suitability or limits) equalled the nodata marker " +
                  format_value(static_cast<double>(kFloatNodata)) + (one ? " and was" : " and were") +
                  " stored one Float32 step towards zero, so " + (one ? "it does" : "they do") + " not read as missing data.");
  }
  const std::int64_t with_data = t.pixels - t.missing_input;
  const std::int64_t unpredicted = with_data - t.predicted;
  if (unpredicted > 0) {
    std::ostringstream os;
    os << format_percent(share(unpredicted, with_data)) << " of pixels with data got no prediction (";
    std::string parts;
    auto add = [&](std::int64_t n, const char* why) {
      if (n > 0) parts += (parts.empty() ? "" : ", ") + std::to_string(n) + " " + why;
    };
    add(t.unknown_level, "with a class the model does not declare");
    add(t.outside_transform, "outside a covariate transform's domain");
    add(t.undefined_term, "where a term is undefined");
    add(t.not_representable, "with a response too large for Float32");
    os << parts << ").";
    out.push_back(os.str());
  }
  return out;
}

nlohmann::ordered_json prediction_report(const ReportContext& ctx, const std::vector<std::string>& warnings) {
  using json = nlohmann::ordered_json;
  const ModelSpec& spec = *ctx.spec;
  const PredictionTally& t = *ctx.tally;
  json report;
  report["habcast_version"] = ctx.tool_version;
  for (const LibraryVersion& lib : library_versions()) report["libraries"][lib.name] = lib.in_use;
  report["command"] = "predict";
  report["started_utc"] = ctx.started_utc;
  report["elapsed_seconds"] = ctx.elapsed_seconds;
  report["threads"] = ctx.threads;

  json model;
  model["path"] = spec.path;
  model["name"] = spec.name;
  model["response"] = spec.response;
  model["family"] = to_string(spec.family);
  model["link"] = to_string(spec.link);
  model["terms"] = spec.terms;
  model["estimates"] = spec.estimates;
  model["has_covariance"] = spec.covariance.has_value();
  model["training_samples"] = spec.training_samples ? json(*spec.training_samples) : json(nullptr);
  model["training_sample_count"] = ctx.domain ? json(ctx.domain->sample_count()) : json(nullptr);
  report["model"] = model;

  json inputs = json::array();
  for (std::size_t c = 0; c < ctx.inputs.size(); ++c) {
    const Covariate& cov = spec.covariates[c];
    json in{{"covariate", cov.name}, {"path", ctx.inputs[c].path}, {"band", ctx.inputs[c].band},
            {"type", cov.categorical ? "categorical" : "continuous"}, {"units", cov.units}};
    if (ctx.domain) {
      if (cov.categorical) {
        in["levels_seen_in_training"] = ctx.domain->levels_seen(c);
      } else {
        in["training_min"] = ctx.domain->range(c).min;
        in["training_max"] = ctx.domain->range(c).max;
      }
    }
    inputs.push_back(in);
  }
  report["inputs"] = inputs;

  const RasterGrid& g = ctx.grid;
  json grid{{"width", g.width}, {"height", g.height}, {"crs", g.crs_name}, {"crs_wkt", g.crs_wkt},
            {"geotransform", g.geotransform}, {"pixel_area", g.pixel_area()}, {"linear_units", g.linear_units}};
  report["grid"] = grid;

  json outputs = json::object();
  for (const auto& [role, path] : ctx.outputs) outputs[role] = path;
  report["outputs"] = outputs;
  report["confidence_level"] = ctx.level;

  const std::int64_t with_data = t.pixels - t.missing_input;
  const LowCertaintyRule certainty = ctx.certainty ? *ctx.certainty : LowCertaintyRule::for_model(spec, nullptr);
  report["pixels"] = {{"total", t.pixels},
                      {"missing_input", t.missing_input},
                      {"with_data", with_data},
                      {"predicted", t.predicted},
                      {"low_certainty", t.low_certainty},
                      {"low_certainty_rule", certainty.description()},
                      {"unknown_level", t.unknown_level},
                      {"outside_transform", t.outside_transform},
                      {"undefined_term", t.undefined_term},
                      {"not_representable", t.not_representable},
                      {"moved_off_nodata", t.moved_off_nodata}};
  if (t.predicted > 0)
    report["response"] = {{"mean", t.sum_response / static_cast<double>(t.predicted)},
                          {"min", t.min_response},
                          {"max", t.max_response}};

  if (ctx.domain) {
    const DomainTally& d = t.domain;
    json ex;
    ex["checked_pixels"] = d.checked;
    ex["flagged_pixels"] = d.flagged;
    ex["flagged_share"] = share(d.flagged, d.checked);
    // Area only makes sense in a projected CRS with known linear units.
    if (g.linear_units_to_metre > 0.0 && g.has_geotransform) {
      const double pixel_m2 = g.pixel_area() * g.linear_units_to_metre * g.linear_units_to_metre;
      ex["flagged_area_ha"] = static_cast<double>(d.flagged) * pixel_m2 / 1e4;
      ex["checked_area_ha"] = static_cast<double>(d.checked) * pixel_m2 / 1e4;
    }
    const bool metric = g.linear_units_to_metre > 0.0 && g.has_geotransform;
    const double pixel_m2 = metric ? g.pixel_area() * g.linear_units_to_metre * g.linear_units_to_metre : 0.0;
    auto add_area = [&](json& j, std::int64_t pixels) {
      if (!g.has_geotransform) return;
      j["area"] = static_cast<double>(pixels) * g.pixel_area();
      if (metric) j["area_ha"] = static_cast<double>(pixels) * pixel_m2 / 1e4;
    };
    const NoveltyModel* nov = ctx.novelty;
    const bool active = nov && nov->active();
    json causes = json::object();
    for (int b = 0; b < flag::cause_count; ++b) {
      bool checked_here = b == 0 || b == 2;
      std::string method = b == 0 ? "training minimum and maximum per continuous covariate"
                                  : "categorical levels present in the training samples";
      if (b == 1) {
        checked_here = active && nov->hull().has_value();
        method = nov ? nov->hull_method() : "not checked";
      } else if (b == 3) {
        checked_here = active && nov->options().nt2;
        method = checked_here ? "NT2 (Mesgaran et al. 2014) > " + format_value(nov->options().nt2_threshold)
                              : "not checked";
      } else if (b == 4) {
        checked_here = active && nov->options().pairs && !nov->pairs().empty();
        method = checked_here ? "exact 2-D convex hulls of covariate pairs that share a term"
                              : (active && nov->options().pairs ? "no term combines two continuous covariates"
                                                                : "not checked");
      }
      json c{{"bit_value", 1 << b}, {"checked", checked_here}, {"method", method},
             {"pixels", d.cause[b]}, {"share", share(d.cause[b], d.checked)}};
      add_area(c, d.cause[b]);
      causes[flag_name(b)] = c;
    }
    ex["causes"] = causes;
    if (nov) {
      json n;
      std::string checks = "range";
      for (auto [on, name] : {std::pair{nov->options().hull, "hull"}, {nov->options().pairs, "pairs"},
                              {nov->options().nt2, "nt2"}, {nov->options().mess, "mess"}})
        if (on) checks += std::string(",") + name;
      n["checks"] = checks;
      json covs = json::array();
      for (int c : nov->covariates()) covs.push_back(spec.covariates[static_cast<std::size_t>(c)].name);
      n["covariates"] = covs;
      n["space"] = "model values (after transform and standardisation)";
      n["complete_training_samples"] = nov->complete_samples();
      n["hull_method"] = nov->hull_method();
      if (nov->hull()) {
        n["hull"] = {{"dimensions", nov->hull()->dim()}, {"rank", nov->hull()->rank()},
                     {"facets", nov->hull()->facet_count()}, {"relative_tolerance", nov->hull()->tolerance()}};
      }
      if (nov->options().nt2)
        n["nt2"] = {{"threshold", nov->options().nt2_threshold}, {"largest_training_distance", nov->nt2_max_distance()},
                    {"pixels_above_threshold", d.nt2_above}, {"share_above_threshold", share(d.nt2_above, d.checked)}};
      if (nov->options().mess) n["mess"] = {{"negative_pixels", d.mess_negative}, {"negative_share", share(d.mess_negative, d.checked)}};
      json pairs = json::array();
      for (std::size_t p = 0; p < nov->pairs().size(); ++p) {
        const CovariatePair& pair = nov->pairs()[p];
        const std::int64_t outside = p < d.pair_outside.size() ? d.pair_outside[p] : 0;
        json j{{"covariates", {spec.covariates[static_cast<std::size_t>(pair.a)].name,
                               spec.covariates[static_cast<std::size_t>(pair.b)].name}},
               {"terms", pair.terms},
               {"hull_vertices_rank", nov->pair_hulls()[p].rank()},
               {"outside_pixels", outside},
               {"outside_share", share(outside, d.checked)}};
        add_area(j, outside);
        pairs.push_back(j);
      }
      n["pairs"] = pairs;
      n["notes"] = nov->notes();
      ex["novelty"] = n;
    }
    json per_cov = json::object();
    for (std::size_t c = 0; c < spec.covariates.size(); ++c) {
      const Covariate& cov = spec.covariates[c];
      json e;
      if (cov.categorical) {
        e["unseen_level_pixels"] = d.unseen[c];
        e["unseen_level_share"] = share(d.unseen[c], d.checked);
        json codes = json::object();
        for (const auto& [code, n] : d.unseen_codes[c]) codes[std::to_string(code)] = n;
        e["unseen_codes"] = codes;
      } else {
        e["offset_only"] = ctx.domain->offset_only(c);
        e["below_pixels"] = d.below[c];
        e["above_pixels"] = d.above[c];
        e["below_share"] = share(d.below[c], d.checked);
        e["above_share"] = share(d.above[c], d.checked);
        e["outside_share"] = share(d.below[c] + d.above[c], d.checked);
        add_area(e, d.below[c] + d.above[c]);
        if (nov && nov->options().mess) {
          e["least_similar_pixels"] = d.least_similar[c];
          e["least_similar_share"] = share(d.least_similar[c], d.checked);
        }
      }
      per_cov[cov.name] = e;
    }
    ex["covariates"] = per_cov;
    report["extrapolation"] = ex;
  } else {
    report["extrapolation"] = nullptr;
  }
  report["warnings"] = warnings;
  report["caution"] =
      "Model predictions are not ground truth. Verify in the field before acting, and follow local regulations and "
      "licensed professional practice.";
  return report;
}

}  // namespace habcast
