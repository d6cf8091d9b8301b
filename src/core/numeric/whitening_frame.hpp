#pragma once
// The affine frame of a training point cloud: its centroid, its principal axes and the scaling
// that gives the points unit covariance ("whitened" coordinates). The Mahalanobis distance of a
// point is then its Euclidean length in this frame, and the convex hull is built there so that
// its shape is well conditioned whatever the covariates' correlations.
#include <Eigen/Core>
#include <cstddef>

namespace habcast {

struct WhiteningFrame {
  Eigen::VectorXd mean;        ///< centroid (d)
  Eigen::MatrixXd to_white;    ///< rank x d: y = to_white * (x - mean); cov(y) = I
  Eigen::MatrixXd flat;        ///< (d - rank) x d orthonormal rows: directions without any spread
  double flat_tolerance = 0.0; ///< |flat * (x - mean)| up to this counts as on the training plane
  int rank = 0;

  /// Whitened coordinates of one point `x` (d values) into `y` (rank values); returns the largest
  /// absolute distance of x from the training plane along the flat directions (0 at full rank).
  double whiten(const double* x, double* y) const;

  /// whiten() for `n` points at once, held in columns: x[j][p] is coordinate j of point p (d
  /// column pointers); y[i * y_stride + p] receives whitened coordinate i (rank columns) and
  /// off[p] the distance from the training plane. Every value is the one whiten() gives, bit for
  /// bit (the same operations in the same order); the loops run across points, so they vectorise.
  void whiten_columns(const double* const* x, std::size_t n, double* y, std::size_t y_stride, double* off) const;

  /// Exactly the same frame (bit for bit), so whitened coordinates from one serve the other.
  [[nodiscard]] bool same_as(const WhiteningFrame& other) const;
};

/// Builds the frame of `points` (n x d, n >= 2) with the sample covariance (divisor n - 1, as R's
/// cov()). Directions whose singular value is below 1e-8 of the largest count as flat (the points
/// are collinear, coplanar, ...); `tolerance` (relative to the cloud's largest distance from its
/// centroid) sets how far off that plane a point may lie and still count as on it.
WhiteningFrame whitening_frame(const Eigen::MatrixXd& points, double tolerance);

}  // namespace habcast
