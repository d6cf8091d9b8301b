#pragma once
// Internal to the raster layer: habcast's GeoTIFF creation defaults merged with the user's options.
#include <string>
#include <utility>
#include <vector>

#include "raster/output_raster.hpp"

namespace habcast {

using CreationOption = std::pair<std::string, std::string>;  ///< key (upper case), value

/// habcast's defaults for `type`, overridden key by key (case-insensitively) by `user_options`.
/// Throws UsageError naming `output_path` for an option not of the form KEY=VALUE.
std::vector<CreationOption> merged_creation_options(OutputType type, const std::vector<std::string>& user_options,
                                                    const std::string& output_path);

/// Value of `key` in `options`, or empty.
std::string option_value(const std::vector<CreationOption>& options, const std::string& key);

}  // namespace habcast
