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
#include <vector>

#include "core/domain/novelty_model.hpp"
#include "core/domain/training_domain.hpp"
#include "core/model/evaluator.hpp"
#include "core/model/model_spec.hpp"
#include "core/model/term_plan.hpp"
#include "core/prediction/block_predictor.hpp"
#include "predict/prediction_report.hpp"
#include "raster/covariate_reader.hpp"
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

  explicit MemberSources(const std::vector<PredictionMember>& members);
  /// The common grid of every source; throws naming the first file that differs.
  [[nodiscard]] RasterGrid check_co_registered() const;
};

/// One worker's readers, predictors and scratch windows for every member.
class MemberWindow {
 public:
  MemberWindow(const std::vector<PredictionMember>& members, const MemberSources& sources, double level, double quantum);
  MemberWindow(const MemberWindow&) = delete;
  MemberWindow& operator=(const MemberWindow&) = delete;

  /// Decodes `window` once per source, fills every member's outputs and tallies (resized to the
  /// member count), calling `combine(first, rows)` after every member has evaluated a chunk.
  void run(const Window& window, std::vector<BlockOutputs>& outputs, std::vector<PredictionTally>& tallies,
           const std::function<void(Eigen::Index first, Eigen::Index rows)>& combine);

  [[nodiscard]] const BlockPredictor& predictor(std::size_t member) const { return *predictors_[member]; }
  [[nodiscard]] std::size_t size() const { return predictors_.size(); }

 private:
  const std::vector<PredictionMember>& members_;
  const MemberSources& sources_;
  std::vector<CovariateReader> readers_;
  std::vector<std::unique_ptr<Evaluator>> evaluators_;
  std::vector<std::unique_ptr<BlockPredictor>> predictors_;
  Eigen::ArrayXXd decoded_;                           ///< window x sources
  std::vector<std::vector<std::uint8_t>> source_valid_;
  std::vector<Eigen::ArrayXXd> raw_;                  ///< per member: window x its covariates
  std::vector<std::vector<std::uint8_t>> valid_;
};

}  // namespace habcast
