#include "core/model/term_plan.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <map>
#include <vector>

#include "core/base/error.hpp"
#include "core/base/pixel_loops.hpp"

namespace habcast {

TermPlan::TermPlan(const ModelSpec& spec) : used_(spec.covariates.size(), false), in_terms_(spec.covariates.size(), false) {
  std::map<std::string, std::size_t> seen;  // canonical label -> position
  terms_.reserve(spec.terms.size());
  for (std::size_t i = 0; i < spec.terms.size(); ++i) {
    const long line = i < spec.term_lines.size() ? spec.term_lines[i] : 0;
    Term term = parse_term(spec.terms[i], spec, spec.path, line);
    const auto [it, inserted] = seen.emplace(term.canonical, i);
    if (!inserted)
      throw InputError(located(spec.path, line,
                               "term \"" + spec.terms[i] + "\" repeats term " + std::to_string(it->second + 1) +
                                   " (\"" + spec.terms[it->second] +
                                   "\"); each term may appear once (factor order does not matter)"));
    for (const TermFactor& f : term.factors) used_[static_cast<std::size_t>(f.covariate)] = in_terms_[static_cast<std::size_t>(f.covariate)] = true;
    add_splines(term, spec);
    terms_.push_back(std::move(term));
  }
  reject_reference_indicators(spec);
  level_tables_.resize(spec.covariates.size());
  for (std::size_t c = 0; c < spec.covariates.size(); ++c) {
    const Covariate& cov = spec.covariates[c];
    if (!cov.categorical) continue;
    categorical_.push_back(static_cast<int>(c));
    std::vector<std::pair<std::int64_t, std::int32_t>> index_of;
    for (std::size_t l = 0; l < cov.levels.size(); ++l)
      index_of.emplace_back(cov.levels[l].code, static_cast<std::int32_t>(l));
    level_tables_[c] = CodeTable(index_of, -1);
  }
  if (spec.offset_term) {
    offset_ = parse_term(*spec.offset_term, spec, spec.path, spec.offset_line, "offset");
    for (const TermFactor& f : offset_->factors)
      if (is_spline(f.function))
        throw InputError(located(spec.path, spec.offset_line, "the offset \"" + *spec.offset_term +
                                                   "\" holds a spline column; an offset has no estimate, so a basis "
                                                   "column there is almost surely a mistake. Make it a term"));
    for (const TermFactor& f : offset_->factors) used_[static_cast<std::size_t>(f.covariate)] = true;
  }
  for (int c : categorical_)
    if (used_[static_cast<std::size_t>(c)]) used_categorical_.push_back(c);
}

void TermPlan::reject_reference_indicators(const ModelSpec& spec) const {
  // With an intercept, the reference level's own indicator is the intercept minus the other
  // levels' indicators: a coefficient on it means the file names the wrong level (a code read as a
  // name, or the other way round), so it is refused rather than applied to the wrong class.
  // Products (soil[peat]:tmin) may name the reference level: R writes them when the continuous
  // factor has no main effect.
  const bool has_intercept = std::any_of(terms_.begin(), terms_.end(), [](const Term& t) { return t.intercept; });
  if (!has_intercept) return;
  for (std::size_t i = 0; i < terms_.size(); ++i) {
    const Term& t = terms_[i];
    if (t.factors.size() != 1 || t.factors[0].level < 0) continue;
    const Covariate& c = spec.covariates[static_cast<std::size_t>(t.factors[0].covariate)];
    const Level& level = c.levels[static_cast<std::size_t>(t.factors[0].level)];
    if (level.name != c.reference_level) continue;
    throw InputError(located(spec.path, i < spec.term_lines.size() ? spec.term_lines[i] : 0,
                             "term \"" + spec.terms[i] + "\" names level \"" + level.name + "\" (code " +
                                 std::to_string(level.code) + "), the reference level of \"" + c.name +
                                 "\", which the intercept absorbs and which has no term of its own. If the term was "
                                 "meant for another level, name that level; if \"" + level.name +
                                 "\" is not the reference, set reference = \"...\" in [covariates." + c.name + "]"));
  }
}

bool TermPlan::offset_only(int covariate) const {
  return uses_covariate(covariate) && !in_terms_[static_cast<std::size_t>(covariate)];
}

void TermPlan::add_splines(const Term& term, const ModelSpec& spec) {
  for (const TermFactor& f : term.factors) {
    if (!is_spline(f.function)) continue;
    bool known = false;
    for (const SplineUse& s : splines_) known = known || (s.covariate == f.covariate && s.function == f.function);
    if (known) continue;
    const Covariate& c = spec.covariates[static_cast<std::size_t>(f.covariate)];
    // parse_term has checked that the basis is declared; the model reader, that it is valid.
    const SplineDefinition& d = f.function == TermFunction::natural_spline ? *c.natural_spline : *c.bspline;
    splines_.push_back({f.covariate, f.function, SplineBasis(d)});
  }
}

bool TermPlan::uses_covariate(int covariate) const {
  return covariate >= 0 && static_cast<std::size_t>(covariate) < used_.size() &&
         used_[static_cast<std::size_t>(covariate)];
}

namespace {

double apply_function(TermFunction fn, double v) {
  switch (fn) {
    case TermFunction::none: return v;
    // Outside the domain these give NaN (or -inf for log(0)); fill() turns that into nodata.
    case TermFunction::log: return v > 0.0 ? std::log(v) : std::numeric_limits<double>::quiet_NaN();
    case TermFunction::log1p: return v > -1.0 ? std::log1p(v) : std::numeric_limits<double>::quiet_NaN();
    case TermFunction::sqrt: return v >= 0.0 ? std::sqrt(v) : std::numeric_limits<double>::quiet_NaN();
    case TermFunction::exp: return std::exp(v);
    case TermFunction::natural_spline:
    case TermFunction::bspline: break;  // filled from the basis, never through here
  }
  return v;
}

// Integer power by repeated multiplication: exact for small powers and the same on every machine.
double integer_power(double v, int power) {
  double r = v;
  for (int k = 1; k < power; ++k) r *= v;
  return r;
}

}  // namespace

// Each factor multiplies the column in term order, as 1.0 * f1 * f2 ... would (1.0 * f is f exactly,
// so the first factor is stored, not multiplied); powers 1 and 2 are written out so that the loops
// vectorise, with the same products as integer_power().
HABCAST_PIXEL_LOOPS void TermPlan::fill_term(const Term& term, const ModelValues& values, Eigen::Index first_row,
                                             Eigen::Index rows, double* column,
                         const std::vector<Eigen::MatrixXd>& spline_values) const {
  if (term.intercept || term.factors.empty()) {
    for (Eigen::Index r = 0; r < rows; ++r) column[r] = 1.0;
    return;
  }
  bool first = true;
  const auto apply = [&](auto factor_value) {
    if (first)
      for (Eigen::Index r = 0; r < rows; ++r) column[r] = factor_value(r);
    else
      for (Eigen::Index r = 0; r < rows; ++r) column[r] *= factor_value(r);
    first = false;
  };
  for (const TermFactor& f : term.factors) {
    const double* v = values.col(f.covariate).data() + first_row;
    if (is_spline(f.function)) {
      std::size_t s = 0;
      while (splines_[s].covariate != f.covariate || splines_[s].function != f.function) ++s;
      const double* b = spline_values[s].col(f.column).data() + first_row;
      apply([&](Eigen::Index r) { return b[r]; });
    } else if (f.level >= 0) {
      const double level = static_cast<double>(f.level);
      apply([&](Eigen::Index r) { return v[r] == level ? 1.0 : 0.0; });
    } else if (f.function == TermFunction::none && f.power == 1) {
      apply([&](Eigen::Index r) { return v[r]; });
    } else if (f.function == TermFunction::none && f.power == 2) {
      apply([&](Eigen::Index r) { return v[r] * v[r]; });
    } else if (f.function == TermFunction::none) {
      apply([&](Eigen::Index r) { return integer_power(v[r], f.power); });
    } else {
      apply([&](Eigen::Index r) { return integer_power(apply_function(f.function, v[r]), f.power); });
    }
  }
}

HABCAST_PIXEL_LOOPS std::int64_t TermPlan::fill(const ModelValues& values, Eigen::Index rows, Eigen::MatrixXd& X,
                            std::uint8_t* valid) const {
  const Eigen::Index p = term_count();
  if (X.rows() < rows || X.cols() != p) X.resize(rows, p);
  // A categorical value the model does not know (-1) cannot be predicted: its indicators would
  // silently treat it as the reference level. Each column is checked right after it is filled,
  // while it is still in cache, and without branches so the loop vectorises.
  std::vector<std::uint8_t> ok_rows(valid, valid + rows);  // the plan is shared by threads: no member scratch
  std::uint8_t* ok = ok_rows.data();
  // Each spline basis once per block, shared by all its columns and interactions.
  std::vector<Eigen::MatrixXd> spline_values(splines_.size());
  for (std::size_t s = 0; s < splines_.size(); ++s)
    splines_[s].basis.evaluate(values.col(splines_[s].covariate).data(), rows, spline_values[s]);
  // x * 0 is NaN exactly when x is not finite, so one sum per row in doubles (a loop that
  // vectorises, unlike a byte mask per column) finds every row with a term that is not finite.
  // The terms are filled a slab of rows at a time, so that the slab's columns and sums are still
  // in the first-level cache when they are checked (a whole chunk's column and sums are not).
  constexpr Eigen::Index kSlab = 256;
  double nf[kSlab];
  for (Eigen::Index first = 0; first < rows; first += kSlab) {
    const Eigen::Index m = std::min(kSlab, rows - first);
    std::fill(nf, nf + m, 0.0);
    for (Eigen::Index j = 0; j < p; ++j) {
      double* x = X.col(j).data() + first;
      fill_term(terms_[static_cast<std::size_t>(j)], values, first, m, x, spline_values);
      for (Eigen::Index r = 0; r < m; ++r) nf[r] += x[r] * 0.0;
    }
    for (Eigen::Index r = 0; r < m; ++r) ok[first + r] &= static_cast<std::uint8_t>(nf[r] == 0.0);
  }
  for (int c : used_categorical_) {
    const double* level = values.col(c).data();
    for (Eigen::Index r = 0; r < rows; ++r) ok[r] &= static_cast<std::uint8_t>(level[r] >= 0.0);
  }
  std::int64_t invalidated = 0;
  for (Eigen::Index r = 0; r < rows; ++r) {
    if (ok[r]) continue;
    if (valid[r]) {
      valid[r] = 0;
      ++invalidated;
    }
    X.row(r).setZero();
  }
  return invalidated;
}

void TermPlan::size_design(Eigen::Index rows, Eigen::MatrixXd& X) const {
  const Eigen::Index p = term_count();
  if (X.rows() >= rows && X.cols() == p) return;
  // Rows rounded up to whole cache lines of doubles, plus one line: consecutive columns then
  // start in consecutive sets.
  X.resize((rows + 7) / 8 * 8 + 8, p);
}

void TermPlan::fill_offset(const ModelValues& values, Eigen::Index rows, Eigen::VectorXd& offset,
                           std::uint8_t* valid) const {
  if (offset.size() < rows) offset.resize(rows);
  if (!offset_) {
    offset.head(rows).setZero();
    return;
  }
  fill_term(*offset_, values, 0, rows, offset.data(), {});
  for (Eigen::Index r = 0; r < rows; ++r)
    if (!std::isfinite(offset[r])) {
      valid[r] = 0;
      offset[r] = 0.0;
    }
}

}  // namespace habcast
