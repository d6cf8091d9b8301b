#pragma once
// The gradient of a prediction with respect to the coefficients, g = d mu / d beta = (d mu / d eta) x,
// one row per pixel, and the quadratic form g' V g taken row by row. Every standard error of a
// quantity built from predictions of one model comes from it: of a prediction (g' V g), of the
// change between two covariate stacks ((g_s - g_b)' V (g_s - g_b)), of an average over pixels.
#include <Eigen/Core>

#include "core/model/model_spec.hpp"

namespace habcast {

/// Row i of `G` (first `rows` rows) = d mu_i / d eta_i * X.row(i), with mu = g^-1(eta). Rows whose
/// derivative is not finite are left as computed (inf/NaN): the caller masks them with its own
/// "predicted" flags.
void response_gradient(Link link, const Eigen::MatrixXd& X, const Eigen::VectorXd& eta, Eigen::Index rows,
                       Eigen::MatrixXd& G);

/// out[i] = sqrt(max(0, D.row(i) V D.row(i)')) for the first `rows` rows of D. Summed column by
/// column in a fixed order, so a pixel's value does not depend on its block or thread; `scratch`
/// holds D V.
void row_standard_errors(const Eigen::MatrixXd& D, Eigen::Index rows, const Eigen::MatrixXd& V, Eigen::MatrixXd& scratch,
                         Eigen::VectorXd& out);

}  // namespace habcast
