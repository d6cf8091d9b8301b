#pragma once
// The training samples: covariate values at the sites the model was fitted on, read from the CSV
// the model file names. They define the training domain that predictions are checked against.
#include <Eigen/Core>
#include <cstddef>
#include <istream>
#include <string>
#include <vector>

#include "core/model/model_spec.hpp"

namespace habcast {

struct TrainingSamples {
  std::string path;
  /// rows = samples, one column per covariate of the ModelSpec (raw values; categorical columns
  /// hold the level code). NaN where the sample did not record the covariate.
  Eigen::ArrayXXd raw;
  /// Values left out as likely nodata markers or gross outliers (the rule is in the source and in
  /// docs/extrapolation-flags.md), with their lines; shown to the user as warnings.
  std::vector<std::string> warnings;
};

/// Limits of the training table (docs/limits.md): it is read line by line, never whole.
constexpr std::size_t kMaxTrainingSamples = 2'000'000;
constexpr std::size_t kMaxTrainingLineBytes = 1 << 20;

/// Reads the CSV at spec.training_samples. Throws InputError naming the model file's line when the
/// file is missing or unreadable, and the CSV's own line for a missing column, a non-numeric value,
/// or a level the model does not declare.
TrainingSamples read_training_samples(const ModelSpec& spec);

/// Same, from CSV text in memory or a stream (`path` for messages).
TrainingSamples parse_training_samples(const std::string& text, const std::string& path, const ModelSpec& spec);
TrainingSamples parse_training_samples(std::istream& in, const std::string& path, const ModelSpec& spec);

}  // namespace habcast
