#pragma once
// The coefficient table of a fitted GLM: estimate, standard error, z (or t) and two-sided p, as
// R's summary.glm prints it, plus a plain-text rendering for the terminal.
#include <string>
#include <vector>

#include "core/stats/irls.hpp"

namespace habcast {

struct CoefficientRow {
  std::string term;
  double estimate = 0.0;
  double std_error = 0.0;
  double statistic = 0.0;  ///< estimate / std_error
  double p_value = 0.0;    ///< normal for known dispersion, Student's t on df_residual otherwise
};

std::vector<CoefficientRow> coefficient_table(const GlmFit& fit, const std::vector<std::string>& terms);

/// Aligned text table with a header ("z value"/"t value" as appropriate).
std::string format_coefficient_table(const std::vector<CoefficientRow>& rows, bool t_statistic);

}  // namespace habcast
