#include "predict/predict_folder.hpp"

#include <filesystem>

#include "core/base/error.hpp"
#include "pipeline/output_guard.hpp"
#include "pipeline/run_files.hpp"
#include "raster/output_raster.hpp"

namespace habcast {

namespace {

namespace fs = std::filesystem;

}  // namespace

const std::vector<std::string>& predict_owned_names() {
  static const std::vector<std::string> names = [] {
    std::vector<std::string> v;
    for (const char* raster : {"suitability.tif", "uncertainty.tif", "extrapolation.tif", "novelty.tif", "least_similar.tif"}) {
      v.emplace_back(raster);
      v.push_back(sidecar_of(raster));
    }
    for (const char* unit_file : {"units.gpkg", "units.csv", "units.json"}) v.emplace_back(unit_file);
    v.emplace_back("report.json");
    return v;
  }();
  return names;
}

void check_predict_files(const PredictOptions& options, const ModelSpec& spec, const std::vector<CovariateInput>& inputs) {
  RunFiles files;
  files.input("model file", spec.path);
  if (spec.training_samples) files.input("training samples", *spec.training_samples);
  for (const CovariateInput& in : inputs) files.input("raster of covariate " + in.name, in.path);
  for (const std::string& name : predict_owned_names())
    files.output("output " + name, (fs::path(options.output_dir) / name).string());
  files.output("--quicklook", options.quicklook_path);
  if (options.units.active()) {
    files.input("--units", options.units.layer.path);
    if (!options.units.threshold_text.empty() && fs::exists(options.units.threshold_text))
      files.input("--units-threshold", options.units.threshold_text);
  }
  files.output("--units-map", options.units.map_path);
  files.check();
}

PredictFolder::PredictFolder(const PredictOptions& options)
    : folder_(options.output_dir, predict_owned_names(), options.overwrite,
              " (the old outputs stay until the new ones are complete, then are replaced as a set), or choose "
              "another output folder with -o") {
  if (!options.quicklook_path.empty())
    refuse_to_clobber({options.quicklook_path}, options.overwrite, ", or choose another --quicklook path");
  if (!options.units.map_path.empty())
    refuse_to_clobber({options.units.map_path}, options.overwrite, ", or choose another --units-map path");
}

PredictCommit::PredictCommit(const PredictOptions& options)
    : OutputCommit(options.output_dir, "predict", predict_owned_names(), options.quicklook_path) {}

}  // namespace habcast
