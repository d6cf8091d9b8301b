#include "core/evaluator.hpp"

#include <cmath>
#include <stdexcept>

#include "core/link.hpp"
#include "core/normal_distribution.hpp"

namespace habcast {

Evaluator::Evaluator(const ModelSpec& spec, double level)
    : beta_(Eigen::Map<const Eigen::VectorXd>(spec.estimates.data(), static_cast<Eigen::Index>(spec.estimates.size()))),
      V_(spec.covariance),
      link_(spec.link),
      offset_constant_(spec.offset_constant),
      level_(level),
      z_(normal_quantile(0.5 + level / 2.0)) {
  if (!(level > 0.0 && level < 1.0)) throw std::invalid_argument("confidence level must lie in (0, 1)");
}

void Evaluator::evaluate(const Eigen::MatrixXd& X, Eigen::Index rows, const Eigen::VectorXd& offset,
                         Prediction& out) const {
  const auto Xr = X.topRows(rows);
  out.eta.resize(rows);
  out.eta.noalias() = Xr * beta_;
  out.eta.array() += offset.head(rows).array() + offset_constant_;
  out.mu.resize(rows);
  for (Eigen::Index i = 0; i < rows; ++i) out.mu[i] = link_inverse(link_, out.eta[i]);
  if (!V_) return;

  // se^2 = diag(X V X') = row sums of (X V) .* X, without forming the rows x rows matrix.
  XV_.resize(rows, X.cols());
  XV_.noalias() = Xr * (*V_);
  out.se_eta.resize(rows);
  out.se_eta = (XV_.array() * Xr.array()).rowwise().sum().max(0.0).sqrt().matrix();
  out.se_mu.resize(rows);
  out.lower.resize(rows);
  out.upper.resize(rows);
  for (Eigen::Index i = 0; i < rows; ++i) {
    const double eta = out.eta[i];
    const double se = out.se_eta[i];
    out.se_mu[i] = link_inverse_derivative(link_, eta) * se;
    out.lower[i] = link_inverse(link_, eta - z_ * se);
    out.upper[i] = link_inverse(link_, eta + z_ * se);
  }
}

}  // namespace habcast
