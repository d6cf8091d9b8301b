#pragma once
// Raw covariate values (raster units) to model values: transform and standardisation for
// continuous covariates, level index for categorical ones.
#include <Eigen/Core>
#include <cstdint>

#include "core/model/model_spec.hpp"
#include "core/model/term_plan.hpp"

namespace habcast {

struct ModelValueCounts {
  std::int64_t outside_transform = 0;  ///< raw value outside the covariate's transform (log of <= 0)
  std::int64_t unknown_level = 0;      ///< categorical code not declared among the model's levels
};

/// Fills out(0..rows-1, c) from raw(first + i, c) for every covariate. Where a raw value cannot be
/// mapped (a transform outside its domain, an undeclared level of a covariate the model uses)
/// predict_valid[i] is set to 0 and the pixel is counted. Rows with predict_valid[i] == 0 on entry
/// are left as zeros and not counted.
void to_model_values(const ModelSpec& spec, const TermPlan& plan, const Eigen::ArrayXXd& raw, Eigen::Index first,
                     Eigen::Index rows, ModelValues& out, std::uint8_t* predict_valid, ModelValueCounts& counts);

/// The model value of one raw value of continuous covariate `c` (NaN outside the transform's domain).
double model_value(const Covariate& c, double raw);

/// The raw value whose model value is `value` (inverse of model_value), for reporting in raw units.
double raw_value(const Covariate& c, double value);

}  // namespace habcast
