#pragma once
// A model formula in the usual notation, "tmin + tmin^2 + precip + tmin:precip + soil", turned into
// habcast term labels against the model's covariates. A bare categorical covariate expands to one
// indicator term per level other than its reference level (also inside interactions: "tmin:soil"
// gives "tmin:soil[bog]", "tmin:soil[wood]", ...). The intercept is included unless the formula
// says "- 1" or "+ 0". An optional "response ~" prefix names the response column. A spline factor
// "ns(x, df = 4)" expands to its columns "ns(x)[1]" .. "ns(x)[4]" once its basis is declared
// (declare_formula_splines).
#include <functional>
#include <optional>
#include <string>
#include <vector>

#include "core/model/model_spec.hpp"

namespace habcast {

struct Formula {
  std::optional<std::string> response;  ///< left-hand side of "~", if given
  std::vector<std::string> terms;       ///< canonical labels, "(Intercept)" first when present
};

/// Declares on `spec`'s covariates the spline bases the formula's factors "ns(x, df = 4)",
/// "ns(x, knots = [a, b])", "bs(x, df = 5, degree = 2)" (optionally "boundary = [lo, hi]") ask for.
/// Knots and boundary knots given are raw values (converted to model values); otherwise the
/// boundary knots are the range of the covariate's training model values and the interior knots
/// their quantiles at equally spaced probabilities, as R's splines::ns and bs choose them (R's
/// quantile type 7). `training_values(covariate)` returns those model values. Throws UsageError for
/// an argument it does not know, a df too small, or two different bases of one kind on a covariate.
void declare_formula_splines(const std::string& text, ModelSpec& spec,
                             const std::function<std::vector<double>(int covariate)>& training_values);

/// Parses `text` against `spec`'s covariates. Throws UsageError saying what is wrong and how to
/// write it (unknown covariate, "*" crossing, a repeated term, an empty formula, ...).
Formula parse_formula(const std::string& text, const ModelSpec& spec);

/// Covariate names the formula mentions, in order of first appearance (before `spec` is known:
/// the fit command uses this to check every name has a raster).
std::vector<std::string> formula_covariates(const std::string& text);

}  // namespace habcast
