#pragma once
// Link functions of the supported GLM families: the inverse link (linear predictor -> response
// scale) and its derivative, written to be finite and exact-as-possible for any eta, including the
// tails where the naive formulas overflow, underflow to NaN or cancel.
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

/// mu[i] = link_inverse(eta[i]) over n values, the link chosen once.
void link_inverse_all(Link link, const double* eta, double* mu, long n);

/// g(mu): the link itself, for fitting and for tests. mu must lie in the link's domain.
double link_function(Link link, double mu);

}  // namespace habcast
