#pragma once
// Loads the R glm() reference cases of tests/reference/glm/ (written by
// tests/reference/glm_fit_references.R) and builds habcast's fitting problem for each, through the
// same formula parser, standardisation and TermPlan that `habcast fit` uses.
#include <map>
#include <string>
#include <vector>

#include "core/base/csv_table.hpp"
#include "core/model/design_matrix.hpp"
#include "core/model/formula.hpp"
#include "core/model/model_spec.hpp"
#include "core/stats/irls.hpp"

namespace habcast::test {

inline std::string reference_path(const std::string& relative) {
  return std::string(HABCAST_SOURCE_DIR) + "/tests/reference/" + relative;
}

struct ReferenceCoefficient {
  double estimate, std_error, statistic, p_value;
};

struct ReferenceCase {
  CsvTable data;
  std::map<std::string, ReferenceCoefficient> coefficients;  ///< by habcast term label
  std::map<std::string, double> statistics;
};

inline ReferenceCase load_reference_case(const std::string& name) {
  ReferenceCase c{read_csv_table(reference_path("glm/" + name + "_data.csv")), {}, {}};
  const CsvTable co = read_csv_table(reference_path("glm/" + name + "_coefficients.csv"));
  for (std::size_t r = 0; r < co.rows.size(); ++r)
    c.coefficients[co.rows[r][0]] = {co.number(r, 1), co.number(r, 2), co.number(r, 3), co.number(r, 4)};
  const CsvTable st = read_csv_table(reference_path("glm/" + name + "_statistics.csv"));
  for (std::size_t r = 0; r < st.rows.size(); ++r) c.statistics[st.rows[r][0]] = st.number(r, 1);
  return c;
}

/// The same case fitted by R's glm() with its default control (tests/reference/glm_default_control.R):
/// coefficients in `coefficients`, and deviance, null_deviance, aic, dispersion, iterations.
inline ReferenceCase load_r_default_case(const std::string& name) {
  ReferenceCase c{read_csv_table(reference_path("glm/" + name + "_data.csv")), {}, {}};
  const CsvTable co = read_csv_table(reference_path("glm/" + name + "_rdefault_coefficients.csv"));
  for (std::size_t r = 0; r < co.rows.size(); ++r)
    c.coefficients[co.rows[r][0]] = {co.number(r, 1), co.number(r, 2), co.number(r, 3), co.number(r, 4)};
  const CsvTable st = read_csv_table(reference_path("glm/" + name + "_rdefault_statistics.csv"));
  for (std::size_t r = 0; r < st.rows.size(); ++r) c.statistics[st.rows[r][0]] = st.number(r, 1);
  return c;
}

inline Covariate continuous(const std::string& name) {
  Covariate c;
  c.name = name;
  return c;
}

inline Covariate categorical(const std::string& name, std::vector<Level> levels, const std::string& reference) {
  Covariate c;
  c.name = name;
  c.categorical = true;
  c.levels = std::move(levels);
  c.reference_level = reference;
  return c;
}

/// The model spec's covariates, the formula's terms and the raw table -> a GlmProblem.
inline GlmProblem build_problem(ModelSpec& spec, const CsvTable& data, const std::string& formula,
                                const std::string& response, bool standardise) {
  Eigen::ArrayXXd raw(static_cast<Eigen::Index>(data.rows.size()), static_cast<Eigen::Index>(spec.covariates.size()));
  for (std::size_t c = 0; c < spec.covariates.size(); ++c) {
    const std::size_t col = data.require_column(spec.covariates[c].name, "covariate");
    for (std::size_t r = 0; r < data.rows.size(); ++r)
      raw(static_cast<Eigen::Index>(r), static_cast<Eigen::Index>(c)) = data.number(r, col);
  }
  if (standardise) standardise_covariates(spec, raw, std::vector<std::uint8_t>(data.rows.size(), 1));
  spec.terms = parse_formula(formula, spec).terms;
  const Design d = build_design(spec, raw);
  GlmProblem p;
  p.X = d.X;
  p.term_names = spec.terms;
  p.intercept_column = spec.terms.front() == "(Intercept)" ? 0 : -1;
  p.family = spec.family;
  p.link = spec.link;
  const std::size_t y = data.require_column(response, "response");
  p.y.resize(static_cast<Eigen::Index>(data.rows.size()));
  for (std::size_t r = 0; r < data.rows.size(); ++r) p.y[static_cast<Eigen::Index>(r)] = data.number(r, y);
  return p;
}

inline Eigen::VectorXd column_vector(const CsvTable& data, const std::string& name) {
  const std::size_t col = data.require_column(name, "test column");
  Eigen::VectorXd v(static_cast<Eigen::Index>(data.rows.size()));
  for (std::size_t r = 0; r < data.rows.size(); ++r) v[static_cast<Eigen::Index>(r)] = data.number(r, col);
  return v;
}

}  // namespace habcast::test
