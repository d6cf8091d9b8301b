#pragma once
// Standard normal distribution functions, for the probit link and for confidence limits.

namespace habcast {

/// Phi(x), the standard normal CDF, accurate in both tails (via erfc; no cancellation).
double normal_cdf(double x);

/// phi(x), the standard normal density.
double normal_pdf(double x);

/// Phi^-1(p) for 0 < p < 1 (Wichura 1988, algorithm AS 241 PPND16, relative error ~1e-16).
/// Returns -inf / +inf at p = 0 / 1 and NaN outside [0, 1].
double normal_quantile(double p);

}  // namespace habcast
