#include "predict/covariate_inputs.hpp"

#include "core/base/error.hpp"

namespace habcast {

std::string covariate_list(const ModelSpec& spec) {
  std::string s;
  for (const Covariate& c : spec.covariates) s += (s.empty() ? "" : ", ") + c.name;
  return s;
}

std::vector<CovariateInput> resolve_inputs(const ModelSpec& spec, const PredictOptions& options) {
  for (const auto& [name, path] : options.covariate_rasters) {
    (void)path;
    if (spec.covariate_index(name) < 0)
      throw UsageError("-c " + name + "=...: the model has no covariate \"" + name + "\"; its covariates are " +
                       covariate_list(spec));
  }
  std::vector<CovariateInput> inputs;
  for (const Covariate& c : spec.covariates) {
    CovariateInput in{c.name, "", c.band};
    if (auto it = options.covariate_rasters.find(c.name); it != options.covariate_rasters.end()) in.path = it->second;
    else if (c.raster) in.path = *c.raster;
    else
      throw UsageError("covariate \"" + c.name + "\" has no raster: pass -c " + c.name + "=FILE.tif, or set raster = " +
                       "\"FILE.tif\" in [covariates." + c.name + "] of " + spec.path);
    inputs.push_back(in);
  }
  return inputs;
}

}  // namespace habcast
