#pragma once
// Raw covariate values at observation sites -> the design matrix of the model's terms, through the
// same model-value mapping and TermPlan that predict uses, so a fitted coefficient means the same
// thing when it is applied to a raster.
#include <Eigen/Core>
#include <cstdint>
#include <vector>

#include "core/model/model_spec.hpp"

namespace habcast {

struct Design {
  Eigen::MatrixXd X;                 ///< rows x terms (rows that are not usable are zero)
  Eigen::VectorXd offset;            ///< offset term's column plus the constant offset
  std::vector<std::uint8_t> usable;  ///< 0 where a value is missing, outside a transform, or a term undefined
  std::int64_t missing = 0;          ///< rows with a missing (NaN) covariate the model uses
  std::int64_t outside_transform = 0;
  std::int64_t undefined_term = 0;
};

/// `raw`: rows x spec.covariates raw values (categorical columns hold level codes; NaN = missing).
Design build_design(const ModelSpec& spec, const Eigen::ArrayXXd& raw);

/// Sets center and scale of every continuous covariate to the mean and standard deviation (n - 1
/// denominator, as R's sd()) of its transformed raw values over the rows where `use` is 1. Throws
/// InputError when a covariate is constant over those rows (it cannot be estimated).
void standardise_covariates(ModelSpec& spec, const Eigen::ArrayXXd& raw, const std::vector<std::uint8_t>& use);

}  // namespace habcast
