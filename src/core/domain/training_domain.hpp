#pragma once
// What is known about where the model was trained, and the per-pixel test of whether a block of
// covariate values lies inside it: each continuous covariate's training range and the categorical
// levels seen. The joint checks (hull, NT2, pairs) live in NoveltyModel and add their own bits.
#include <Eigen/Core>
#include <cstdint>
#include <map>
#include <utility>
#include <vector>

#include "core/domain/training_samples.hpp"
#include "core/model/code_table.hpp"
#include "core/model/model_spec.hpp"

namespace habcast {

struct CovariateRange {
  double min = 0.0;  ///< raw units (before transform)
  double max = 0.0;
  std::int64_t samples = 0;  ///< samples that recorded the covariate
};

/// Per-covariate and per-cause pixel counts of one block; merged across blocks in block order.
struct DomainTally {
  std::vector<std::int64_t> below;   ///< per covariate: pixels below the training minimum
  std::vector<std::int64_t> above;   ///< per covariate: pixels above the training maximum
  std::vector<std::int64_t> unseen;  ///< per covariate: pixels with a level absent from training
  std::vector<std::map<std::int64_t, std::int64_t>> unseen_codes;  ///< per covariate: code -> pixels
  std::vector<std::int64_t> least_similar;  ///< per covariate: pixels with MESS < 0 where it is the least similar
  std::vector<std::int64_t> pair_outside;  ///< per interacting pair: in range, outside the pair's hull
  std::int64_t cause[5] = {0, 0, 0, 0, 0};  ///< pixels carrying each flag bit
  std::int64_t mess_negative = 0;    ///< pixels with MESS < 0 (some covariate outside its range)
  std::int64_t nt2_above = 0;        ///< pixels with NT2 above its threshold, in range or not
  std::int64_t flagged = 0;          ///< pixels with any flag
  std::int64_t checked = 0;          ///< pixels with data for every covariate

  explicit DomainTally(std::size_t covariates = 0)
      : below(covariates), above(covariates), unseen(covariates), unseen_codes(covariates), least_similar(covariates) {}
  void merge(const DomainTally& other);
};

class TrainingDomain {
 public:
  TrainingDomain(const ModelSpec& spec, const TrainingSamples& samples);

  [[nodiscard]] const CovariateRange& range(std::size_t covariate) const { return ranges_[covariate]; }
  /// The limits beyond which a value is flagged outside_range: the training range, narrowed to
  /// the boundary knots of any spline basis the covariate enters through (raw units).
  [[nodiscard]] const std::pair<double, double>& flag_range(std::size_t covariate) const { return flag_limits_[covariate]; }
  /// Level codes seen in training for categorical covariate `covariate`, sorted.
  [[nodiscard]] const std::vector<std::int64_t>& levels_seen(std::size_t covariate) const { return seen_[covariate]; }
  [[nodiscard]] std::int64_t sample_count() const { return samples_; }
  /// A covariate used only by the offset: its range is checked and counted (tally below/above)
  /// but sets no flag bit, because it is not part of the niche (docs/extrapolation-flags.md).
  [[nodiscard]] bool offset_only(std::size_t covariate) const { return offset_only_[covariate]; }

  /// Writes the range and level bits for the first `rows` rows of `raw` (rows x covariates, raw
  /// values; row-wise valid mask). Invalid rows get flag::nodata. Adds per-covariate counts to
  /// `tally`; the per-cause counts come from count_causes() once every check has set its bits.
  void flag(const Eigen::ArrayXXd& raw, Eigen::Index rows, const std::uint8_t* valid, std::uint8_t* flags,
            DomainTally& tally) const;

  /// True when `other`, given the same raw columns, sets the same bits and counts as this domain:
  /// the same covariates (names, continuous or categorical), training ranges, flag limits and
  /// levels seen. Models of a set fitted to one training table with the same covariates agree.
  [[nodiscard]] bool same_checks(const TrainingDomain& other) const;

  /// Adds the checked, flagged and per-cause pixel counts of a finished block of flags.
  static void count_causes(Eigen::Index rows, const std::uint8_t* valid, const std::uint8_t* flags, DomainTally& tally);

 private:
  const ModelSpec& spec_;
  std::vector<CovariateRange> ranges_;
  /// Per covariate: the values flagged outside_range lie beyond these (the training range,
  /// narrowed to any spline's boundary knots).
  std::vector<std::pair<double, double>> flag_limits_;
  std::vector<std::vector<std::int64_t>> seen_;
  std::vector<CodeTable> seen_tables_;  ///< per categorical covariate: 1 for a code seen, else 0
  std::vector<bool> offset_only_;
  std::int64_t samples_ = 0;
};

}  // namespace habcast
