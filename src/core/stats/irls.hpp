#pragma once
// Maximum-likelihood fit of a GLM by iteratively reweighted least squares (IRLS; McCullagh &
// Nelder 1989, Generalized Linear Models, 2nd ed., section 2.5), following the steps of R's
// glm.fit so that estimates, standard errors, deviance and AIC agree with R's glm(). Pure math:
// the caller builds X with the TermPlan and adds file context to the messages.
#include <Eigen/Core>
#include <string>
#include <vector>

#include "core/model/model_spec.hpp"

namespace habcast {

/// Where the covariance matrix (X'WX)^-1 takes its working weights W.
enum class CovarianceWeights {
  last_iteration,  ///< R's glm()/vcov(): the weights of the last weighted least-squares solve, i.e.
                   ///< at the coefficients before the final update (fit$qr)
  estimate,        ///< the weights at the final estimate: the inverse information at the estimate
};

struct IrlsOptions {
  /// R's glm.control() defaults: maxit 25; converged when |dev - dev_old| / (|dev| + 0.1) < 1e-8.
  int max_iterations = 25;
  double tolerance = 1e-8;
  CovarianceWeights covariance = CovarianceWeights::last_iteration;
  /// Relative residual norm under which a column counts as a combination of earlier ones.
  double alias_tolerance = 1e-10;

  /// The tighter fit (`habcast fit --tight`): tolerance 1e-10, up to 50 iterations, covariance
  /// at the final estimate. Estimates sit closer to the maximum; standard errors then differ from
  /// R's default glm() by the size of its last update (docs/fit-and-evaluate.md gives numbers).
  static IrlsOptions tight() {
    IrlsOptions o;
    o.max_iterations = 50;
    o.tolerance = 1e-10;
    o.covariance = CovarianceWeights::estimate;
    return o;
  }
};

struct GlmProblem {
  Eigen::MatrixXd X;                     ///< n x p design matrix (TermPlan order)
  Eigen::VectorXd y;                     ///< response: 0/1 or proportion, count, or value
  Eigen::VectorXd weights;               ///< prior weights (> 0); empty means all 1
  Eigen::VectorXd offset;                ///< added to the linear predictor; empty means 0
  std::vector<std::string> term_names;   ///< p labels, for messages
  /// Optional n labels of the observations ("points.csv:17"), used in messages instead of "row i".
  std::vector<std::string> observation_labels;
  int intercept_column = -1;             ///< column of the intercept, or -1
  Family family = Family::binomial;
  Link link = Link::logit;
};

struct GlmFit {
  Eigen::VectorXd coefficients;
  Eigen::VectorXd std_errors;
  Eigen::MatrixXd covariance;   ///< dispersion x (X'WX)^-1, W as IrlsOptions::covariance says
  Eigen::VectorXd eta;          ///< fitted linear predictor (offset included)
  Eigen::VectorXd mu;           ///< fitted values
  double deviance = 0.0;
  double null_deviance = 0.0;
  double aic = 0.0;
  double log_likelihood = 0.0;
  double dispersion = 1.0;      ///< 1 for binomial and poisson; Pearson X^2 / df for gaussian
  bool dispersion_estimated = false;
  Eigen::Index n = 0;           ///< observations
  Eigen::Index df_residual = 0;
  Eigen::Index df_null = 0;
  int iterations = 0;
  CovarianceWeights covariance_weights = CovarianceWeights::last_iteration;
  double tolerance = 0.0;       ///< the stopping rule's epsilon that was used
};

/// Fits the model. Throws InputError (without a file name; the caller adds it) when the response
/// does not fit the family, the design has aliased terms (naming them and their partners), the data
/// are separated (fitted values numerically at the boundary, diverging coefficients), or IRLS does
/// not converge in max_iterations.
GlmFit fit_glm(const GlmProblem& problem, const IrlsOptions& options = {});

}  // namespace habcast
