#pragma once
// A model formula in the usual notation, "tmin + tmin^2 + precip + tmin:precip + soil", turned into
// habcast term labels against the model's covariates. A bare categorical covariate expands to one
// indicator term per level other than its reference level (also inside interactions: "tmin:soil"
// gives "tmin:soil[bog]", "tmin:soil[wood]", ...). The intercept is included unless the formula
// says "- 1" or "+ 0". An optional "response ~" prefix names the response column.
#include <optional>
#include <string>
#include <vector>

#include "core/model/model_spec.hpp"

namespace habcast {

struct Formula {
  std::optional<std::string> response;  ///< left-hand side of "~", if given
  std::vector<std::string> terms;       ///< canonical labels, "(Intercept)" first when present
};

/// Parses `text` against `spec`'s covariates. Throws UsageError saying what is wrong and how to
/// write it (unknown covariate, "*" crossing, a repeated term, an empty formula, ...).
Formula parse_formula(const std::string& text, const ModelSpec& spec);

/// Covariate names the formula mentions, in order of first appearance (before `spec` is known:
/// the fit command uses this to check every name has a raster).
std::vector<std::string> formula_covariates(const std::string& text);

}  // namespace habcast
