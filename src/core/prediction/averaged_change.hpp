#pragma once
// The change of a model-averaged prediction between a baseline and a scenario stack: each model's
// change and its gradient-difference standard error (change_combiner.hpp), averaged with the
// models' weights, with the unconditional standard error of model_average.hpp. The classes come
// from the averaged baseline and scenario predictions and the averaged change's interval, marked
// where the union of the models' flags says either side is extrapolated.
#include <Eigen/Core>
#include <optional>
#include <vector>

#include "core/prediction/change_combiner.hpp"
#include "core/prediction/model_average.hpp"

namespace habcast {

/// For the chunk [first, first + rows): `per_model[i]` holds model i's change outputs (filled by
/// its ChangeCombiner), `baseline` and `scenario` the averaged outputs of the two stacks. `out`
/// must have been sized by a ChangeCombiner::begin-like call (begin_change_outputs in change_combiner.hpp).
void average_changes(const std::vector<double>& weights, const std::vector<const ChangeOutputs*>& per_model,
                     const AverageOutputs& baseline, const AverageOutputs& scenario, double z,
                     std::optional<double> threshold, UnconditionalForm form, Eigen::Index first, Eigen::Index rows,
                     ChangeOutputs& out, ChangeTally& tally);

}  // namespace habcast
