#pragma once
// Numbers of a NicheDescription converted for people: raw units, intervals, degrees, formulas.
// Shared by the text and the JSON output so both always say the same.
#include <optional>
#include <string>

#include "core/model/model_spec.hpp"
#include "core/niche/niche_description.hpp"

namespace habcast::cli {

/// One coordinate of a stationary point in raw units, with its delta-method error and an interval
/// formed in model units and mapped through the (monotone) inverse transform.
struct RawCoordinate {
  double model = 0.0;
  double raw = 0.0;
  std::optional<double> se_model, se_raw, lower_raw, upper_raw;
};

RawCoordinate raw_coordinate(const Covariate& c, const CanonicalAnalysis& a, Eigen::Index i);

/// "tmin" or "log(precip)": the quantity that is linear in the model value.
std::string transformed_name(const Covariate& c);

/// The conditional optimum in transformed units: t_target* = intercept + slope * t_given, where
/// t = transform(raw) (raw itself for untransformed covariates).
struct TransformedLine {
  double intercept = 0.0;
  double slope = 0.0;
  std::string formula;  ///< "tmin = 1.05 + 0.00249 * precip"
};
TransformedLine transformed_line(const Covariate& target, const Covariate& given, const ConditionalOptimum& c);

/// 4 significant digits, as people read them.
std::string num(double v);
/// num(v) + " " + units, or num(v) alone without units.
std::string with_units(double v, const std::string& units);
double degrees(double radians);

/// True when |estimate| / se exceeds the normal quantile z.
bool distinguishable(double estimate, const std::optional<double>& se, double z);

/// A peak whose every curvature is distinguishable from zero.
bool peak_supported(const CanonicalAnalysis& a);

std::string covariate_name(const ModelSpec& spec, int covariate);

}  // namespace habcast::cli
