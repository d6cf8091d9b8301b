#include "predict/change_rasters.hpp"

#include <cstdio>
#include <filesystem>

#include "core/model/float_nodata.hpp"
#include "predict/prediction_report.hpp"

namespace habcast {

namespace {

namespace fs = std::filesystem;

std::vector<std::pair<std::string, std::string>> change_metadata(const std::string& models, const Scenario& s,
                                                                  const std::string& version) {
  std::vector<std::pair<std::string, std::string>> m{{"HABCAST_VERSION", version},
                                                     {"HABCAST_MODEL", models},
                                                     {"HABCAST_SCENARIO", s.name}};
  if (!s.description.empty()) m.emplace_back("HABCAST_SCENARIO_DESCRIPTION", s.description);
  std::string replaced;
  for (const auto& [c, path] : s.rasters) replaced += (replaced.empty() ? "" : "; ") + c + "=" + path;
  m.emplace_back("HABCAST_SCENARIO_RASTERS", replaced);
  m.emplace_back("HABCAST_CAUTION",
                 "Model output, not ground truth. A change where either side is extrapolated (see change_class.tif "
                 "and both extrapolation.tif) rests on the model beyond its training data.");
  return m;
}

}  // namespace

void ChangeRasters::write(const Window& w, const ChangeOutputs& c) {
  change->write(1, w, c.change.data());
  change->write(2, w, c.se.data());
  change->write(3, w, c.lower.data());
  change->write(4, w, c.upper.data());
  change->write(5, w, c.p_decline.data());
  change->flush_completed_blocks(w);
  if (classes) {
    classes->write(1, w, c.classes.data());
    classes->flush_completed_blocks(w);
  }
}

const std::vector<std::string>& change_owned_names() {
  static const std::vector<std::string> names{"change.tif",       sidecar_of("change.tif"), "change_class.tif",
                                              sidecar_of("change_class.tif"), "change_class.png", "change_class.svg",
                                              "change_class.pdf"};
  return names;
}

ChangeRasters create_change_rasters(const PredictOptions& options, const ModelSpec& spec, const std::string& models, const Scenario& scenario,
                                    const std::string& folder, const RasterGrid& grid, std::optional<double> threshold,
                                    const std::string& version, int threads) {
  const std::string change_path = (fs::path(folder) / "change.tif").string();
  const std::string class_path = (fs::path(folder) / "change_class.tif").string();

  const std::string units = spec.family == Family::binomial ? "probability" : spec.response;
  char pct[32];
  std::snprintf(pct, sizeof pct, "%g%%", options.level * 100.0);
  ChangeRasters r;
  OutputSpec c;
  c.final_path = change_path;
  c.type = OutputType::float32;
  c.nodata = kFloatNodata;
  c.bands = {{"change of the prediction, scenario minus baseline (response scale)", units},
             {"standard error of the change, sqrt((g_s-g_b)' V (g_s-g_b)) with g = d mu / d beta", units},
             {std::string("lower ") + pct + " confidence limit of the change (normal approximation)", units},
             {std::string("upper ") + pct + " confidence limit of the change (normal approximation)", units},
             {"probability that the prediction fell, Phi(-change / se) (normal approximation)", "probability"}};
  c.creation_options = options.creation_options;
  c.creation_options.insert(c.creation_options.begin(), "NUM_THREADS=" + std::to_string(threads));
  c.metadata = change_metadata(models, scenario, version);
  c.metadata.emplace_back("HABCAST_CONFIDENCE_LEVEL", format_value(options.level));
  r.change = std::make_unique<OutputRaster>(c, grid);
  if (threshold) {
    OutputSpec k;
    k.final_path = class_path;
    k.type = OutputType::uint8;
    k.nodata = change_class::nodata;
    k.bands = {{"change class at the threshold; +16 baseline extrapolated, +32 scenario extrapolated", ""}};
    k.creation_options = c.creation_options;
    k.metadata = c.metadata;
    k.metadata.emplace_back("HABCAST_THRESHOLD", format_value(*threshold));
    k.metadata.emplace_back("HABCAST_CLASS_CODES",
                            "1=stable unsuitable; 2=stable suitable; 3=gain; 4=loss; 5=crosses the threshold but the "
                            "change's confidence interval includes zero (not distinguishable); +16 baseline pixel "
                            "extrapolated; +32 scenario pixel extrapolated; 255=no data");
    for (const auto& e : change_class::class_colour_table()) k.colours.push_back({e.value, e.r, e.g, e.b, e.a, e.label});
    r.classes = std::make_unique<OutputRaster>(k, grid);
  }
  return r;
}

}  // namespace habcast
