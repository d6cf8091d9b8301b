#pragma once
// Several predictions per pixel, one mechanism: K members, each a (model, covariate stack) pair,
// evaluated on the same processing window. Scenarios are one model over several stacks; a model
// set is several models over one stack; a model set under scenarios is both. Every distinct raster
// (path and band) is decoded once per window and shared by every member that reads it; the
// members then walk the window chunk by chunk together, so a combiner (change against a baseline,
// model average) reads every member's design matrix and prediction of a chunk while in cache.
#include <Eigen/Core>
#include <cstdint>
#include <functional>
#include <memory>
#include <utility>
#include <vector>

#include "core/domain/novelty_model.hpp"
#include "core/domain/training_domain.hpp"
#include "core/model/evaluator.hpp"
#include "core/model/model_spec.hpp"
#include "core/model/term_plan.hpp"
#include "core/prediction/block_predictor.hpp"
#include "predict/prediction_report.hpp"
#include "raster/alignment_plan.hpp"
#include "raster/covariate_source.hpp"
#include "raster/raster_grid.hpp"
#include "raster/window.hpp"

namespace habcast {

struct PredictionMember {
  const ModelSpec* spec = nullptr;
  const TermPlan* plan = nullptr;
  const TrainingDomain* domain = nullptr;  ///< null: no flags
  const NoveltyModel* novelty = nullptr;   ///< null: range checks only
  std::vector<CovariateInput> inputs;      ///< one per covariate of the model, in its order
};

/// The distinct rasters the members read, and which one each member's covariate comes from.
struct MemberSources {
  std::vector<CovariateInput> sources;
  std::vector<std::vector<std::size_t>> of_member;  ///< [member][covariate] -> source
  std::vector<AlignmentInput> alignment_inputs;     ///< per source: name, categorical, resampling

  /// Throws InputError when one raster is read as covariates that must be resampled differently
  /// (categorical in one model, continuous in another; two different `resampling` keys): which
  /// rule would apply is ambiguous, and both readings are named.
  explicit MemberSources(const std::vector<PredictionMember>& members);
  /// The target grid and how every source reaches it (raster/alignment_plan.hpp), as predict
  /// decides it for one stack: `--grid-of NAME` takes the first source of that covariate (the
  /// baseline's), `--resampling NAME=...` applies to every source of it.
  [[nodiscard]] AlignmentPlan align(const AlignmentOptions& options) const;
};

/// The alignment of the sources that `members` read (in source order), with their missing-pixel
/// counts taken from `missing` (per source of the whole run): one folder's share of the plan, for
/// its report.
std::pair<AlignmentPlan, std::vector<std::int64_t>> members_alignment(const AlignmentPlan& plan,
                                                                      const MemberSources& sources,
                                                                      const std::vector<std::size_t>& members,
                                                                      const std::vector<std::int64_t>& missing);

/// One worker's readers, predictors and scratch windows for every member.
class MemberWindow {
 public:
  /// `member_arrays`: whether each member fills its own output arrays, confidence limits
  /// included (BlockPredictor::set_arrays). A model set's members need not: the set's values and
  /// limits come from the average of each chunk's predictions.
  MemberWindow(const std::vector<PredictionMember>& members, const MemberSources& sources, const AlignmentPlan& alignment,
               double level, double quantum, bool member_arrays = true);
  MemberWindow(const MemberWindow&) = delete;
  MemberWindow& operator=(const MemberWindow&) = delete;

  /// Decodes `window` once per source, fills every member's outputs and tallies (resized to the
  /// member count), calling `combine(first, rows)` after every member has evaluated a chunk.
  void run(const Window& window, std::vector<BlockOutputs>& outputs, std::vector<PredictionTally>& tallies,
           const std::function<void(Eigen::Index first, Eigen::Index rows)>& combine);

  [[nodiscard]] const BlockPredictor& predictor(std::size_t member) const { return *predictors_[member]; }
  [[nodiscard]] std::size_t size() const { return predictors_.size(); }
  /// Per source: target pixels it gave no value for in the windows this worker read.
  [[nodiscard]] const std::vector<std::int64_t>& missing() const { return missing_; }

 private:
  const std::vector<PredictionMember>& members_;
  const MemberSources& sources_;
  std::vector<std::unique_ptr<CovariateSource>> readers_;
  std::vector<std::int64_t> missing_;
  std::vector<std::unique_ptr<Evaluator>> evaluators_;
  std::vector<std::unique_ptr<BlockPredictor>> predictors_;
  /// Per member: an earlier member reading the same rasters whose domain checks it takes over
  /// (models of a set fitted to one training table; BlockPredictor::can_share_checks), or itself.
  std::vector<std::size_t> checks_from_;
  std::vector<bool> checks_kept_;  ///< per member: another takes its checks over (it keeps its pair masks)
  /// Per member: an earlier member of its stack whose model values it reads (same covariates read
  /// the same way; BlockPredictor::can_share_values), or itself.
  std::vector<std::size_t> values_from_;
  std::vector<bool> stack_is_decoded_;  ///< per stack: it reads every source in order (no copy)
  Eigen::ArrayXXd decoded_;                           ///< window x sources
  std::vector<std::vector<std::uint8_t>> source_valid_;
  /// Per member: its stack, the members reading the same rasters in the same order sharing one.
  std::vector<std::size_t> stack_of_;
  std::vector<std::size_t> stack_member_;             ///< per stack: its first member
  std::vector<Eigen::ArrayXXd> raw_;                  ///< per stack (unless it is decoded_): window x its covariates
  std::vector<std::vector<std::uint8_t>> valid_;
};

}  // namespace habcast
