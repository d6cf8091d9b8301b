#include "core/niche/canonical_analysis.hpp"

#include <Eigen/Eigenvalues>
#include <Eigen/LU>
#include <algorithm>
#include <cmath>
#include <numeric>
#include <stdexcept>

#include "core/model/link.hpp"
#include "core/numeric/normal_distribution.hpp"

namespace habcast {

const char* to_string(SurfaceShape shape) {
  switch (shape) {
    case SurfaceShape::peak: return "peak";
    case SurfaceShape::basin: return "basin";
    case SurfaceShape::saddle: return "saddle";
    case SurfaceShape::ridge: return "ridge";
  }
  return "?";
}

namespace {

/// Covariance of theta = M beta: M V M'.
Eigen::MatrixXd theta_covariance(const QuadraticForm& form, const Eigen::MatrixXd& V) {
  return form.coefficient_map * V * form.coefficient_map.transpose();
}

double gradient_variance(const Eigen::RowVectorXd& g, const Eigen::MatrixXd& theta_cov) {
  return std::max(0.0, (g * theta_cov * g.transpose())(0, 0));
}

/// Eigenvectors are defined up to sign; fix it so that reports and tests are reproducible.
void fix_sign(Eigen::VectorXd& v) {
  Eigen::Index largest = 0;
  v.cwiseAbs().maxCoeff(&largest);
  if (v[largest] < 0.0) v = -v;
}

std::vector<PrincipalAxis> principal_axes(const QuadraticForm& form, double tolerance) {
  const Eigen::Index k = form.size();
  const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> solver(form.B);
  if (solver.info() != Eigen::Success) throw std::runtime_error("eigen decomposition of the second-order matrix failed");
  std::vector<PrincipalAxis> axes(static_cast<std::size_t>(k));
  const double scale = solver.eigenvalues().cwiseAbs().maxCoeff();
  for (Eigen::Index i = 0; i < k; ++i) {
    // The solver sorts ascending; report the largest (least negative) first.
    PrincipalAxis& a = axes[static_cast<std::size_t>(i)];
    a.eigenvalue = solver.eigenvalues()[k - 1 - i];
    a.direction = solver.eigenvectors().col(k - 1 - i);
    fix_sign(a.direction);
    a.near_zero = std::fabs(a.eigenvalue) <= tolerance * scale;
  }
  return axes;
}

SurfaceShape classify(const std::vector<PrincipalAxis>& axes) {
  bool negative = false, positive = false;
  for (const PrincipalAxis& a : axes) {
    if (a.near_zero) return SurfaceShape::ridge;
    (a.eigenvalue < 0.0 ? negative : positive) = true;
  }
  if (negative && positive) return SurfaceShape::saddle;
  return negative ? SurfaceShape::peak : SurfaceShape::basin;
}

/// -1/2 B^+ b over the axes with non-zero curvature; equals -1/2 B^-1 b when B is invertible.
Eigen::VectorXd stationary_point(const QuadraticForm& form, const std::vector<PrincipalAxis>& axes, double tolerance,
                                 bool& rising) {
  Eigen::VectorXd x = Eigen::VectorXd::Zero(form.size());
  rising = false;
  const double b_norm = form.b.norm();
  for (const PrincipalAxis& a : axes) {
    const double along = a.direction.dot(form.b);
    if (a.near_zero) {
      // A gradient along a flat axis means eta changes linearly there for ever: a rising ridge.
      if (std::fabs(along) > tolerance * b_norm) rising = true;
      continue;
    }
    x -= 0.5 * (along / a.eigenvalue) * a.direction;
  }
  return x;
}

PairRotation pair_rotation(const QuadraticForm& form, Eigen::Index i, Eigen::Index j) {
  PairRotation r;
  r.first = i;
  r.second = j;
  const double u = 2.0 * form.B(i, j);  // coefficient of x_i x_j
  const double w = form.B(i, i) - form.B(j, j);
  r.circular = u == 0.0 && w == 0.0;
  const double quarter = std::atan(1.0);
  r.tilt = w != 0.0 ? 0.5 * std::atan(u / w) : (u > 0.0 ? quarter : (u < 0.0 ? -quarter : 0.0));
  r.major_axis = r.circular ? 0.0 : 0.5 * std::atan2(u, w);
  return r;
}

/// d(angle)/d(theta): angle = 1/2 atan2(u, w), u = q_ij, w = q_ii - q_jj.
Eigen::RowVectorXd rotation_gradient(const QuadraticForm& form, Eigen::Index i, Eigen::Index j) {
  const Eigen::Index k = form.size();
  const double u = 2.0 * form.B(i, j);
  const double w = form.B(i, i) - form.B(j, j);
  const double d = u * u + w * w;
  Eigen::RowVectorXd g = Eigen::RowVectorXd::Zero(quadratic_coefficient_count(k));
  g[quadratic_index(k, i, j)] = 0.5 * w / d;
  g[quadratic_index(k, i, i)] = -0.5 * u / d;
  g[quadratic_index(k, j, j)] = 0.5 * u / d;
  return g;
}

/// d(lambda)/d(theta) for a simple eigenvalue with unit eigenvector v: v' dB v.
Eigen::RowVectorXd eigenvalue_gradient(const QuadraticForm& form, const Eigen::VectorXd& v) {
  const Eigen::Index k = form.size();
  Eigen::RowVectorXd g = Eigen::RowVectorXd::Zero(quadratic_coefficient_count(k));
  for (Eigen::Index i = 0; i < k; ++i)
    for (Eigen::Index j = i; j < k; ++j) g[quadratic_index(k, i, j)] = i == j ? v[i] * v[i] : v[i] * v[j];
  return g;
}

void set_half_widths(CanonicalAnalysis& a, Link link, double fraction) {
  if (a.shape != SurfaceShape::peak) return;
  const double target_response = fraction * a.response;
  if (!(target_response > 0.0)) return;  // e.g. an identity link whose peak is not positive
  const double target_eta = link_function(link, target_response);
  if (!std::isfinite(target_eta) || !(target_eta < a.eta)) return;
  for (PrincipalAxis& axis : a.axes) axis.half_width = std::sqrt((target_eta - a.eta) / axis.eigenvalue);
}

}  // namespace

Eigen::MatrixXd stationary_point_jacobian(const QuadraticForm& form) {
  const Eigen::Index k = form.size();
  const Eigen::PartialPivLU<Eigen::MatrixXd> lu(form.B);
  const Eigen::MatrixXd Binv = lu.inverse();
  const Eigen::VectorXd xs = -0.5 * (Binv * form.b);
  Eigen::MatrixXd J = Eigen::MatrixXd::Zero(k, quadratic_coefficient_count(k));
  // From B x_s = -b/2: dx_s = -B^-1 (dB x_s + db/2).
  J.middleCols(1, k) = -0.5 * Binv;
  for (Eigen::Index i = 0; i < k; ++i)
    for (Eigen::Index j = i; j < k; ++j) {
      // dB for a unit change of q_ij: e_i e_i' when i == j, (e_i e_j' + e_j e_i') / 2 otherwise.
      Eigen::VectorXd dBx = Eigen::VectorXd::Zero(k);
      if (i == j) {
        dBx[i] = xs[i];
      } else {
        dBx[i] = 0.5 * xs[j];
        dBx[j] = 0.5 * xs[i];
      }
      J.col(quadratic_index(k, i, j)) = -(Binv * dBx);
    }
  return J;
}

CanonicalAnalysis analyse_surface(const QuadraticForm& form, Link link, const std::optional<Eigen::MatrixXd>& covariance,
                                  const CanonicalOptions& options) {
  if (!(options.fraction > 0.0 && options.fraction < 1.0)) throw std::invalid_argument("fraction must lie in (0, 1)");
  if (!(options.confidence > 0.0 && options.confidence < 1.0))
    throw std::invalid_argument("confidence must lie in (0, 1)");
  if (!(options.ridge_tolerance >= 0.0)) throw std::invalid_argument("ridge tolerance must be >= 0");
  if (form.size() == 0) throw std::invalid_argument("a canonical analysis needs at least one covariate");

  CanonicalAnalysis a;
  a.z = normal_quantile(0.5 + options.confidence / 2.0);
  a.axes = principal_axes(form, options.ridge_tolerance);
  a.shape = classify(a.axes);
  a.stationary = stationary_point(form, a.axes, options.ridge_tolerance, a.rising_ridge);
  a.eta = form.eta(a.stationary);
  a.response = link_inverse(link, a.eta);
  set_half_widths(a, link, options.fraction);
  for (Eigen::Index i = 0; i < form.size(); ++i)
    for (Eigen::Index j = i + 1; j < form.size(); ++j) a.rotations.push_back(pair_rotation(form, i, j));

  if (!covariance) return a;
  const Eigen::MatrixXd cov = theta_covariance(form, *covariance);
  for (PrincipalAxis& axis : a.axes) axis.eigenvalue_se = std::sqrt(gradient_variance(eigenvalue_gradient(form, axis.direction), cov));
  for (PairRotation& r : a.rotations)
    if (!r.circular) r.se = std::sqrt(gradient_variance(rotation_gradient(form, r.first, r.second), cov));
  if (a.shape == SurfaceShape::ridge) return a;  // no unique stationary point to differentiate
  const Eigen::MatrixXd J = stationary_point_jacobian(form);
  a.stationary_covariance = J * cov * J.transpose();
  // At a stationary point the gradient in x vanishes, so d eta_s / d theta is just the monomials.
  a.eta_se = std::sqrt(gradient_variance(form.monomials(a.stationary), cov));
  return a;
}

ConditionalOptimum conditional_optimum(const QuadraticForm& form, Eigen::Index target, Eigen::Index given,
                                       const std::optional<Eigen::MatrixXd>& covariance) {
  const Eigen::Index k = form.size();
  ConditionalOptimum c;
  c.target = target;
  c.given = given;
  const double qtt = form.B(target, target);
  const double qtg = 2.0 * form.B(target, given);
  c.defined = qtt != 0.0;
  if (!c.defined) return c;
  // d eta / d x_t = b_t + 2 q_tt x_t + q_tg x_g = 0.
  c.intercept = -form.b[target] / (2.0 * qtt);
  c.slope = -qtg / (2.0 * qtt);
  c.maximum = qtt < 0.0;
  if (covariance) {
    Eigen::RowVectorXd g = Eigen::RowVectorXd::Zero(quadratic_coefficient_count(k));
    g[quadratic_index(k, target, given)] = -1.0 / (2.0 * qtt);
    g[quadratic_index(k, target, target)] = qtg / (2.0 * qtt * qtt);
    c.slope_se = std::sqrt(gradient_variance(g, theta_covariance(form, *covariance)));
  }
  return c;
}

}  // namespace habcast
