#include "core/model/spline_basis.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <limits>
#include <stdexcept>

namespace habcast {

const char* to_string(SplineKind kind) { return kind == SplineKind::natural ? "ns" : "bs"; }

std::string SplineDefinition::problem() const {
  if (!std::isfinite(lower) || !std::isfinite(upper) || !(lower < upper))
    return "its boundary knots must be two finite numbers, the lower below the upper";
  if (kind == SplineKind::natural && degree != 3) return "a natural spline is cubic; give no degree (or degree = 3)";
  if (degree < 1 || degree > kMaxDegree)
    return "degree must be a whole number from 1 to " + std::to_string(kMaxDegree);
  if (knots.size() > kMaxKnots)
    return "it has " + std::to_string(knots.size()) + " interior knots; at most " + std::to_string(kMaxKnots) +
           " are accepted";
  for (std::size_t i = 0; i < knots.size(); ++i) {
    if (!std::isfinite(knots[i]) || !(knots[i] > lower && knots[i] < upper))
      return "interior knot " + std::to_string(i + 1) + " must lie strictly between the boundary knots";
    if (i > 0 && knots[i] < knots[i - 1]) return "interior knots must be in increasing order";
  }
  // Repeated interior knots lower the continuity there; more than `degree` copies would break it.
  for (std::size_t i = 0, run = 1; i + 1 < knots.size(); ++i) {
    run = knots[i + 1] == knots[i] ? run + 1 : 1;
    if (static_cast<int>(run) > degree) return "an interior knot is repeated more than degree times";
  }
  if (columns() < 1) return "the basis would have no columns";
  return {};
}

int SplineDefinition::columns() const {
  const int k = static_cast<int>(knots.size());
  const int i = intercept ? 1 : 0;
  return kind == SplineKind::natural ? k + 1 + i : k + degree + i;
}

namespace {

constexpr int kMaxOrder = SplineDefinition::kMaxDegree + 1;
// Largest B-spline count: interior knots plus the order.
constexpr int kMaxCount = static_cast<int>(SplineDefinition::kMaxKnots) + kMaxOrder;

/// The interval index R's splines C code (set_cursor) chooses: the first knot above x, except at
/// the right end of the last interval, which belongs to that interval.
int cursor(const std::vector<double>& t, int order, double x) {
  const int nk = static_cast<int>(t.size());
  int c = static_cast<int>(std::upper_bound(t.begin(), t.end(), x) - t.begin());
  if (c > nk - order && x == t[static_cast<std::size_t>(nk - order)]) c = nk - order;
  return c;
}

/// The `order` nonzero B-splines of that order at x on interval `c` (de Boor's BSPLVB, with R's
/// guard for zero-length spans).
void values_at(const std::vector<double>& t, int c, int order, double x, double* b) {
  std::array<double, kMaxOrder> rdel{}, ldel{};
  for (int i = 0; i + 1 < order; ++i) {
    rdel[static_cast<std::size_t>(i)] = t[static_cast<std::size_t>(c + i)] - x;
    ldel[static_cast<std::size_t>(i)] = x - t[static_cast<std::size_t>(c - 1 - i)];
  }
  b[0] = 1.0;
  for (int j = 1; j < order; ++j) {
    double saved = 0.0;
    for (int r = 0; r < j; ++r) {
      const double rd = rdel[static_cast<std::size_t>(r)];
      const double ld = ldel[static_cast<std::size_t>(j - 1 - r)];
      const double den = rd + ld;
      if (den != 0.0) {
        const double term = b[r] / den;
        b[r] = saved + rd * term;
        saved = ld * term;
      } else {
        if (r != 0 || rd != 0.0) b[r] = saved;
        saved = 0.0;
      }
    }
    b[j] = saved;
  }
}

}  // namespace

int bspline_nonzero(const std::vector<double>& t, int order, double x, int deriv, double* out) {
  const int c = cursor(t, order, x);
  if (deriv >= order) {
    std::fill(out, out + order, 0.0);
    return c - order;
  }
  // d-th derivative: values of the order-(order - d) B-splines, then d steps of de Boor's
  // derivative formula, each raising the order by one:
  //   D B_{s,k} = (k - 1) (B_{s,k-1} / (t_{s+k-1} - t_s) - B_{s+1,k-1} / (t_{s+k} - t_{s+1})).
  std::array<double, kMaxOrder> v{}, w{};
  const int k0 = order - deriv;
  values_at(t, c, k0, x, v.data());
  for (int k = k0 + 1; k <= order; ++k) {
    // v holds B_{c-(k-1) .. c-1} of order k - 1 (or their derivatives); w gets B_{c-k .. c-1}.
    for (int i = 0; i < k; ++i) {
      const int s = c - k + i;
      const double lo = i >= 1 ? v[static_cast<std::size_t>(i - 1)] : 0.0;  // term of B_{s,k-1}
      const double hi = i < k - 1 ? v[static_cast<std::size_t>(i)] : 0.0;   // term of B_{s+1,k-1}
      const double d1 = t[static_cast<std::size_t>(s + k - 1)] - t[static_cast<std::size_t>(s)];
      const double d2 = t[static_cast<std::size_t>(s + k)] - t[static_cast<std::size_t>(s + 1)];
      w[static_cast<std::size_t>(i)] =
          static_cast<double>(k - 1) * ((d1 != 0.0 ? lo / d1 : 0.0) - (d2 != 0.0 ? hi / d2 : 0.0));
    }
    v = w;
  }
  std::copy(v.begin(), v.begin() + order, out);
  return c - order;
}

namespace {

/// All `count` B-splines (derivative `deriv`) at x, zeros where they vanish.
Eigen::VectorXd full_derivative(const std::vector<double>& t, int order, int count, double x, int deriv) {
  std::array<double, kMaxOrder> nz{};
  const int first = bspline_nonzero(t, order, x, deriv, nz.data());
  Eigen::VectorXd row = Eigen::VectorXd::Zero(count);
  for (int r = 0; r < order; ++r)
    if (first + r >= 0 && first + r < count) row[first + r] = nz[static_cast<std::size_t>(r)];
  return row;
}

/// Q' of the Householder QR of the n x 2 matrix A, as R's qr() (LINPACK dqrdc2, no pivoting
/// needed for full rank) computes it and qr.qty() (dqrsl) applies it: Q' = H2 H1, with
/// H_l = I - u u' / u_l, u = (0.., x_l / nrm + e_l), nrm signed like the diagonal entry.
Eigen::MatrixXd householder_qt(Eigen::MatrixXd A) {
  const Eigen::Index n = A.rows();
  const Eigen::Index p = A.cols();
  std::vector<double> qraux(static_cast<std::size_t>(p), 0.0);
  for (Eigen::Index l = 0; l < std::min(n, p); ++l) {
    if (l == n - 1) break;  // dqrdc2: the last row needs no transformation
    double nrm = A.col(l).tail(n - l).norm();
    if (nrm == 0.0)
      throw std::invalid_argument("the natural-spline constraints are degenerate (a zero column)");
    if (A(l, l) != 0.0) nrm = std::copysign(nrm, A(l, l));
    A.col(l).tail(n - l) *= 1.0 / nrm;
    A(l, l) += 1.0;
    for (Eigen::Index j = l + 1; j < p; ++j) {
      const double tt = -A.col(l).tail(n - l).dot(A.col(j).tail(n - l)) / A(l, l);
      A.col(j).tail(n - l) += tt * A.col(l).tail(n - l);
    }
    qraux[static_cast<std::size_t>(l)] = A(l, l);
    A(l, l) = -nrm;
  }
  Eigen::MatrixXd qt = Eigen::MatrixXd::Identity(n, n);
  for (Eigen::Index col = 0; col < n; ++col) {
    Eigen::VectorXd y = qt.col(col);
    for (Eigen::Index j = 0; j < std::min(p, n - 1); ++j) {
      const double ql = qraux[static_cast<std::size_t>(j)];
      if (ql == 0.0) continue;
      Eigen::VectorXd u = A.col(j).tail(n - j);
      u[0] = ql;
      const double tt = -u.dot(y.tail(n - j)) / ql;
      y.tail(n - j) += tt * u;
    }
    qt.col(col) = y;
  }
  return qt;
}

}  // namespace

SplineBasis::SplineBasis(SplineDefinition definition) : def_(std::move(definition)) {
  if (const std::string why = def_.problem(); !why.empty()) throw std::invalid_argument(why);
  order_ = def_.degree + 1;
  t_.assign(static_cast<std::size_t>(order_), def_.lower);
  t_.insert(t_.end(), def_.knots.begin(), def_.knots.end());
  t_.insert(t_.end(), static_cast<std::size_t>(order_), def_.upper);
  count_ = static_cast<int>(t_.size()) - order_;
  first_ = def_.intercept ? 0 : 1;
  columns_ = def_.columns();

  if (def_.kind == SplineKind::natural) {
    // ns(): beyond a boundary knot, value + (x - knot) * slope at the knot.
    left_pivot_ = def_.lower;
    right_pivot_ = def_.upper;
    left_.resize(2, count_);
    right_.resize(2, count_);
    for (int d = 0; d < 2; ++d) {
      left_.row(d) = full_derivative(t_, order_, count_, left_pivot_, d).transpose();
      right_.row(d) = full_derivative(t_, order_, count_, right_pivot_, d).transpose();
    }
    // Constraints: second derivatives at both boundary knots, without the dropped column.
    const int kept = count_ - first_;
    Eigen::MatrixXd constraints(kept, 2);
    constraints.col(0) = full_derivative(t_, order_, count_, def_.lower, 2).tail(kept);
    constraints.col(1) = full_derivative(t_, order_, count_, def_.upper, 2).tail(kept);
    const Eigen::MatrixXd qt = householder_qt(constraints);
    // basis = (Q' b)[3..]: row j + 2 of Q' gives column j.
    projection_ = qt.bottomRows(kept - 2).transpose();
  } else {
    // bs(): Taylor polynomial of full degree about pivots just inside the boundary knots.
    constexpr double e = 0.25;
    left_pivot_ = (1.0 - e) * def_.lower + e * t_[static_cast<std::size_t>(order_)];
    right_pivot_ = (1.0 - e) * def_.upper + e * t_[t_.size() - static_cast<std::size_t>(order_) - 1];
    left_.resize(order_, count_);
    right_.resize(order_, count_);
    double factorial = 1.0;
    for (int d = 0; d < order_; ++d) {
      if (d > 1) factorial *= d;
      left_.row(d) = full_derivative(t_, order_, count_, left_pivot_, d).transpose() / factorial;
      right_.row(d) = full_derivative(t_, order_, count_, right_pivot_, d).transpose() / factorial;
    }
  }
}

void SplineBasis::full_row(double x, double* full) const {
  std::fill(full, full + count_, 0.0);
  if (x < def_.lower || x > def_.upper) {
    const bool left = x < def_.lower;
    const Eigen::MatrixXd& coef = left ? left_ : right_;
    const double dx = x - (left ? left_pivot_ : right_pivot_);
    for (Eigen::Index d = 0; d < coef.rows(); ++d) {
      const double w = d == 0 ? 1.0 : std::pow(dx, static_cast<double>(d));
      for (int j = 0; j < count_; ++j) full[j] += w * coef(d, j);
    }
    return;
  }
  std::array<double, kMaxOrder> nz{};
  const int first = bspline_nonzero(t_, order_, x, 0, nz.data());
  for (int r = 0; r < order_; ++r) full[first + r] = nz[static_cast<std::size_t>(r)];
}

void SplineBasis::evaluate(double x, double* out) const {
  if (std::isnan(x)) {
    std::fill(out, out + columns_, std::numeric_limits<double>::quiet_NaN());
    return;
  }
  if (std::isinf(x)) {  // the extensions are polynomials: +-inf or NaN, never a number
    std::fill(out, out + columns_, std::numeric_limits<double>::quiet_NaN());
    return;
  }
  std::array<double, kMaxCount> full{};
  full_row(x, full.data());
  const double* kept = full.data() + first_;
  if (def_.kind == SplineKind::bspline) {
    std::copy(kept, kept + columns_, out);
    return;
  }
  const int n = count_ - first_;
  for (int j = 0; j < columns_; ++j) {
    double s = 0.0;
    for (int i = 0; i < n; ++i) s += projection_(i, j) * kept[i];
    out[j] = s;
  }
}

void SplineBasis::evaluate(const double* x, Eigen::Index n, Eigen::MatrixXd& out) const {
  if (out.rows() < n || out.cols() != columns_) out.resize(n, columns_);
  const Eigen::Index ld = out.rows();
  double* o = out.data();
  std::array<double, kMaxCount> row{};
  std::array<double, kMaxOrder> nz{};
  for (Eigen::Index r = 0; r < n; ++r) {
    const double v = x[r];
    if (!(v >= def_.lower && v <= def_.upper)) {  // beyond the knots, or NaN: the general path
      evaluate(v, row.data());
      for (int j = 0; j < columns_; ++j) o[j * ld + r] = row[static_cast<std::size_t>(j)];
      continue;
    }
    // Inside, only `order` B-splines are nonzero: the same sums as evaluate(double), without the
    // zero terms (which add nothing), so both paths give identical values.
    const int first = bspline_nonzero(t_, order_, v, 0, nz.data()) - first_;
    if (def_.kind == SplineKind::bspline) {
      for (int j = 0; j < columns_; ++j) o[j * ld + r] = 0.0;
      for (int k = 0; k < order_; ++k)
        if (first + k >= 0) o[(first + k) * ld + r] = nz[static_cast<std::size_t>(k)];
      continue;
    }
    for (int j = 0; j < columns_; ++j) {
      double sum = 0.0;
      for (int k = 0; k < order_; ++k)
        if (first + k >= 0) sum += projection_(first + k, j) * nz[static_cast<std::size_t>(k)];
      o[j * ld + r] = sum;
    }
  }
}

}  // namespace habcast
