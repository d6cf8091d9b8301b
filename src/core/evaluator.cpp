#include "core/evaluator.hpp"

#include <cmath>
#include <stdexcept>

#include "core/link.hpp"
#include "core/normal_distribution.hpp"
#include "core/output_precision.hpp"

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

void Evaluator::evaluate(const Eigen::MatrixXd& X, Eigen::Index rows, const Eigen::VectorXd& offset,
                         Prediction& out) const {
  const auto Xr = X.topRows(rows);
  out.eta.resize(rows);
  out.eta.noalias() = Xr * beta_;
  out.eta.array() += offset.head(rows).array() + offset_constant_;
  out.mu.resize(rows);
  for (Eigen::Index i = 0; i < rows; ++i) out.mu[i] = round_to_quantum(link_inverse(link_, out.eta[i]), quantum_);
  if (!V_) return;

  // se^2 = diag(X V X') = row sums of (X V) .* X, without forming the rows x rows matrix.
  XV_.resize(rows, X.cols());
  XV_.noalias() = Xr * (*V_);
  out.se_eta.resize(rows);
  // Summed column by column: contiguous in column-major storage, and a fixed order, so every
  // pixel's value is the same whatever block or thread it falls in.
  out.se_eta.setZero();
  for (Eigen::Index j = 0; j < X.cols(); ++j) out.se_eta.array() += XV_.col(j).array() * Xr.col(j).array();
  out.se_eta = out.se_eta.array().max(0.0).sqrt().matrix();
  out.se_mu.resize(rows);
  out.lower.resize(rows);
  out.upper.resize(rows);
  for (Eigen::Index i = 0; i < rows; ++i) {
    const double eta = out.eta[i];
    const double se = out.se_eta[i];
    out.se_mu[i] = round_to_quantum(link_inverse_derivative(link_, eta) * se, quantum_);
    out.lower[i] = round_to_quantum(link_inverse(link_, eta - z_ * se), quantum_);
    out.upper[i] = round_to_quantum(link_inverse(link_, eta + z_ * se), quantum_);
  }
}

}  // namespace habcast
