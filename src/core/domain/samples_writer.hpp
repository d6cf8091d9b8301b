#pragma once
// The training samples CSV that `habcast fit` writes beside the model: one row per observation
// used, with its coordinates, response and the raw covariate values, readable by
// read_training_samples (docs/model-format.md).
#include <Eigen/Core>
#include <string>
#include <vector>

#include "core/model/model_spec.hpp"

namespace habcast {

struct SampleColumn {
  std::string name;
  std::vector<double> values;
};

/// `raw`: rows x spec.covariates raw values. `leading` columns (x, y, response, ...) come first;
/// `labels` (one per row, e.g. "points.csv:17") go into a first column named "source".
std::string write_samples_csv(const ModelSpec& spec, const Eigen::ArrayXXd& raw, const std::vector<SampleColumn>& leading,
                              const std::vector<std::string>& labels, const std::vector<std::string>& comments);

/// Shortest decimal text that reads back as the same double.
std::string shortest_number(double value);

}  // namespace habcast
