#include "core/numeric/whitening_frame.hpp"

#include <Eigen/SVD>
#include <algorithm>
#include <cmath>

#include "core/base/pixel_loops.hpp"

namespace habcast {

double WhiteningFrame::whiten(const double* x, double* y) const {
  const Eigen::Index d = mean.size();
  for (Eigen::Index i = 0; i < rank; ++i) {
    double s = 0.0;
    for (Eigen::Index j = 0; j < d; ++j) s += to_white(i, j) * (x[j] - mean[j]);
    y[i] = s;
  }
  double off = 0.0;
  for (Eigen::Index i = 0; i < flat.rows(); ++i) {
    double s = 0.0;
    for (Eigen::Index j = 0; j < d; ++j) s += flat(i, j) * (x[j] - mean[j]);
    off = std::max(off, std::fabs(s));
  }
  return off;
}

HABCAST_PIXEL_LOOPS void WhiteningFrame::whiten_columns(const double* const* x, std::size_t n, double* y,
                                                         std::size_t y_stride, double* off) const {
  const Eigen::Index d = mean.size();
  for (Eigen::Index i = 0; i < rank; ++i) {
    double* __restrict yi = y + static_cast<std::size_t>(i) * y_stride;
    for (std::size_t p = 0; p < n; ++p) yi[p] = 0.0;
    for (Eigen::Index j = 0; j < d; ++j) {
      const double* __restrict xj = x[j];
      const double w = to_white(i, j), m = mean[j];
      for (std::size_t p = 0; p < n; ++p) yi[p] += w * (xj[p] - m);
    }
  }
  double* __restrict o = off;
  for (std::size_t p = 0; p < n; ++p) o[p] = 0.0;
  for (Eigen::Index i = 0; i < flat.rows(); ++i) {
    for (std::size_t p = 0; p < n; ++p) {
      double s = 0.0;
      for (Eigen::Index j = 0; j < d; ++j) s += flat(i, j) * (x[j][p] - mean[j]);
      o[p] = std::max(o[p], std::fabs(s));
    }
  }
}

bool WhiteningFrame::same_as(const WhiteningFrame& other) const {
  const auto same = [](const auto& a, const auto& b) {
    return a.rows() == b.rows() && a.cols() == b.cols() && (a.size() == 0 || a == b);
  };
  return rank == other.rank && flat_tolerance == other.flat_tolerance && same(mean, other.mean) &&
         same(to_white, other.to_white) && same(flat, other.flat);
}

WhiteningFrame whitening_frame(const Eigen::MatrixXd& points, double tolerance) {
  const Eigen::Index n = points.rows();
  const Eigen::Index d = points.cols();
  WhiteningFrame frame;
  frame.mean = points.colwise().mean().transpose();
  const Eigen::MatrixXd centred = points.rowwise() - frame.mean.transpose();
  // Principal axes from the SVD of the centred points: centred = U S V', cov = V S^2 V' / (n - 1).
  const Eigen::JacobiSVD<Eigen::MatrixXd> svd(centred, Eigen::ComputeFullV);
  const Eigen::VectorXd& s = svd.singularValues();
  const double largest = s.size() > 0 ? s[0] : 0.0;
  int rank = 0;
  for (Eigen::Index i = 0; i < s.size(); ++i)
    if (s[i] > 1e-8 * largest && largest > 0.0) ++rank;
  frame.rank = rank;
  const double sd_scale = std::sqrt(static_cast<double>(std::max<Eigen::Index>(n - 1, 1)));
  frame.to_white.resize(rank, d);
  for (int i = 0; i < rank; ++i) frame.to_white.row(i) = svd.matrixV().col(i).transpose() * (sd_scale / s[i]);
  frame.flat = svd.matrixV().rightCols(d - rank).transpose();
  const double extent = centred.rowwise().norm().maxCoeff();
  frame.flat_tolerance = tolerance * std::max(extent, 1e-300);
  return frame;
}

}  // namespace habcast
