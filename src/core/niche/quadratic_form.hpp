#pragma once
// The linear predictor of a model seen as a second-order polynomial in a few continuous covariates
// (the "focus"), with every other covariate held at a reference value:
//   eta(x) = constant + b'x + x'Bx,   x = model values (after transform and standardisation).
// The coefficients come from the same TermPlan that predict uses, so describe and predict can never
// disagree about what a term means.
#include <Eigen/Core>
#include <string>
#include <vector>

#include "core/domain/training_samples.hpp"
#include "core/model/model_spec.hpp"
#include "core/model/term_plan.hpp"

namespace habcast {

/// Whether the list of covariate indices `v` holds `x`.
bool holds_index(const std::vector<int>& v, int x);

/// Where every covariate is held when it is not in the focus: the model value of a continuous
/// covariate, the level index of a categorical one, and a short note of where the value came from.
struct ReferencePoint {
  Eigen::VectorXd values;            ///< one entry per covariate of the ModelSpec
  std::vector<std::string> sources;  ///< e.g. "training mean", "--at", "model centre", "reference level"
};

/// The default reference: each continuous covariate at the mean of its training model values (the
/// mean of transform(raw), standardised; without samples, the model's centre, model value 0), each
/// categorical covariate at its reference level.
ReferencePoint default_reference(const ModelSpec& spec, const TrainingSamples* samples);

/// Number of coefficients of a quadratic form in k covariates: constant, k linear, k(k+1)/2 second order.
Eigen::Index quadratic_coefficient_count(Eigen::Index k);

/// Position of the second-order coefficient of x_i x_j (i <= j) in the coefficient vector.
Eigen::Index quadratic_index(Eigen::Index k, Eigen::Index i, Eigen::Index j);

struct QuadraticForm {
  std::vector<int> covariates;  ///< the focus: indices into ModelSpec::covariates, in model order
  double constant = 0.0;        ///< link scale, includes the offset held at the reference
  Eigen::VectorXd b;            ///< gradient at x = 0
  Eigen::MatrixXd B;            ///< symmetric; B(i,i) is the coefficient of x_i^2, B(i,j) half that of x_i x_j
  /// theta = coefficient_map * estimates, where theta = (constant without offset, b_1..b_k,
  /// then the coefficients q_ij of x_i x_j for i <= j, row by row). Every coefficient is linear in
  /// the model's estimates, so the covariance of theta is M V M' and the delta method is exact up
  /// to the nonlinearity of the quantity derived from theta.
  Eigen::MatrixXd coefficient_map;
  double offset = 0.0;  ///< offset (term at the reference, plus constant), not estimated

  [[nodiscard]] Eigen::Index size() const { return b.size(); }
  /// eta at x (model units of the focus covariates).
  [[nodiscard]] double eta(const Eigen::VectorXd& x) const;
  /// The monomials (1, x_1..x_k, x_i x_j for i <= j) at x, in the order of theta: eta = monomials(x) theta.
  [[nodiscard]] Eigen::RowVectorXd monomials(const Eigen::VectorXd& x) const;
};

/// The continuous covariates whose effect is curved: each appears, without a term function, in a
/// squared term or in a product with another continuous covariate, and is not in `held`.
std::vector<int> curved_covariates(const ModelSpec& spec, const TermPlan& plan, const std::vector<int>& held);

/// Extracts the quadratic form in `focus` (continuous covariates) with every other covariate at
/// `reference`. Throws InputError at the term's line when a term is not a polynomial of degree <= 2
/// in the focus (tmin^3, log(tmin), tmin^2:precip) or a held term is undefined at the reference.
QuadraticForm extract_quadratic_form(const ModelSpec& spec, const TermPlan& plan, const ReferencePoint& reference,
                                     const std::vector<int>& focus);

}  // namespace habcast
