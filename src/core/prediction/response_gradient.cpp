#include "core/prediction/response_gradient.hpp"

#include <cmath>

#include "core/model/link.hpp"

namespace habcast {

void response_gradient(Link link, const Eigen::MatrixXd& X, const Eigen::VectorXd& eta, Eigen::Index rows,
                       Eigen::MatrixXd& G) {
  G.resize(rows, X.cols());
  Eigen::VectorXd d(rows);
  link_inverse_derivative_all(link, eta.data(), d.data(), rows);
  for (Eigen::Index j = 0; j < X.cols(); ++j) G.col(j) = X.col(j).head(rows).cwiseProduct(d);
}

void row_standard_errors(const Eigen::MatrixXd& D, Eigen::Index rows, const Eigen::MatrixXd& V, Eigen::MatrixXd& scratch,
                         Eigen::VectorXd& out) {
  const auto Dr = D.topRows(rows);
  scratch.resize(rows, D.cols());
  scratch.noalias() = Dr * V;
  out.resize(rows);
  out.setZero();
  for (Eigen::Index j = 0; j < D.cols(); ++j) out.array() += scratch.col(j).array() * Dr.col(j).array();
  out = out.array().max(0.0).sqrt().matrix();
}

}  // namespace habcast
