#pragma once
// What `predict` does with its output folder around the prediction itself: the files it reads
// and writes checked against each other, the folder locked, leftovers of killed runs completed
// or removed, and the finished outputs committed as one set (pipeline/output_set.hpp).
#include <functional>
#include <memory>
#include <string>
#include <vector>

#include "core/model/model_spec.hpp"
#include "pipeline/folder_lock.hpp"
#include "predict/predict_options.hpp"
#include "predict/prediction_report.hpp"

namespace habcast {

class OutputRaster;

/// Every name predict owns in its output folder: all rasters it can write, their GDAL sidecars
/// and the report. A run replaces them as a set: those it does not write again are removed.
const std::vector<std::string>& predict_owned_names();

/// Resolves every input (model file, training samples, covariate rasters) and every output
/// (the owned names in the output folder, the quicklook) and throws UsageError when an output
/// is an input or another output.
void check_predict_files(const PredictOptions& options, const ModelSpec& spec, const std::vector<CovariateInput>& inputs);

/// The output folder, held for the run: created, locked, a set interrupted by a kill completed,
/// leftover temporaries removed, and existing outputs refused unless --overwrite.
class PredictFolder {
 public:
  explicit PredictFolder(const PredictOptions& options);
  PredictFolder(const PredictFolder&) = delete;
  PredictFolder& operator=(const PredictFolder&) = delete;

 private:
  std::unique_ptr<FolderLock> lock_;
};

/// The finished outputs, committed as one set: rasters (with their sidecars), the quicklook
/// when it lies in the output folder, and the report. Destroyed before commit(), it deletes
/// every temporary file it holds.
class PredictCommit {
 public:
  explicit PredictCommit(const PredictOptions& options);
  ~PredictCommit();
  PredictCommit(const PredictCommit&) = delete;
  PredictCommit& operator=(const PredictCommit&) = delete;

  /// Closes each raster and takes its temporary file (and sidecar) into the set.
  void take_rasters(const std::vector<OutputRaster*>& rasters);
  /// Where the finished raster `final_path` is now (its temporary name), for drawing from it.
  [[nodiscard]] std::string finished(const std::string& final_path) const;
  /// Draws the quicklook with `draw(png_path)` into a temporary file and adds it to the set (or,
  /// outside the output folder, commits it right after the set). Returns why it could not be
  /// drawn, or an empty string.
  std::string add_quicklook(const std::function<void(const std::string& png_path)>& draw);
  /// Has `write(temporary)` write the file that becomes `final_path` (in the output folder) and
  /// adds it to the set.
  void add_written(const std::string& final_path, const std::function<void(const std::string& temporary)>& write);
  /// Writes the report's text under a temporary name and adds it to the set.
  void add_report(const std::string& report_path, const std::string& text);
  /// Commits the set (pipeline/output_set.hpp), then the quicklook if it lies elsewhere.
  void commit();

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

}  // namespace habcast
