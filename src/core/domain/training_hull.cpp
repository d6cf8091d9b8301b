#include "core/domain/training_hull.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <string>

#include "core/numeric/qhull_facets.hpp"

namespace habcast {

namespace {
// Gauges closer than this to the limit are settled by a full scan, so that rounding in the
// order of the climb cannot change an answer (roundoff in g is ~1e-15 for well-scaled facets).
constexpr double kScanBand = 1e-12;

/// A facet's gauge at y: its row of the gauge matrix (`rank` values) dotted with y, summed from the
/// first coordinate on. `Rank` > 0 fixes the length at compile time (the climb's unrolled copies).
template <int Rank>
double gauge_of(const double* row, const double* y, Eigen::Index rank) {
  const Eigen::Index r = Rank > 0 ? Rank : rank;
  double g = 0.0;
  for (Eigen::Index j = 0; j < r; ++j) g += row[j] * y[j];
  return g;
}
}  // namespace

TrainingHull::TrainingHull(const Eigen::MatrixXd& points, double tolerance)
    : frame_(whitening_frame(points, tolerance)), tolerance_(tolerance) {
  const int r = frame_.rank;
  Eigen::MatrixXd white(points.rows(), r);
  std::vector<double> y(static_cast<std::size_t>(std::max(r, 1)));
  for (Eigen::Index i = 0; i < points.rows(); ++i) {
    const Eigen::VectorXd x = points.row(i).transpose();
    frame_.whiten(x.data(), y.data());
    for (int j = 0; j < r; ++j) white(i, j) = y[static_cast<std::size_t>(j)];
  }
  max_distance_ = r > 0 ? white.rowwise().norm().maxCoeff() : 0.0;
  build_facets(white);
  // Raise the tolerance until every training point is inside (roundoff of merged facets).
  double worst = 0.0;
  for (Eigen::Index i = 0; i < white.rows() && gauge_.rows() > 0; ++i) {
    const Eigen::VectorXd row = white.row(i).transpose();  // white is column-major
    worst = std::max(worst, gauge_by_scan(row.data()) - 1.0);
  }
  if (worst > tolerance_) tolerance_ = worst * (1.0 + 1e-6);
  if (gauge_.rows() > 0) {
    double inner = std::numeric_limits<double>::infinity();
    for (Eigen::Index f = 0; f < gauge_.rows(); ++f) inner = std::min(inner, 1.0 / gauge_.row(f).norm());
    inner_radius2_ = inner * inner * (1.0 - 1e-12);
  }
  const double outer = max_distance_ * (1.0 + tolerance_);
  outer_radius2_ = outer * outer * (1.0 + 1e-12);
}

void TrainingHull::build_facets(const Eigen::MatrixXd& white) {
  const int r = frame_.rank;
  if (r == 0) return;  // one distinct point: only the plane test applies
  if (r == 1) {
    // A segment: two "facets" y <= max and -y <= -min, each the other's neighbour.
    const double hi = white.col(0).maxCoeff();
    const double lo = white.col(0).minCoeff();
    gauge_.resize(2, 1);
    gauge_(0, 0) = 1.0 / hi;
    gauge_(1, 0) = 1.0 / lo;  // lo < 0: the centroid lies strictly between
    neighbour_start_ = {0, 1, 2};
    neighbour_list_ = {1, 0};
    return;
  }
  // Rows are whitened copies; layout (row-major transfer) is qhull_facets' business.
  Eigen::MatrixXd copy = white;
  const HullFacets facets = qhull_facets(copy);
  gauge_.resize(facets.count(), r);
  for (int f = 0; f < facets.count(); ++f) {
    const double distance = -facets.offsets(f);  // > 0: the centroid is strictly inside
    if (!(distance > 0.0))
      throw HullBuildError("the training centroid is not strictly inside the hull (facet " + std::to_string(f) +
                           " passes through it); the samples are too close to flat");
    gauge_.row(f) = facets.normals.row(f) / distance;
  }
  neighbour_start_.assign(1, 0);
  for (const std::vector<int>& adjacent : facets.neighbours) {
    neighbour_list_.insert(neighbour_list_.end(), adjacent.begin(), adjacent.end());
    neighbour_start_.push_back(static_cast<int>(neighbour_list_.size()));
  }
}

double TrainingHull::gauge_at(int facet, const double* y) const {
  return gauge_of<0>(gauge_.data() + static_cast<Eigen::Index>(facet) * gauge_.cols(), y, gauge_.cols());
}

double TrainingHull::gauge_by_scan(const double* y) const {
  double g = -std::numeric_limits<double>::infinity();
  for (Eigen::Index f = 0; f < gauge_.rows(); ++f) g = std::max(g, gauge_at(static_cast<int>(f), y));
  return g;
}

bool TrainingHull::contains(const double* x, double* y, int& start) const {
  const double off_plane = frame_.whiten(x, y);
  return contains_whitened(y, off_plane, start);
}

bool TrainingHull::contains_whitened(const double* y, double off_plane, int& start) const {
  if (off_plane > frame_.flat_tolerance) return false;
  if (gauge_.rows() == 0) return true;  // a single distinct point, and x is on it
  double r2 = 0.0;
  for (int j = 0; j < frame_.rank; ++j) r2 += y[j] * y[j];
  if (r2 <= inner_radius2_) return true;
  if (r2 > outer_radius2_) return false;

  switch (frame_.rank) {  // the common dimensions with the gauge's dot product unrolled
    case 2: return climb<2>(y, start);
    case 3: return climb<3>(y, start);
    case 4: return climb<4>(y, start);
    case 5: return climb<5>(y, start);
    case 6: return climb<6>(y, start);
    default: return climb<0>(y, start);
  }
}

template <int Rank>
bool TrainingHull::climb(const double* y, int& start) const {
  const Eigen::Index rank = Rank > 0 ? Rank : gauge_.cols();
  const auto gauge = [&](int facet) {
    return gauge_of<Rank>(gauge_.data() + static_cast<Eigen::Index>(facet) * rank, y, rank);
  };
  const double limit = 1.0 + tolerance_;
  int at = (start >= 0 && start < gauge_.rows()) ? start : 0;
  double g = gauge(at);
  for (;;) {
    int best = at;
    const int* adjacent = neighbour_list_.data() + neighbour_start_[static_cast<std::size_t>(at)];
    const int* adjacent_end = neighbour_list_.data() + neighbour_start_[static_cast<std::size_t>(at) + 1];
    for (const int* next_facet = adjacent; next_facet != adjacent_end; ++next_facet) {
      const int next = *next_facet;
      const double gn = gauge(next);
      // Selects, not a branch: which neighbour is higher is a coin toss the predictor loses.
      const bool higher = gn > g;
      g = higher ? gn : g;
      best = higher ? next : best;
    }
    if (g > limit + kScanBand) {
      start = best;
      return false;  // a real facet is violated: outside, whatever the true maximum
    }
    if (best == at) break;
    at = best;
  }
  start = at;
  if (g < limit - kScanBand) return true;
  return gauge_by_scan(y) <= limit;
}

bool TrainingHull::contains_by_scan(const double* x) const {
  std::vector<double> y(static_cast<std::size_t>(std::max(frame_.rank, 1)));
  if (frame_.whiten(x, y.data()) > frame_.flat_tolerance) return false;
  if (gauge_.rows() == 0) return true;
  return gauge_by_scan(y.data()) <= 1.0 + tolerance_;
}

}  // namespace habcast
