#pragma once
// Exact membership of points in the convex hull of the training points, fast enough for every
// pixel of a large raster.
//
// The hull is built by Qhull in whitened coordinates (whitening_frame.hpp), where the training
// centroid is the origin and lies strictly inside. Each facet f is then m_f . y <= s_f with unit
// normal m_f and distance s_f > 0 from the centroid, and a point y is inside exactly when its
// gauge  g(y) = max_f (m_f / s_f) . y  is at most 1. The test, per point:
//   1. accept when |y| <= min_f s_f (the largest ball about the centroid inside the hull);
//   2. reject when |y| exceeds the largest training distance (the hull lies inside that ball);
//   3. otherwise climb the facet adjacency graph from the facet that decided the previous point:
//      g is a linear function maximised over the vertices p_f = m_f / s_f of the polar polytope,
//      whose edges are the hull's ridges, so a facet none of whose neighbours is larger is the
//      global maximum (the simplex method's optimality argument). Neighbouring pixels are similar,
//      so the climb usually takes a step or two; a facet found above the limit rejects at once.
//   4. a gauge within 1e-12 of the limit is settled by scanning all facets in a fixed order, so
//      the answer never depends on where the climb started (and so not on threads or blocks).
// Tolerance: a point counts as inside when g(y) <= 1 + tolerance, i.e. it lies in the hull
// enlarged about the centroid by the relative `tolerance` (default 1e-9); the tolerance is raised,
// if needed, until every training point itself tests inside (Qhull's merged facets may leave a
// point outside by roundoff).
// Degenerate training sets (fewer than d + 1 distinct points, collinear or coplanar points) have a
// flat hull: it is built in the plane the points span, and a point more than the plane tolerance
// off that plane is outside.
#include <Eigen/Core>
#include <string>
#include <vector>

#include "core/numeric/whitening_frame.hpp"

namespace habcast {

class TrainingHull {
 public:
  /// `points`: n x d training points (n >= 1, d >= 1, finite). Throws HullBuildError (from
  /// qhull_facets.hpp) only when Qhull fails on a set that is not flat.
  TrainingHull(const Eigen::MatrixXd& points, double tolerance = 1e-9);

  [[nodiscard]] int dim() const { return static_cast<int>(frame_.mean.size()); }
  /// Dimension of the space the training points span (< dim() for a flat hull).
  [[nodiscard]] int rank() const { return frame_.rank; }
  [[nodiscard]] int facet_count() const { return static_cast<int>(gauge_.rows()); }
  [[nodiscard]] double tolerance() const { return tolerance_; }
  [[nodiscard]] const WhiteningFrame& frame() const { return frame_; }
  /// Largest whitened (Mahalanobis) distance of a training point from the centroid.
  [[nodiscard]] double max_training_distance() const { return max_distance_; }

  /// True when `x` (dim() values) is inside. `y` receives its whitened coordinates (rank()
  /// values; scratch the caller owns), `start` is the facet to climb from and receives the facet
  /// that decided (keep it between neighbouring points; any value in range is valid).
  bool contains(const double* x, double* y, int& start) const;

  /// The same test for a point already whitened in frame() (`y`, rank() values) whose distance
  /// from the training plane whiten() returned as `off_plane`.
  bool contains_whitened(const double* y, double off_plane, int& start) const;

  /// Same test by a plain scan of every facet (no shortcuts): the reference for tests.
  bool contains_by_scan(const double* x) const;

 private:
  [[nodiscard]] double gauge_at(int facet, const double* y) const;
  [[nodiscard]] double gauge_by_scan(const double* y) const;
  /// contains_whitened()'s climb over the facets, for whitened coordinates of `Rank` values (0: any).
  template <int Rank>
  [[nodiscard]] bool climb(const double* y, int& start) const;
  void build_facets(const Eigen::MatrixXd& white);

  WhiteningFrame frame_;
  /// facets x rank, row f = m_f / s_f; row-major, so that one facet's gauge reads one cache line.
  Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor> gauge_;
  /// Facets adjacent to facet f: neighbour_list_[neighbour_start_[f] .. neighbour_start_[f + 1]).
  std::vector<int> neighbour_start_, neighbour_list_;
  double tolerance_ = 1e-9;
  double inner_radius2_ = 0.0;  ///< squared radius of the accepted ball
  double outer_radius2_ = 0.0;  ///< squared radius beyond which points are rejected
  double max_distance_ = 0.0;
};

}  // namespace habcast
