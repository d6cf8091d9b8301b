#include "core/domain/training_support.hpp"

#include <cmath>

#include "core/domain/training_domain.hpp"
#include "core/model/model_values.hpp"

namespace habcast {

SupportCheck check_training_support(const ModelSpec& spec, const TrainingSamples& samples,
                                    const std::vector<int>& covariates, const Eigen::VectorXd& raw_point) {
  const TrainingDomain domain(spec, samples);
  SupportCheck check;
  check.method = "training range of each covariate";
  for (std::size_t i = 0; i < covariates.size(); ++i) {
    const CovariateRange& r = domain.range(static_cast<std::size_t>(covariates[i]));
    CovariateSupport s;
    s.covariate = covariates[i];
    s.value = raw_point[static_cast<Eigen::Index>(i)];
    s.min = r.min;
    s.max = r.max;
    s.side = s.value < r.min ? -1 : (s.value > r.max ? 1 : 0);
    if (s.side != 0 || !std::isfinite(s.value)) check.inside = false;
    check.covariates.push_back(s);
  }
  return check;
}

std::vector<Point2> training_points(const ModelSpec& spec, const TrainingSamples& samples, int first, int second) {
  const Covariate& a = spec.covariates[static_cast<std::size_t>(first)];
  const Covariate& b = spec.covariates[static_cast<std::size_t>(second)];
  std::vector<Point2> points;
  for (Eigen::Index r = 0; r < samples.raw.rows(); ++r) {
    const Point2 p{model_value(a, samples.raw(r, first)), model_value(b, samples.raw(r, second))};
    if (std::isfinite(p.x) && std::isfinite(p.y)) points.push_back(p);
  }
  return points;
}

}  // namespace habcast
