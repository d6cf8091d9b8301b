#pragma once
// Canonical analysis of a second-order surface eta(x) = c + b'x + x'Bx (Box & Wilson 1951; Myers,
// Montgomery & Anderson-Cook, Response Surface Methodology): the stationary point, the eigen
// decomposition of B, the shape it implies, the tilt of the contours in each pair of covariates,
// the breadth of a peak, and standard errors of all of these by the delta method.
// Everything is in model units (standardised covariates); callers convert to raw units.
#include <Eigen/Core>
#include <optional>
#include <vector>

#include "core/model/model_spec.hpp"
#include "core/niche/quadratic_form.hpp"

namespace habcast {

enum class SurfaceShape {
  peak,    ///< every eigenvalue negative: a single maximum of eta
  basin,   ///< every eigenvalue positive: a single minimum
  saddle,  ///< eigenvalues of both signs: a maximum in some directions, a minimum in others
  ridge,   ///< some eigenvalue is zero within the tolerance: no single stationary point
};

const char* to_string(SurfaceShape shape);

struct CanonicalOptions {
  /// An eigenvalue with |lambda| <= ridge_tolerance * max|lambda| counts as zero (a ridge). The
  /// default 1e-6 only catches ridges that are exact up to rounding of the estimates; the
  /// eigenvalue's standard error says whether the data could tell a ridge from a peak.
  double ridge_tolerance = 1e-6;
  /// Niche breadth: the distance from the peak along a principal axis at which the response (not
  /// the linear predictor) falls to this fraction of its value at the peak. In (0, 1).
  double fraction = 0.5;
  /// Two-sided confidence level of the "distinguishable from zero" tests and intervals.
  double confidence = 0.95;
};

struct PrincipalAxis {
  double eigenvalue = 0.0;          ///< curvature of eta along the axis, per model unit squared
  Eigen::VectorXd direction;        ///< unit eigenvector, model units, sign fixed so its largest entry is positive
  bool near_zero = false;           ///< within the ridge tolerance
  std::optional<double> eigenvalue_se;
  /// Distance (model units) from the peak along this axis to where the response falls to
  /// `fraction` of its peak value; set only for a peak.
  std::optional<double> half_width;
};

/// Tilt of the contours in the plane of two focus covariates, caused by their product term.
struct PairRotation {
  Eigen::Index first = 0, second = 0;  ///< positions in the focus
  /// Angle (radians) between the principal axes and the covariate axes, in [-pi/4, pi/4]:
  /// 0.5 * atan(q_ij / (q_ii - q_jj)); exactly 0 when the product term is 0. Positive: turned
  /// from the first covariate's axis towards the second's.
  double tilt = 0.0;
  /// Angle (radians, (-pi/2, pi/2]) of the axis with the larger eigenvalue (the long axis of a
  /// peak's elliptical contours) from the first covariate's axis: 0.5 * atan2(q_ij, q_ii - q_jj).
  double major_axis = 0.0;
  bool circular = false;  ///< q_ii == q_jj and q_ij == 0: every direction is a principal axis
  std::optional<double> se;  ///< of tilt and major_axis (the same derivative)
};

/// The optimum of one covariate for a fixed value of another: x_target* = intercept + slope * x_given.
struct ConditionalOptimum {
  Eigen::Index target = 0, given = 0;  ///< positions in the focus
  double intercept = 0.0;
  double slope = 0.0;
  bool maximum = false;  ///< q_tt < 0: the line joins maxima; q_tt > 0: minima
  bool defined = false;  ///< q_tt != 0
  std::optional<double> slope_se;
};

struct CanonicalAnalysis {
  SurfaceShape shape = SurfaceShape::peak;
  /// The stationary point, model units. For a ridge: the point of the ridge nearest the origin
  /// (pseudo-inverse of B over the non-zero eigenvalues).
  Eigen::VectorXd stationary;
  double eta = 0.0;       ///< eta at the stationary point
  double response = 0.0;  ///< g^-1(eta)
  /// For a ridge: true when the gradient along a zero-curvature axis is not zero, so eta keeps
  /// rising (or falling) along it without bound; false for a stationary ridge (a line of optima).
  bool rising_ridge = false;
  std::vector<PrincipalAxis> axes;  ///< sorted by eigenvalue, largest (least negative) first
  std::vector<PairRotation> rotations;  ///< one per pair of focus covariates, (0,1), (0,2), ... (1,2), ...
  std::optional<Eigen::MatrixXd> stationary_covariance;  ///< model units; not for a ridge
  std::optional<double> eta_se;                          ///< of eta at the stationary point
  double z = 1.959963984540054;  ///< normal quantile of the confidence level
};

/// Runs the analysis. `covariance` (of the model's estimates) is optional; without it no standard
/// errors are produced. Throws std::invalid_argument for options outside their range.
CanonicalAnalysis analyse_surface(const QuadraticForm& form, Link link, const std::optional<Eigen::MatrixXd>& covariance,
                                  const CanonicalOptions& options = {});

/// x_target* as a function of x_given, the other focus covariates at 0 (model units of `form`).
ConditionalOptimum conditional_optimum(const QuadraticForm& form, Eigen::Index target, Eigen::Index given,
                                       const std::optional<Eigen::MatrixXd>& covariance);

/// Jacobian (rows: stationary point coordinates; columns: theta of `form`) of x_s = -1/2 B^-1 b.
/// Exposed for tests. Requires an invertible B.
Eigen::MatrixXd stationary_point_jacobian(const QuadraticForm& form);

}  // namespace habcast
