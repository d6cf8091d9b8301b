#include "core/model/evaluator.hpp"

#include <cmath>
#include <stdexcept>

#include "core/model/linear_quadratic_kernel.hpp"
#include "core/model/link.hpp"
#include "core/model/output_precision.hpp"
#include "core/numeric/normal_distribution.hpp"

namespace habcast {

Evaluator::Evaluator(const ModelSpec& spec, double level, double quantum)
    : beta_(Eigen::Map<const Eigen::VectorXd>(spec.estimates.data(), static_cast<Eigen::Index>(spec.estimates.size()))),
      V_(spec.covariance),
      link_(spec.link),
      offset_constant_(spec.offset_constant),
      offset_term_(spec.offset_term.has_value()),
      level_(level),
      z_(normal_quantile(0.5 + level / 2.0)),
      quantum_(quantum) {
  if (V_) packed_V_ = pack_symmetric(*V_);
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
  linear_predictor(X, rows, offset, out);
  response(rows, out);
}

void Evaluator::linear_predictor(const Eigen::MatrixXd& X, Eigen::Index rows, const Eigen::VectorXd& offset,
                                 Prediction& out) const {
  out.eta.resize(rows);
  // x'Vx per row from V's upper triangle, never the rows x rows matrix. (The earlier form, row
  // sums of (X V) .* X through Eigen's matrix product, spent three times the arithmetic and most
  // of predict's model time: bench/stage_cost.cpp measures it.)
  if (V_) out.variance.resize(rows);
  // Without an offset term the column is all zeros: the kernel adds 0 + c to each eta as it
  // stores it (the same sum as adding the column, without a pass over it).
  const double plus = 0.0 + offset_constant_;
  linear_quadratic(X.data(), X.outerStride(), rows, beta_, V_ ? packed_V_.data() : nullptr, out.eta.data(),
                   V_ ? out.variance.data() : nullptr, offset_term_ ? nullptr : &plus);
  if (offset_term_) out.eta.array() += offset.head(rows).array() + offset_constant_;
}

void Evaluator::response(Eigen::Index rows, Prediction& out) const {
  out.mu.resize(rows);
  if (!V_) {
    link_inverse_all(link_, out.eta.data(), out.mu.data(), rows);
    round_all(out.mu, quantum_);
    return;
  }
  // The standard errors, the mean and its limits (on the link scale, taken to the response
  // scale) in one pass over eta; each rounded after, as none depends on another's rounding.
  out.se_eta.resize(rows);
  out.se_mu.resize(rows);
  if (limits_) {
    out.lower.resize(rows);
    out.upper.resize(rows);
  }
  link_response(link_, out.eta.data(), out.variance.data(), z_, out.se_eta.data(), out.mu.data(), out.se_mu.data(),
                limits_ ? out.lower.data() : nullptr, limits_ ? out.upper.data() : nullptr, rows);
  round_all(out.mu, quantum_);
  round_all(out.se_mu, quantum_);
  if (!limits_) return;
  round_all(out.lower, quantum_);
  round_all(out.upper, quantum_);
}

}  // namespace habcast
