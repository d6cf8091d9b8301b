#include "core/model/evaluator.hpp"

#include <cmath>
#include <stdexcept>

#include "core/model/link.hpp"
#include "core/model/output_precision.hpp"
#include "core/numeric/normal_distribution.hpp"

namespace habcast {

Evaluator::Evaluator(const ModelSpec& spec, double level, double quantum)
    : beta_(Eigen::Map<const Eigen::VectorXd>(spec.estimates.data(), static_cast<Eigen::Index>(spec.estimates.size()))),
      V_(spec.covariance),
      link_(spec.link),
      offset_constant_(spec.offset_constant),
      level_(level),
      z_(normal_quantile(0.5 + level / 2.0)),
      quantum_(quantum) {
  if (!(level > 0.0 && level < 1.0)) throw std::invalid_argument("confidence level must lie in (0, 1)");
}

namespace {

void round_all(Eigen::VectorXd& values, double quantum) {
  if (quantum <= 0.0) return;
  for (Eigen::Index i = 0; i < values.size(); ++i) values[i] = round_to_quantum(values[i], quantum);
}

}  // namespace

void Evaluator::evaluate(const Eigen::MatrixXd& X, Eigen::Index rows, const Eigen::VectorXd& offset,
                         Prediction& out) const {
  const auto Xr = X.topRows(rows);
  out.eta.resize(rows);
  out.eta.noalias() = Xr * beta_;
  out.eta.array() += offset.head(rows).array() + offset_constant_;
  out.mu.resize(rows);
  if (!V_) {
    link_inverse_all(link_, out.eta.data(), out.mu.data(), rows);
    round_all(out.mu, quantum_);
    return;
  }
  // se_mu first holds d mu / d eta, computed with mu.
  out.se_mu.resize(rows);
  link_inverse_with_derivative(link_, out.eta.data(), out.mu.data(), out.se_mu.data(), rows);
  round_all(out.mu, quantum_);

  // se^2 = diag(X V X') = row sums of (X V) .* X, without forming the rows x rows matrix. (A
  // Cholesky factor would halve the multiplications, but Eigen's triangular product was measured
  // slower than this general one at these sizes.)
  XV_.resize(rows, X.cols());
  XV_.noalias() = Xr * (*V_);
  out.se_eta.resize(rows);
  // Summed column by column: contiguous in column-major storage, and a fixed order, so every
  // pixel's value is the same whatever block or thread it falls in.
  out.se_eta.setZero();
  for (Eigen::Index j = 0; j < X.cols(); ++j) out.se_eta.array() += XV_.col(j).array() * Xr.col(j).array();
  out.se_eta = out.se_eta.array().max(0.0).sqrt().matrix();
  out.se_mu.array() *= out.se_eta.array();
  round_all(out.se_mu, quantum_);
  // Limits on the link scale, then back-transformed in place.
  out.lower = out.eta - z_ * out.se_eta;
  out.upper = out.eta + z_ * out.se_eta;
  link_inverse_all(link_, out.lower.data(), out.lower.data(), rows);
  link_inverse_all(link_, out.upper.data(), out.upper.data(), rows);
  round_all(out.lower, quantum_);
  round_all(out.upper, quantum_);
}

}  // namespace habcast
