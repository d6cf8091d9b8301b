#pragma once
// Tail probabilities for the coefficient table: Student's t for models with an estimated
// dispersion (gaussian), as R's summary.glm reports them.

namespace habcast {

/// Two-sided p-value P(|T| >= |t|) for Student's t with `df` > 0 degrees of freedom.
double student_t_two_sided_p(double t, double df);

/// Regularised incomplete beta function I_x(a, b) for a, b > 0 and 0 <= x <= 1.
double regularized_incomplete_beta(double x, double a, double b);

}  // namespace habcast
