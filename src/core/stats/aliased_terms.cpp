#include "core/stats/aliased_terms.hpp"

#include <Eigen/QR>
#include <cmath>

namespace habcast {

std::vector<AliasedColumn> find_aliased_columns(const Eigen::MatrixXd& X, double tolerance) {
  std::vector<AliasedColumn> aliased;
  std::vector<Eigen::Index> kept;
  Eigen::MatrixXd Q(X.rows(), 0);
  for (Eigen::Index j = 0; j < X.cols(); ++j) {
    const double norm = X.col(j).norm();
    if (norm == 0.0) {
      aliased.push_back({j, true, {}});
      continue;
    }
    Eigen::VectorXd v = X.col(j);
    // Two passes: one pass of Gram-Schmidt loses orthogonality on nearly dependent columns.
    for (int pass = 0; pass < 2; ++pass)
      if (Q.cols() > 0) v -= Q * (Q.transpose() * v);
    const double residual = v.norm();
    if (residual <= tolerance * norm) {
      AliasedColumn a{j, false, {}};
      // Which earlier columns it combines: least squares on them; tiny coefficients are noise.
      Eigen::MatrixXd K(X.rows(), static_cast<Eigen::Index>(kept.size()));
      for (std::size_t k = 0; k < kept.size(); ++k) K.col(static_cast<Eigen::Index>(k)) = X.col(kept[k]);
      const Eigen::VectorXd c = K.colPivHouseholderQr().solve(X.col(j));
      for (std::size_t k = 0; k < kept.size(); ++k) {
        const double contribution = std::fabs(c[static_cast<Eigen::Index>(k)]) * X.col(kept[k]).norm();
        if (contribution > 1e-8 * norm) a.partners.push_back(kept[k]);
      }
      aliased.push_back(std::move(a));
      continue;
    }
    Q.conservativeResize(Eigen::NoChange, Q.cols() + 1);
    Q.col(Q.cols() - 1) = v / residual;
    kept.push_back(j);
  }
  return aliased;
}

}  // namespace habcast
