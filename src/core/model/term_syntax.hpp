#pragma once
// The term syntax of the model file ("tmin", "tmin^2", "tmin:precip", "log(x)", "soil[peat]",
// "ns(tmin)[2]", "(Intercept)") parsed against the model's covariates. Parsing knows covariates
// but no data.
#include <string>
#include <vector>

#include "core/model/model_spec.hpp"

namespace habcast {

/// Function applied to a covariate's model value inside a term.
/// natural_spline and bspline select one column of the covariate's declared spline basis.
enum class TermFunction { none, log, log1p, sqrt, exp, natural_spline, bspline };

/// One factor of a product term.
struct TermFactor {
  int covariate = -1;               ///< index into ModelSpec::covariates
  TermFunction function = TermFunction::none;
  int power = 1;                    ///< 1..9 (after merging repeated factors, up to 18)
  int level = -1;                   ///< categorical indicator: index into Covariate::levels; else -1
  int column = -1;                  ///< spline factors: 0-based column of the basis; else -1
};

/// True for a factor that is one column of a spline basis.
inline bool is_spline(TermFunction function) {
  return function == TermFunction::natural_spline || function == TermFunction::bspline;
}

/// A parsed term: the intercept (no factors) or a product of factors.
struct Term {
  bool intercept = false;
  std::vector<TermFactor> factors;  ///< in canonical order (sorted; repeated factors merged)
  std::string canonical;            ///< canonical label, equal for equal terms ("b:a" == "a:b")
};

/// Parses one term label. Throws InputError located at `file`:`line` that says what is wrong and
/// how to write it (unknown covariate, unknown function or level, malformed power, ...).
/// `role` names the label in messages: "term", or "offset" for [coefficients] offset.
Term parse_term(const std::string& label, const ModelSpec& spec, const std::string& file, long line,
                const char* role = "term");

const char* to_string(TermFunction function);

}  // namespace habcast
