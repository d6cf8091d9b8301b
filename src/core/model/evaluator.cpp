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
  // se^2 = diag(X V X'), one row at a time from V's upper triangle, never the rows x rows
  // matrix. (The earlier form, row sums of (X V) .* X through Eigen's matrix product, spent three
  // times the arithmetic and most of predict's model time: bench/stage_cost.cpp measures it.)
  if (V_) out.se_eta.resize(rows);
  linear_quadratic(X.data(), X.outerStride(), rows, beta_, V_ ? packed_V_.data() : nullptr, out.eta.data(),
                   V_ ? out.se_eta.data() : nullptr);
  // Without an offset term the column is all zeros: eta + (0 + c) is added without reading it.
  if (offset_term_)
    out.eta.array() += offset.head(rows).array() + offset_constant_;
  else
    out.eta.array() += 0.0 + offset_constant_;
  if (V_) out.se_eta = out.se_eta.array().max(0.0).sqrt().matrix();
}

void Evaluator::response(Eigen::Index rows, Prediction& out) const {
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
  out.se_mu.array() *= out.se_eta.array();
  round_all(out.se_mu, quantum_);
  if (!limits_) return;
  // Limits on the link scale, taken to the response scale.
  out.lower.resize(rows);
  out.upper.resize(rows);
  link_inverse_interval(link_, out.eta.data(), out.se_eta.data(), z_, out.lower.data(), out.upper.data(), rows);
  round_all(out.lower, quantum_);
  round_all(out.upper, quantum_);
}

}  // namespace habcast
