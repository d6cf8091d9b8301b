#pragma once
// `habcast describe M1.toml M2.toml ...`: each model's niche side by side, and the model-averaged
// optimum when every model has one over the same curved covariates (docs/model-sets.md).
#include <iosfwd>
#include <string>
#include <vector>

#include "core/niche/niche_description.hpp"

namespace habcast::cli {

/// Describes every model with `settings`; prints text or JSON on `out`. `weights` empty: Akaike
/// weights from each file's aic (refused, naming the file, when one is missing).
int run_describe_model_set(const std::vector<std::string>& models, const std::vector<double>& weights,
                           const DescribeSettings& settings, bool json, std::ostream& out);

}  // namespace habcast::cli
