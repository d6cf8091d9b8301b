#include "core/stats/coefficient_table.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>

#include "core/numeric/normal_distribution.hpp"
#include "core/numeric/student_t.hpp"

namespace habcast {

std::vector<CoefficientRow> coefficient_table(const GlmFit& fit, const std::vector<std::string>& terms) {
  std::vector<CoefficientRow> rows;
  for (std::size_t j = 0; j < terms.size(); ++j) {
    const auto i = static_cast<Eigen::Index>(j);
    CoefficientRow r;
    r.term = terms[j];
    r.estimate = fit.coefficients[i];
    r.std_error = fit.std_errors[i];
    r.statistic = r.estimate / r.std_error;
    r.p_value = fit.dispersion_estimated ? student_t_two_sided_p(r.statistic, static_cast<double>(fit.df_residual))
                                         : 2.0 * normal_cdf(-std::fabs(r.statistic));
    rows.push_back(r);
  }
  return rows;
}

namespace {

std::string fixed(const char* format, double v) {
  char buf[64];
  std::snprintf(buf, sizeof buf, format, v);
  return buf;
}

std::string p_text(double p) {
  if (p < 2e-16) return "< 2e-16";  // below what double arithmetic resolves near 1 - p
  if (p < 1e-4) return fixed("%.2e", p);
  return fixed("%.4f", p);
}

std::string pad_left(const std::string& s, std::size_t width) { return std::string(width > s.size() ? width - s.size() : 0, ' ') + s; }

}  // namespace

std::string format_coefficient_table(const std::vector<CoefficientRow>& rows, bool t_statistic) {
  std::size_t term_width = 4;
  for (const CoefficientRow& r : rows) term_width = std::max(term_width, r.term.size());
  std::string out = "term" + std::string(term_width - 4, ' ') + pad_left("estimate", 14) + pad_left("std. error", 14) +
                    pad_left(t_statistic ? "t value" : "z value", 10) + pad_left("p", 12) + "\n";
  for (const CoefficientRow& r : rows) {
    out += r.term + std::string(term_width - r.term.size(), ' ') + pad_left(fixed("%.6g", r.estimate), 14) +
           pad_left(fixed("%.6g", r.std_error), 14) + pad_left(fixed("%.3f", r.statistic), 10) +
           pad_left(p_text(r.p_value), 12) + "\n";
  }
  return out;
}

}  // namespace habcast
