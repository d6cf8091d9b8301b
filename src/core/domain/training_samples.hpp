#pragma once
// The training samples: covariate values at the sites the model was fitted on, read from the CSV
// the model file names. They define the training domain that predictions are checked against.
#include <Eigen/Core>
#include <string>

#include "core/model/model_spec.hpp"

namespace habcast {

struct TrainingSamples {
  std::string path;
  /// rows = samples, one column per covariate of the ModelSpec (raw values; categorical columns
  /// hold the level code). NaN where the sample did not record the covariate.
  Eigen::ArrayXXd raw;
};

/// Reads the CSV at spec.training_samples. Throws InputError naming the model file's line when the
/// file is missing or unreadable, and the CSV's own line for a missing column, a non-numeric value,
/// or a level the model does not declare.
TrainingSamples read_training_samples(const ModelSpec& spec);

/// Same, from CSV text in memory (`path` for messages).
TrainingSamples parse_training_samples(const std::string& text, const std::string& path, const ModelSpec& spec);

}  // namespace habcast
