#include "cli/describe_values.hpp"

#include <cmath>
#include <cstdio>

#include "core/base/number_text.hpp"
#include "core/model/model_values.hpp"

namespace habcast::cli {

RawCoordinate raw_coordinate(const Covariate& c, const CanonicalAnalysis& a, Eigen::Index i) {
  RawCoordinate r;
  r.model = a.stationary[i];
  r.raw = raw_value(c, r.model);
  if (a.stationary_covariance) {
    const double se = std::sqrt(std::max(0.0, (*a.stationary_covariance)(i, i)));
    r.se_model = se;
    r.se_raw = raw_value_derivative(c, r.model) * se;
    // Mapped through the inverse transform, the interval stays inside the covariate's domain
    // (positive for a log transform) and is asymmetric where the transform is curved.
    r.lower_raw = raw_value(c, r.model - a.z * se);
    r.upper_raw = raw_value(c, r.model + a.z * se);
  }
  return r;
}

std::string transformed_name(const Covariate& c) {
  return c.transform == Transform::none ? c.name : std::string(to_string(c.transform)) + "(" + c.name + ")";
}

TransformedLine transformed_line(const Covariate& target, const Covariate& given, const ConditionalOptimum& c) {
  // t = center + scale * x for both covariates, substituted into x_t = a + g x_g.
  TransformedLine line;
  line.slope = c.slope * target.scale / given.scale;
  line.intercept = target.center + target.scale * c.intercept - line.slope * given.center;
  line.formula = transformed_name(target) + " = " + num(line.intercept) + (line.slope < 0 ? " - " : " + ") +
                 num(std::fabs(line.slope)) + " * " + transformed_name(given);
  return line;
}

std::string num(double v) { return significant(v, 4); }

std::string with_units(double v, const std::string& units) { return units.empty() ? num(v) : num(v) + " " + units; }

double degrees(double radians) { return radians * 180.0 / std::acos(-1.0); }

bool distinguishable(double estimate, const std::optional<double>& se, double z) {
  return se && *se > 0.0 && std::fabs(estimate) / *se > z;
}

bool peak_supported(const CanonicalAnalysis& a) {
  if (a.shape != SurfaceShape::peak) return false;
  for (const PrincipalAxis& axis : a.axes)
    if (!distinguishable(axis.eigenvalue, axis.eigenvalue_se, a.z)) return false;
  return true;
}

std::string covariate_name(const ModelSpec& spec, int covariate) {
  return spec.covariates[static_cast<std::size_t>(covariate)].name;
}

}  // namespace habcast::cli
