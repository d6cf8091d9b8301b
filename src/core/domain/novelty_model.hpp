#pragma once
// The joint training-domain checks, in the space of the model values of the continuous covariates
// the model uses: similarity (MESS) and univariate novelty (NT1) per covariate, the Mahalanobis
// ratio NT2, the exact convex hull of all of them, and exact 2-D hulls of each pair of covariates
// that share a term. Built once from the training samples; checks blocks of pixels after
// TrainingDomain has set the range and level bits. Documented in docs/extrapolation-flags.md.
#include <Eigen/Core>
#include <array>
#include <cmath>
#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "core/domain/novelty_indices.hpp"
#include "core/domain/training_domain.hpp"
#include "core/domain/training_hull.hpp"
#include "core/domain/training_samples.hpp"
#include "core/model/model_spec.hpp"
#include "core/model/term_plan.hpp"

namespace habcast {

struct NoveltyOptions {
  bool mess = true;   ///< MESS and NT1 (novelty.tif bands 1-2, least_similar.tif)
  bool nt2 = true;    ///< NT2 (band 3) and flag bit 8
  bool hull = true;   ///< full convex hull, flag bit 2
  bool pairs = true;  ///< 2-D hulls of interacting pairs, flag bit 16
  double nt2_threshold = 1.0;    ///< flag bit 8 where NT2 exceeds this
  double hull_tolerance = 1e-9;  ///< relative enlargement of the hulls about their centroid
  /// Largest number of covariates for the full hull. Qhull's facet count grows like
  /// n^floor(d/2): for 2,000 points about 600 facets in 4-D, 4,000 in 5-D and 23,000 (5 s) in 6-D;
  /// in 7-D Qhull had not finished after 5 minutes (2 cores). Above it, pairwise hulls and NT2 stand in.
  int hull_max_dim = 6;
  [[nodiscard]] bool any() const { return mess || nt2 || hull || pairs; }
};

/// Two continuous covariates that appear together in at least one term.
struct CovariatePair {
  int a = 0, b = 0;                 ///< indices into ModelSpec::covariates, a < b
  std::vector<std::string> terms;   ///< labels of the terms they share
};

/// Per-pixel novelty outputs of one block (row-major over its pixels); kFloatNodata / 255 where
/// not computed.
struct NoveltyBlock {
  std::vector<float> mess, nt1, nt2;
  std::vector<std::uint8_t> least_similar;  ///< 1 + index of the covariate with the smallest similarity
  /// With keep_pairs set before check(): per pair of the model, 1 where the pixel lies outside the
  /// pair's hull (for check_pairs() of another model with the same pair).
  bool keep_pairs = false;
  std::vector<std::vector<std::uint8_t>> pair_outside;
  /// Scratch reused across blocks, per slab of pixels in columns (NoveltyModel::check_pixels).
  struct Slab {
    std::vector<double> z;        ///< model values, one column per covariate
    std::vector<double> y, off;   ///< whitened coordinates (one column per axis), distance off the plane
    std::vector<double> mess, nt1, similarity;
    std::vector<std::int64_t> least;  ///< index (into the model's covariates) of the smallest similarity
    std::vector<std::uint8_t> use;    ///< valid with every model value finite
    std::vector<double> point;        ///< one pixel's coordinates, gathered from the columns
    std::vector<const double*> columns;  ///< the model value columns a frame whitens
  } slab;
};

class NoveltyModel {
 public:
  /// Throws InputError naming the training table for data the checks cannot use: fewer than two
  /// samples of a covariate, a covariate with the same value in every sample (zero variance), or
  /// a value outside its covariate's transform.
  NoveltyModel(const ModelSpec& spec, const TermPlan& plan, const TrainingSamples& samples,
               const NoveltyOptions& options);

  [[nodiscard]] const NoveltyOptions& options() const { return options_; }
  /// Continuous covariates the model uses (indices into ModelSpec::covariates), in model order.
  [[nodiscard]] const std::vector<int>& covariates() const { return covariates_; }
  [[nodiscard]] const std::vector<CovariatePair>& pairs() const { return pairs_; }
  /// The full hull, when it was built (checks on, 2+ covariates, within hull_max_dim).
  [[nodiscard]] const std::optional<TrainingHull>& hull() const { return hull_; }
  [[nodiscard]] const std::vector<TrainingHull>& pair_hulls() const { return pair_hulls_; }
  /// Plain-language description of the full-hull test, or of what stands in for it.
  [[nodiscard]] const std::string& hull_method() const { return hull_method_; }
  /// Notes on degenerate training sets and their fallbacks (also warnings of the run).
  [[nodiscard]] const std::vector<std::string>& notes() const { return notes_; }
  [[nodiscard]] std::int64_t complete_samples() const { return complete_; }
  /// The largest Mahalanobis distance (not squared) of a training sample from the centroid.
  [[nodiscard]] double nt2_max_distance() const { return std::sqrt(nt2_max_); }
  [[nodiscard]] bool active() const { return !covariates_.empty() && options_.any(); }

  /// Checks the first `rows` pixels of `raw` (rows x all covariates, raw values). Pixels with
  /// valid == 0 get nodata. Adds bits 2, 8 and 16 to `flags` where bit 1 is not set, fills `out`
  /// and adds to `tally`. The result depends only on the block's values, never on earlier blocks.
  void check(const Eigen::ArrayXXd& raw, Eigen::Index rows, const std::uint8_t* valid, std::uint8_t* flags,
             NoveltyBlock& out, DomainTally& tally) const;

  /// True when `other`, given the same raw columns and the same range bits, gives the same MESS,
  /// NT1, NT2 and full-hull results as this model: same options, the same continuous covariates
  /// read the same way (transform, centre, scale) and the same training values. Their pair hulls
  /// may differ (models of a set that differ by an interaction term).
  [[nodiscard]] bool same_joint_checks(const NoveltyModel& other) const;
  /// check() for a block whose MESS, NT1, NT2 and full-hull results (`out`'s bands, bits 2 and 8,
  /// and their counts in `tally`) were copied from `donor`, a model with the same joint checks
  /// that checked the block into `donor_block`: adds this model's own pair-hull bits and counts.
  /// A pair the donor has too (same covariates, same training points) is taken from the donor's
  /// mask when it kept them (NoveltyBlock::keep_pairs); the others are checked.
  void check_pairs(const Eigen::ArrayXXd& raw, Eigen::Index rows, const std::uint8_t* valid, std::uint8_t* flags,
                   NoveltyBlock& out, DomainTally& tally, const NoveltyModel& donor,
                   const NoveltyBlock& donor_block) const;

 private:
  void check_pixels(const Eigen::ArrayXXd& raw, Eigen::Index rows, const std::uint8_t* valid, std::uint8_t* flags,
                    NoveltyBlock& out, DomainTally& tally, bool joint, const std::vector<bool>* skip_pairs) const;
  /// check_pixels() for the `m` pixels from `first`, whose model values and usability are in out.slab.
  void check_slab(std::size_t first, std::size_t m, std::uint8_t* flags, NoveltyBlock& out, DomainTally& tally,
                  bool joint, const std::vector<bool>* skip_pairs, int& hull_start, std::vector<int>& pair_start) const;
  /// Pixels per slab: the slab's columns (a dozen of them for four covariates) stay in L1.
  static constexpr std::size_t kSlab = 256;
  void build_univariate(const ModelSpec& spec, const TrainingSamples& samples);
  void build_joint(const ModelSpec& spec, const TrainingSamples& samples);
  void build_pairs(const ModelSpec& spec, const TermPlan& plan, const TrainingSamples& samples);
  [[nodiscard]] std::string names(const std::vector<int>& covariates) const;

  const ModelSpec& spec_;
  NoveltyOptions options_;
  std::vector<int> covariates_;
  std::vector<SortedValues> sorted_;  ///< per covariate: training model values, ascending
  Eigen::MatrixXd complete_points_;          ///< training rows with every covariate recorded
  std::int64_t complete_ = 0;
  std::optional<WhiteningFrame> frame_;      ///< for NT2
  bool hull_shares_nt2_frame_ = false;       ///< the hull's frame equals frame_: whiten once per pixel
  double nt2_max_ = 0.0;                     ///< largest SQUARED training distance, NT2's denominator
  std::optional<TrainingHull> hull_;
  std::vector<CovariatePair> pairs_;
  std::vector<TrainingHull> pair_hulls_;
  std::vector<Eigen::MatrixXd> pair_points_;  ///< per pair: the training points of its hull
  std::vector<std::array<std::size_t, 2>> pair_columns_;  ///< per pair: its covariates' places in covariates_
  std::string hull_method_;
  std::vector<std::string> notes_;
};

}  // namespace habcast
