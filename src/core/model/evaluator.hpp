#pragma once
// Pure math of a prediction: linear predictor, its standard error by the delta method, the
// response, its standard error and confidence limits. No rasters here.
#include <Eigen/Core>
#include <optional>
#include <vector>

#include "core/model/model_spec.hpp"

namespace habcast {

struct Prediction {
  Eigen::VectorXd eta;       ///< linear predictor (link scale), offset included
  Eigen::VectorXd variance;  ///< x' V x, the variance of eta (negative only by rounding)
  Eigen::VectorXd se_eta;    ///< sqrt(max(x' V x, 0))
  Eigen::VectorXd mu;        ///< g^-1(eta), response scale
  Eigen::VectorXd se_mu;     ///< |d g^-1/d eta| * se_eta (delta method)
  Eigen::VectorXd lower;     ///< g^-1(eta - z se_eta): formed on the link scale, stays in range
  Eigen::VectorXd upper;     ///< g^-1(eta + z se_eta)
};

class Evaluator {
 public:
  /// `level` is the two-sided confidence level of the limits, in (0, 1). A `quantum` > 0 (a power
  /// of two, see output_precision.hpp) rounds mu, se(mu) and the limits to its multiples.
  Evaluator(const ModelSpec& spec, double level, double quantum = 0.0);

  [[nodiscard]] bool has_covariance() const { return V_.has_value(); }
  [[nodiscard]] double z() const { return z_; }
  [[nodiscard]] double level() const { return level_; }
  [[nodiscard]] Link link() const { return link_; }
  /// Whether evaluate() forms the confidence limits (on unless turned off): a model of a set
  /// needs only its mean and standard error, the set's limits come from the average.
  [[nodiscard]] bool limits() const { return limits_; }
  void set_limits(bool on) { limits_ = on; }

  /// Evaluates the first `rows` rows of X (and of `offset`, the offset term's column; not read
  /// when the model has no offset term). Standard errors and limits are computed only when the
  /// model has a covariance matrix.
  void evaluate(const Eigen::MatrixXd& X, Eigen::Index rows, const Eigen::VectorXd& offset, Prediction& out) const;

  // The stages of evaluate(), in its order; public so that bench/stage_cost.cpp can time each one
  // on the code that predict runs.
  /// out.eta = X beta + offset + the constant offset and, with a covariance, out.variance =
  /// x' V x per row, in one pass over X (linear_quadratic_kernel.hpp).
  void linear_predictor(const Eigen::MatrixXd& X, Eigen::Index rows, const Eigen::VectorXd& offset,
                        Prediction& out) const;
  /// out.mu, and with a covariance out.se_eta, out.se_mu, out.lower and out.upper (unless limits
  /// are off), from out.eta (and out.variance), in one pass (link.hpp, link_response()).
  void response(Eigen::Index rows, Prediction& out) const;

 private:
  Eigen::VectorXd beta_;
  std::optional<Eigen::MatrixXd> V_;
  Link link_;
  double offset_constant_;
  bool offset_term_;  ///< whether the model has an offset term (else its column, all zeros, is not read)
  double level_;
  double z_;
  double quantum_;
  bool limits_ = true;
  std::vector<double> packed_V_;  ///< V's upper triangle for linear_quadratic()
};

}  // namespace habcast
