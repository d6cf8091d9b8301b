#pragma once
// The words and numbers of `habcast describe`: a NicheDescription as readable text, and the same
// content as JSON for pipelines (field list in docs/describe.md).
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "core/model/model_spec.hpp"
#include "core/niche/niche_description.hpp"

namespace habcast::cli {

/// Plain-language warnings: extrapolated optimum, no optimum at all, curvature or tilt the data
/// cannot tell from zero, missing training samples or covariance.
std::vector<std::string> describe_warnings(const ModelSpec& spec, const NicheDescription& d, const DescribeSettings& settings);

nlohmann::ordered_json describe_json(const ModelSpec& spec, const NicheDescription& d, const DescribeSettings& settings,
                                     const std::vector<std::string>& warnings);

std::string describe_text(const ModelSpec& spec, const NicheDescription& d, const DescribeSettings& settings,
                          const std::vector<std::string>& warnings);

}  // namespace habcast::cli
