#pragma once
// The model's terms compiled once into a plan that fills a design matrix from covariate columns.
// predict, describe, fit and the training-sample checks all build X through this one class, so a
// term has exactly one definition.
#include <Eigen/Core>
#include <cstdint>
#include <optional>
#include <vector>

#include "core/model/code_table.hpp"
#include "core/model/model_spec.hpp"
#include "core/model/term_syntax.hpp"

namespace habcast {

/// Column-major block of model values: one row per pixel (or sample), one column per covariate of
/// the ModelSpec. Continuous covariates hold their model value (after transform and
/// standardisation); categorical ones hold the index of the level in Covariate::levels, or -1 for a
/// code the model does not know.
using ModelValues = Eigen::ArrayXXd;

class TermPlan {
 public:
  /// Parses and checks every term of `spec` (and its offset term). Throws InputError at the term's
  /// line for a term the syntax does not know, an unknown covariate or level, or a duplicate term.
  explicit TermPlan(const ModelSpec& spec);

  [[nodiscard]] Eigen::Index term_count() const { return static_cast<Eigen::Index>(terms_.size()); }
  [[nodiscard]] const std::vector<Term>& terms() const { return terms_; }
  [[nodiscard]] const std::optional<Term>& offset_term() const { return offset_; }
  /// True for covariates that appear in at least one term or in the offset.
  [[nodiscard]] bool uses_covariate(int covariate) const;
  /// True for covariates that appear in the offset and in no term (effort, area, exposure). They
  /// scale the prediction but are not part of the niche: the joint checks leave them out, describe
  /// holds them, and their range check is reported on its own (docs/extrapolation-flags.md).
  [[nodiscard]] bool offset_only(int covariate) const;
  /// For a categorical covariate: each level's code to its index in Covariate::levels, every other
  /// value to -1 (not usable() when the codes span too many whole numbers for a table; empty for a
  /// continuous covariate).
  [[nodiscard]] const CodeTable& level_table(int covariate) const {
    return level_tables_[static_cast<std::size_t>(covariate)];
  }

  /// The spline bases the terms use, one per (covariate, ns or bs), built once from the spec.
  struct SplineUse {
    int covariate = -1;
    TermFunction function = TermFunction::natural_spline;
    SplineBasis basis;
  };
  [[nodiscard]] const std::vector<SplineUse>& splines() const { return splines_; }

  /// Fills X (rows x term_count) for the first `rows` rows of `values`. Sets valid[i] = 0 where a
  /// term is undefined or not finite (log of a non-positive value, ...) or a categorical value is
  /// an unknown level (-1) of a covariate that enters the model; rows already invalid are skipped
  /// and their X rows zeroed. Returns how many rows this call newly invalidated.
  std::int64_t fill(const ModelValues& values, Eigen::Index rows, Eigen::MatrixXd& X,
                    std::uint8_t* valid) const;

  /// Sizes X for fill() of up to `rows` rows with a column stride that is no multiple of 4 KiB:
  /// for chunks of 4096 rows the columns would otherwise lie 32 KiB apart, share the same sets of
  /// the first-level cache, and evict each other while the kernel reads all p of them at once
  /// (on the bench stack the design stage went 8.5 -> 6.4 ns/pixel). Rows past `rows` are never
  /// read.
  void size_design(Eigen::Index rows, Eigen::MatrixXd& X) const;

  /// The offset column (zero when the model has no offset term; the constant is separate).
  void fill_offset(const ModelValues& values, Eigen::Index rows, Eigen::VectorXd& offset,
                   std::uint8_t* valid) const;

 private:
  void reject_reference_indicators(const ModelSpec& spec) const;
  /// Fills `column` (rows values) with `term` for rows first_row .. first_row + rows - 1.
  void fill_term(const Term& term, const ModelValues& values, Eigen::Index first_row, Eigen::Index rows,
                 double* column, const std::vector<Eigen::MatrixXd>& spline_values) const;
  void add_splines(const Term& term, const ModelSpec& spec);

  std::vector<SplineUse> splines_;

  std::vector<Term> terms_;
  std::optional<Term> offset_;
  std::vector<bool> used_;
  std::vector<bool> in_terms_;         ///< used by at least one term (not only by the offset)
  std::vector<int> categorical_;       ///< indices of categorical covariates
  std::vector<int> used_categorical_;  ///< ... of those that enter a term or the offset
  std::vector<CodeTable> level_tables_;  ///< per covariate, see level_table()
};

}  // namespace habcast
