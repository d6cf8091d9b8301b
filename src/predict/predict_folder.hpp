#pragma once
// What `predict` does with its output folder around the prediction itself: the files it reads
// and writes checked against each other, and its output folder and commit
// (pipeline/output_folder.hpp) with the names predict owns.
#include <string>
#include <vector>

#include "core/model/model_spec.hpp"
#include "pipeline/output_folder.hpp"
#include "predict/predict_options.hpp"
#include "predict/prediction_report.hpp"

namespace habcast {

/// Every name predict owns in its output folder: all rasters it can write, their GDAL sidecars
/// and the report. A run replaces them as a set: those it does not write again are removed.
const std::vector<std::string>& predict_owned_names();

/// Resolves every input (model file, training samples, covariate rasters) and every output
/// (the owned names in the output folder, the quicklook) and throws UsageError when an output
/// is an input or another output.
void check_predict_files(const PredictOptions& options, const ModelSpec& spec, const std::vector<CovariateInput>& inputs);

/// The output folder, held for the run: created, locked, a set interrupted by a kill completed,
/// leftover temporaries removed, and existing outputs (and --quicklook, --units-map) refused
/// unless --overwrite.
class PredictFolder {
 public:
  explicit PredictFolder(const PredictOptions& options);
  PredictFolder(const PredictFolder&) = delete;
  PredictFolder& operator=(const PredictFolder&) = delete;

 private:
  OutputFolder folder_;
};

/// predict's finished outputs, committed as one set (pipeline/output_folder.hpp); the quicklook
/// is the picture that may lie outside the output folder.
class PredictCommit : public OutputCommit {
 public:
  explicit PredictCommit(const PredictOptions& options);
};

}  // namespace habcast
