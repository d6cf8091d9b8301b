#pragma once
// The parts of a GLM family that fitting needs beyond the link: variance function, deviance
// residuals, the family's AIC term, starting values, and which responses the family accepts.
// Each follows R's stats::family objects (binomial(), poisson(), gaussian()) so that fits match
// R's glm() number for number.
#include <Eigen/Core>
#include <optional>
#include <string>

#include "core/model/model_spec.hpp"

namespace habcast {

/// V(mu): mu(1 - mu), mu, or 1.
double family_variance(Family family, double mu);

/// Sum over rows of the weighted squared deviance residuals (the deviance).
double family_deviance(Family family, const Eigen::VectorXd& y, const Eigen::VectorXd& mu, const Eigen::VectorXd& weights);

/// R's family$aic(y, n, mu, wt, dev), i.e. -2 log-likelihood (plus 2 for gaussian's dispersion);
/// the caller adds 2 x rank. Binomial responses are proportions with `weights` trials.
double family_aic(Family family, const Eigen::VectorXd& y, const Eigen::VectorXd& mu, const Eigen::VectorXd& weights,
                  double deviance);

/// R's family$initialize: the starting fitted values of IRLS.
Eigen::VectorXd family_starting_mu(Family family, const Eigen::VectorXd& y, const Eigen::VectorXd& weights);

/// The first row whose response (or weight) the family cannot take, and why in plain words; nullopt
/// when every row is fine. Weights must be positive and finite.
struct ResponseProblem {
  Eigen::Index row = 0;
  std::string why;
};
std::optional<ResponseProblem> check_response(Family family, Link link, const Eigen::VectorXd& y,
                                              const Eigen::VectorXd& weights);

}  // namespace habcast
