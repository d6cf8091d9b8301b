#pragma once
// Link functions of the supported GLM families: the inverse link (linear predictor -> response
// scale) and its derivative, written to be finite and exact-as-possible for any eta, including the
// tails where the naive formulas overflow, underflow to NaN or cancel. The logit and log links
// take exp() from core/numeric/portable_exp.hpp, in the scalar functions and the loops alike, so
// a value is the same whichever of them computes it, and the loops vectorise.
#include "core/model/model_spec.hpp"

namespace habcast {

/// g^-1(eta). logit/probit/cloglog stay in [0, 1] for every finite eta; log may return +inf when
/// exp(eta) exceeds the largest double (eta > ~709.78), never NaN.
double link_inverse(Link link, double eta);

/// d g^-1 / d eta at eta, >= 0 for every supported link; finite for every finite eta except the
/// log link beyond overflow (+inf).
double link_inverse_derivative(Link link, double eta);

/// Both at once over n values: mu[i] = link_inverse(eta[i]) and derivative[i] =
/// link_inverse_derivative(eta[i]), bit for bit, with the link chosen once and, for the logit,
/// one exp() per value instead of two.
void link_inverse_with_derivative(Link link, const double* eta, double* mu, double* derivative, long n);

/// derivative[i] = link_inverse_derivative(eta[i]) over n values, bit for bit, the link chosen once.
void link_inverse_derivative_all(Link link, const double* eta, double* derivative, long n);

/// mu[i] = link_inverse(eta[i]) over n values, the link chosen once. `mu` may be `eta`.
void link_inverse_all(Link link, const double* eta, double* mu, long n);

/// The limits of an interval on the link scale taken to the response scale over n values:
/// lower[i] = link_inverse(eta[i] - z se[i]), upper[i] = link_inverse(eta[i] + z se[i]). The four
/// arrays must not overlap.
void link_inverse_interval(Link link, const double* eta, const double* se, double z, double* lower, double* upper,
                           long n);

/// A prediction's response side in one pass over n values, from eta and the variance x'Vx of
/// eta: se_eta[i] = sqrt(max(variance[i], 0)), mu[i] = link_inverse(eta[i]), se_mu[i] =
/// link_inverse_derivative(eta[i]) * se_eta[i] and, when `lower` is not null, the limits of
/// link_inverse_interval() with se = se_eta: bit for bit what those calls give one after another
/// (one pass reads eta once and keeps each value in a register; no array may overlap another).
void link_response(Link link, const double* eta, const double* variance, double z, double* se_eta, double* mu,
                   double* se_mu, double* lower, double* upper, long n);

/// g(mu): the link itself, for fitting and for tests. mu must lie in the link's domain.
double link_function(Link link, double mu);

}  // namespace habcast
