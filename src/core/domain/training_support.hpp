#pragma once
// Is a point of covariate space supported by training data? describe asks this of the optimum so
// it can warn when the optimum is an extrapolation of the fitted shape rather than a place where
// the species was actually sampled.
//
// Seam: this version checks each covariate's training range, and (for a pair) the 2-D convex hull
// of the training points. A joint check in all covariates (the training hull of TrainingDomain)
// replaces the range test inside check_training_support() without changing its callers.
#include <Eigen/Core>
#include <string>
#include <vector>

#include "core/domain/training_samples.hpp"
#include "core/model/model_spec.hpp"
#include "core/numeric/convex_hull_2d.hpp"

namespace habcast {

struct CovariateSupport {
  int covariate = -1;  ///< index into ModelSpec::covariates
  double value = 0.0;  ///< raw units
  double min = 0.0;    ///< training range, raw units
  double max = 0.0;
  int side = 0;        ///< -1 below the training minimum, +1 above the maximum, 0 inside
};

struct SupportCheck {
  std::string method;  ///< what was checked, in words ("training range of each covariate")
  bool inside = true;  ///< inside for every check made
  std::vector<CovariateSupport> covariates;
};

/// Checks `raw_point` (raw units, one value per entry of `covariates`) against the training samples.
SupportCheck check_training_support(const ModelSpec& spec, const TrainingSamples& samples,
                                    const std::vector<int>& covariates, const Eigen::VectorXd& raw_point);

/// The training samples of two continuous covariates in model units (transform and
/// standardisation applied); samples missing either value are skipped.
std::vector<Point2> training_points(const ModelSpec& spec, const TrainingSamples& samples, int first, int second);

}  // namespace habcast
