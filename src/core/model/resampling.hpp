#pragma once
// How a covariate's values reach a target grid they were not recorded on. The words are ours;
// each maps to one of GDAL's warp kernels in the raster layer (raster/alignment_plan.cpp).
#include <optional>
#include <string>

namespace habcast {

enum class Resampling { nearest, bilinear, cubic, average, mode };

const char* to_string(Resampling method);

/// The method named by `text` ("nearest", "bilinear", "cubic", "average", "mode"), or nothing.
std::optional<Resampling> parse_resampling(const std::string& text);

/// "nearest, bilinear, cubic, average, mode", for messages.
const char* resampling_names();

/// Whether the method forms new values from several source values (bilinear, cubic, average).
/// Categorical covariates refuse these: the mean of two class codes is no class.
bool mixes_values(Resampling method);

}  // namespace habcast
