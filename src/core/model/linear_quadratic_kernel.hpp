#pragma once
// The arithmetic core of a prediction, in one pass over the design matrix: per row x of X, the
// linear predictor x'b and the quadratic form x'Vx of its variance. See the .cpp for the order of
// the sums (it fixes every bit of the result).
#include <Eigen/Core>
#include <vector>

namespace habcast {

/// V packed for linear_quadratic(): per term j, V(j,j) and then 2 V(j,k) for k = j+1 .. p-1 (the
/// upper triangle, doubled: x'Vx = sum_j x_j (V_jj x_j + sum_{k>j} 2 V_jk x_k) for symmetric V).
std::vector<double> pack_symmetric(const Eigen::MatrixXd& V);

/// For rows i < n of the column-major `X` (leading dimension `ld`, p = beta.size() columns):
///   eta[i] = sum_j X(i,j) beta[j], summed in order j = 0 .. p-1 (as Eigen's matrix-vector
///            product sums it, so the result is the same bit for bit);
///   q[i]   = x_i' V x_i from `packed` (pack_symmetric(V)), summed in a fixed order;
///   and then, when `plus` is not null, eta[i] = eta[i] + *plus (a constant offset, added as the
///   sum is stored rather than in a pass of its own).
/// `q` may be null (no covariance). Each row's result depends only on that row: the same
/// whatever block, chunk or thread it falls in, and on every x86-64 CPU (the SSE2, AVX2 and
/// AVX-512 kernels do the same IEEE operations in the same order on each pixel; no FMA
/// contraction).
void linear_quadratic(const double* X, Eigen::Index ld, Eigen::Index n, const Eigen::VectorXd& beta,
                      const double* packed, double* eta, double* q, const double* plus = nullptr);

}  // namespace habcast
