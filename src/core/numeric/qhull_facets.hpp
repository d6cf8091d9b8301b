#pragma once
// The facets of the convex hull of a point set, computed by Qhull (reentrant C library). This is
// the only part of habcast that talks to Qhull; everything else sees plain Eigen arrays.
#include <Eigen/Core>
#include <stdexcept>
#include <string>
#include <vector>

namespace habcast {

/// Hull facets as halfspaces: a point x is inside when normals.row(f) . x + offsets(f) <= 0 for
/// every facet f (outward unit normals, as Qhull orients them). `neighbours[f]` lists the facets
/// that share a ridge with f: the edges of the dual graph that hull_membership walks on.
struct HullFacets {
  int dim = 0;
  Eigen::MatrixXd normals;  ///< facets x dim
  Eigen::VectorXd offsets;  ///< facets
  std::vector<std::vector<int>> neighbours;
  [[nodiscard]] int count() const { return static_cast<int>(offsets.size()); }
};

/// Qhull could not build the hull (too few or flat points, out of memory); what() carries Qhull's
/// own message.
class HullBuildError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

/// Computes the hull of `points` (rows = points, cols = dim >= 2). Qhull's default options
/// merge facets that are coplanar within roundoff, so every returned facet is a true, clearly
/// convex face of the hull. Throws HullBuildError when the points span fewer than dim dimensions.
HullFacets qhull_facets(const Eigen::MatrixXd& points);

/// The version string of the Qhull library linked at run time (its qh_version, e.g.
/// "2020.2.r 2020/08/31"), for `habcast --version` and the reports.
std::string qhull_version();

}  // namespace habcast
