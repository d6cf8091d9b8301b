#pragma once
// Which columns of a design matrix are linear combinations of the columns before them. Used to
// name the aliased terms when a model cannot be estimated, in the order a reader expects: a later
// term is reported as aliased with earlier ones (as R's glm() does), not by pivot order.
#include <Eigen/Core>
#include <vector>

namespace habcast {

struct AliasedColumn {
  Eigen::Index column = 0;
  bool zero = false;                  ///< the column is 0 in every row
  std::vector<Eigen::Index> partners; ///< earlier independent columns it is a combination of
};

/// Columns j of X whose residual after projecting on the earlier independent columns has norm at
/// most `tolerance` x ||X.col(j)||. Uses modified Gram-Schmidt with one re-orthogonalisation.
std::vector<AliasedColumn> find_aliased_columns(const Eigen::MatrixXd& X, double tolerance = 1e-10);

}  // namespace habcast
