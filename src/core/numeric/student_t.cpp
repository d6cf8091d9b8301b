#include "core/numeric/student_t.hpp"

#include <cmath>
#include <limits>

namespace habcast {

namespace {

// Continued fraction for I_x(a, b) (Abramowitz & Stegun 1964, 26.5.8), evaluated with the
// modified Lentz method; converges fast for x < (a + 1) / (a + b + 2).
double beta_continued_fraction(double x, double a, double b) {
  constexpr double tiny = 1e-300;
  constexpr double eps = 1e-16;
  double c = 1.0;
  double d = 1.0 - (a + b) * x / (a + 1.0);
  if (std::fabs(d) < tiny) d = tiny;
  d = 1.0 / d;
  double h = d;
  for (int m = 1; m <= 10000; ++m) {
    const double dm = static_cast<double>(m);
    // Even step.
    double num = dm * (b - dm) * x / ((a + 2.0 * dm - 1.0) * (a + 2.0 * dm));
    d = 1.0 + num * d;
    if (std::fabs(d) < tiny) d = tiny;
    c = 1.0 + num / c;
    if (std::fabs(c) < tiny) c = tiny;
    d = 1.0 / d;
    h *= d * c;
    // Odd step.
    num = -(a + dm) * (a + b + dm) * x / ((a + 2.0 * dm) * (a + 2.0 * dm + 1.0));
    d = 1.0 + num * d;
    if (std::fabs(d) < tiny) d = tiny;
    c = 1.0 + num / c;
    if (std::fabs(c) < tiny) c = tiny;
    d = 1.0 / d;
    const double delta = d * c;
    h *= delta;
    if (std::fabs(delta - 1.0) < eps) break;
  }
  return h;
}

}  // namespace

double regularized_incomplete_beta(double x, double a, double b) {
  if (x <= 0.0) return 0.0;
  if (x >= 1.0) return 1.0;
  const double log_front = std::lgamma(a + b) - std::lgamma(a) - std::lgamma(b) + a * std::log(x) + b * std::log1p(-x);
  const double front = std::exp(log_front);
  // Use the symmetry I_x(a, b) = 1 - I_{1-x}(b, a) where the fraction converges faster.
  if (x < (a + 1.0) / (a + b + 2.0)) return front * beta_continued_fraction(x, a, b) / a;
  return 1.0 - front * beta_continued_fraction(1.0 - x, b, a) / b;
}

double student_t_two_sided_p(double t, double df) {
  if (std::isnan(t) || !(df > 0.0)) return std::numeric_limits<double>::quiet_NaN();
  if (std::isinf(t)) return 0.0;
  // P(|T| >= |t|) = I_{df / (df + t^2)}(df / 2, 1 / 2).
  return regularized_incomplete_beta(df / (df + t * t), df / 2.0, 0.5);
}

}  // namespace habcast
