#pragma once
// One block of pixels from raw covariate values to output arrays and tallies: model values, design
// matrix, prediction, extrapolation flags. Pure computation; one instance per worker thread.
#include <Eigen/Core>
#include <cstdint>
#include <vector>

#include "core/domain/novelty_model.hpp"
#include "core/domain/training_domain.hpp"
#include "core/model/evaluator.hpp"
#include "core/model/float_nodata.hpp"
#include "core/model/model_spec.hpp"
#include "core/model/model_values.hpp"
#include "core/model/term_plan.hpp"
#include "core/prediction/low_certainty.hpp"
#include "core/prediction/unit_sums.hpp"

namespace habcast {

/// Pixel counts of a block; merged across blocks in block order, so totals (including the
/// floating-point sum) are the same for any number of threads.
struct PredictionTally {
  std::int64_t pixels = 0;             ///< all pixels of the block
  std::int64_t missing_input = 0;      ///< some covariate is nodata or not finite
  std::int64_t outside_transform = 0;  ///< raw value outside a covariate transform's domain
  std::int64_t unknown_level = 0;      ///< categorical code not declared in the model
  std::int64_t undefined_term = 0;     ///< a term function undefined (log of <= 0, ...)
  std::int64_t not_representable = 0; ///< response beyond the Float32 range (written as nodata)
  std::int64_t moved_off_nodata = 0;   ///< predicted values equal to the nodata marker, moved one Float32 step
  std::int64_t predicted = 0;          ///< pixels with a suitability value
  std::int64_t low_certainty = 0;      ///< predicted pixels whose interval is wide (see LowCertaintyRule)
  double sum_response = 0.0;
  double min_response = 0.0;
  double max_response = 0.0;
  DomainTally domain;

  explicit PredictionTally(std::size_t covariates = 0) : domain(covariates) {}
  void merge(const PredictionTally& other);
};


/// Output arrays of one block, row-major over the block's pixels.
struct BlockOutputs {
  std::vector<float> suitability;
  std::vector<float> se;      ///< response-scale standard error
  std::vector<float> lower;   ///< empty when the evaluator forms no limits (Evaluator::limits)
  std::vector<float> upper;
  std::vector<std::uint8_t> flags;
  NoveltyBlock novelty;  ///< MESS, NT1, NT2 and the covariate with the lowest similarity (empty without a NoveltyModel)
};

/// Domain checks another predictor has made on the same raw columns of the same block.
struct SharedChecks {
  const BlockOutputs* outputs = nullptr;  ///< its flags and novelty bands
  const DomainTally* tally = nullptr;     ///< its counts of this block only
  const NoveltyModel* novelty = nullptr;  ///< its novelty model (null: none), whose pair masks it kept
};

class BlockPredictor {
 public:
  /// `domain` may be null (no training samples): then no flags are produced. `novelty` may be
  /// null (no training samples, or no joint checks asked for).
  /// `certainty` (may be null: the family's rule without training samples) decides which
  /// predictions count as low certainty.
  BlockPredictor(const ModelSpec& spec, const TermPlan& plan, const Evaluator& evaluator, const TrainingDomain* domain,
                 const NoveltyModel* novelty = nullptr, const LowCertaintyRule* certainty = nullptr);

  /// `raw`: rows x covariates raw values (column per covariate), `valid`: 1 where every covariate
  /// has data. Resizes and fills `out`; adds counts to `tally`. With `units`, also adds each covered
  /// pixel's area, prediction, gradient and flags to the sums of the units covering it.
  void run(const Eigen::ArrayXXd& raw, const std::vector<std::uint8_t>& valid, Eigen::Index rows, BlockOutputs& out,
           PredictionTally& tally, const UnitPass* units = nullptr);

  /// `run` in steps, so that several predictors can walk one window chunk by chunk in lockstep and
  /// a combiner (change against a baseline, model average) can read each chunk's design matrix and
  /// prediction while they are still in cache: `begin`, then `chunk` for first = 0, kChunk, ...,
  /// then `end`. `raw` must outlive the steps.
  /// With `shared` (from a predictor for which can_share_checks() holds), its range, level, hull
  /// and NT2 bits, novelty bands and counts are taken over, and only this model's pair hulls are
  /// checked: the result is the same as checking everything again.
  void begin(const Eigen::ArrayXXd& raw, const std::vector<std::uint8_t>& valid, Eigen::Index rows, BlockOutputs& out,
             PredictionTally& tally, const UnitPass* units = nullptr, const SharedChecks* shared = nullptr);
  /// True when `other`, given the same raw columns, flags them as this predictor does apart from
  /// the pair hulls: both check against training domains and novelty models that agree
  /// (TrainingDomain::same_checks, NoveltyModel::same_joint_checks).
  [[nodiscard]] bool can_share_checks(const BlockPredictor& other) const;
  /// True when `other`, given the same raw columns, computes the same model values and marks the
  /// same pixels unpredictable while doing so: the same covariates read the same way (transform,
  /// centre, scale, levels), each used by both models or by neither.
  [[nodiscard]] bool can_share_values(const BlockPredictor& other) const;
  /// From now on each chunk() takes its model values from `donor`'s chunk() of the same pixels,
  /// which must run first (members of a window walk its chunks in order, so an earlier member
  /// qualifies); `donor` then keeps them. Null: compute them (the default).
  void take_values_from(BlockPredictor* donor);
  /// Whether begin() and chunk() fill the per-pixel arrays of BlockOutputs (suitability, se,
  /// limits, novelty bands; on by default). Off for a member whose combiner reads only each
  /// chunk's prediction(), predicted() and the flags (a model set's average): those, and the
  /// domain counts, are the same either way; the counts of moved-off-nodata and low-certainty
  /// values, which come from the arrays, stay 0.
  void set_arrays(bool on) { arrays_ = on; }
  void chunk(Eigen::Index first, Eigen::Index rows, BlockOutputs& out, PredictionTally& tally);
  void end() {
    raw_ = nullptr;
    units_ = nullptr;
  }

  /// The last chunk's design matrix (first `rows` rows), prediction, and which of its pixels were
  /// predicted (1) or left nodata (0).
  [[nodiscard]] const Eigen::MatrixXd& design() const { return X_; }
  [[nodiscard]] const Prediction& prediction() const { return prediction_; }
  [[nodiscard]] const std::uint8_t* predicted(Eigen::Index first) const { return predict_valid_.data() + first; }

  /// Pixels per evaluation chunk: bounds the design matrix to chunk x terms doubles.
  static constexpr Eigen::Index kChunk = 4096;

 private:
  void add_to_units(Eigen::Index first, Eigen::Index rows, const BlockOutputs& out);

  const ModelSpec& spec_;
  const TermPlan& plan_;
  const Evaluator& evaluator_;
  const TrainingDomain* domain_;
  LowCertaintyRule certainty_;
  const NoveltyModel* novelty_;
  const Eigen::ArrayXXd* raw_ = nullptr;
  const UnitPass* units_ = nullptr;
  std::size_t unit_cursor_ = 0;
  std::vector<std::uint8_t> predict_valid_;
  ModelValues values_;
  BlockPredictor* values_from_ = nullptr;  ///< see take_values_from
  bool arrays_ = true;                     ///< see set_arrays
  bool keeps_values_ = false;              ///< another predictor reads this one's values
  std::vector<std::uint8_t> values_ok_;    ///< the chunk's pixels still predictable after its model values
  ModelValueCounts values_counts_;
  Eigen::MatrixXd X_;
  Eigen::VectorXd offset_;
  Prediction prediction_;
  Eigen::VectorXd slope_;  ///< d mu / d eta of the chunk, for the units' gradient sums
};

}  // namespace habcast
