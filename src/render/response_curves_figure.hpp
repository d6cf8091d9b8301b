#pragma once
// The picture of `describe --curves FILE.svg|.png|.pdf`: one panel per covariate with the
// predicted response against it (others held at describe's reference), the delta-method band,
// the training values as a rug, the training range shaded (the curve is dashed beyond it, where
// it is extrapolated) and any spline's boundary knots as dotted lines; categorical covariates as
// a point per level with its interval. docs/describe.md ("Response curves").
#include "core/model/model_spec.hpp"
#include "core/niche/niche_description.hpp"
#include "render/figure.hpp"

namespace habcast {

/// Needs d.curves (DescribeSettings::curves). `confidence` labels the band.
Figure response_curves_figure(const ModelSpec& spec, const NicheDescription& d, double confidence);

}  // namespace habcast
