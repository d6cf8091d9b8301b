#pragma once
// Spline bases of one covariate, evaluated exactly as R's splines::bs and splines::ns evaluate them
// (R 4.2.2, package splines): B-splines by de Boor's recursion on the knot sequence with each
// boundary knot repeated degree + 1 times; the natural cubic basis is the cubic B-spline basis
// projected on the null space of the second derivatives at the two boundary knots, taken from the
// Householder QR of those constraints as R's qr() builds it (LINPACK dqrdc2) and applied as
// qr.qty() applies it. Beyond the boundary knots each basis continues as R continues it: the
// natural basis along its tangent at the boundary knot (linear, the natural-spline property), the
// B-spline basis by its Taylor polynomial of full degree about a pivot a quarter of the way from
// the boundary knot to the next knot. Either is extrapolation by construction; see
// docs/model-format.md ("Spline terms").
//
// References: C. de Boor, A Practical Guide to Splines (Springer 1978; rev. 2001), ch. IX-X
// (the recursion and the derivative formula); Hastie, T. J. (1992) "Generalized additive models",
// ch. 7 of Statistical Models in S (Wadsworth) for the natural-spline construction that ns follows.
#include <Eigen/Core>
#include <string>
#include <vector>

namespace habcast {

enum class SplineKind { natural, bspline };

const char* to_string(SplineKind kind);  ///< "ns" or "bs", the words of the term syntax

/// The definition of a basis as the model file stores it (all values in model units).
struct SplineDefinition {
  SplineKind kind = SplineKind::natural;
  std::vector<double> knots;    ///< interior knots, non-decreasing, strictly between the boundary knots
  double lower = 0.0;           ///< boundary knots
  double upper = 1.0;
  int degree = 3;               ///< bs: 1..kMaxDegree; ns: always 3
  bool intercept = false;       ///< keep the first basis function (R's intercept = TRUE)

  static constexpr int kMaxDegree = 5;
  static constexpr std::size_t kMaxKnots = 40;

  /// Empty when the definition is usable, else what is wrong in words (for a located error).
  [[nodiscard]] std::string problem() const;
  /// Number of basis columns: bs: knots + degree + intercept; ns: knots + 1 + intercept.
  [[nodiscard]] int columns() const;
};

class SplineBasis {
 public:
  /// Precomputes the knot sequence, the boundary extensions and (ns) the constraint projection.
  /// Throws std::invalid_argument when definition.problem() is not empty.
  explicit SplineBasis(SplineDefinition definition);

  [[nodiscard]] const SplineDefinition& definition() const { return def_; }
  [[nodiscard]] int columns() const { return columns_; }
  /// True when x lies beyond the boundary knots (where the basis is its extension).
  [[nodiscard]] bool beyond(double x) const { return x < def_.lower || x > def_.upper; }

  /// The basis at x: out[0..columns()). A NaN x gives NaN in every column.
  void evaluate(double x, double* out) const;
  /// Rows 0..n-1 of `out` (resized to at least n x columns()) for the values x[0..n).
  void evaluate(const double* x, Eigen::Index n, Eigen::MatrixXd& out) const;

 private:
  /// The full B-spline row (all order-`ord` B-splines of the knot sequence, before the first
  /// column is dropped) at x; writes `full` and returns the first nonzero index and count.
  void full_row(double x, double* full) const;

  SplineDefinition def_;
  int order_ = 4;
  std::vector<double> t_;        ///< knot sequence (R's Aknots)
  int count_ = 0;                ///< B-splines in the sequence: t_.size() - order_
  int first_ = 1;                ///< first kept B-spline (0 with intercept, else 1)
  int columns_ = 0;
  Eigen::MatrixXd left_, right_;  ///< extension coefficients: row d multiplies (x - pivot)^d
  double left_pivot_ = 0.0, right_pivot_ = 0.0;
  Eigen::MatrixXd projection_;  ///< ns: (count_ - first_) x columns_, the kept columns of R's Q
};

/// Values (deriv = 0) or derivatives of the `order` B-splines that are nonzero at x, for the knot
/// sequence t (non-decreasing), x in [t[order-1], t[size-order]]. Writes out[0..order) for
/// B-splines first .. first+order-1 and returns `first` (R's splineDesign column offset).
int bspline_nonzero(const std::vector<double>& t, int order, double x, int deriv, double* out);

}  // namespace habcast
