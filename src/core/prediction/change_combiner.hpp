#pragma once
// The change of one model's prediction between a baseline stack and a scenario stack, pixel by
// pixel, with its uncertainty. Both predictions share the coefficients, so their errors are
// correlated; the standard error of the difference comes from the difference of the gradients,
//   se(mu_s - mu_b) = sqrt((g_s - g_b)' V (g_s - g_b)),   g = d mu / d beta = (d mu / d eta) x,
// never from sqrt(se_s^2 + se_b^2) (docs/scenarios.md shows how far apart the two can be).
#include <Eigen/Core>
#include <array>
#include <cstdint>
#include <optional>
#include <vector>

#include "core/prediction/block_predictor.hpp"
#include "core/prediction/change_classes.hpp"

namespace habcast {

/// Change outputs of one block, row-major over its pixels; nodata where either side has no value.
struct ChangeOutputs {
  std::vector<float> change;     ///< mu_s - mu_b, response scale
  std::vector<float> se;         ///< delta-method standard error of the change
  std::vector<float> lower;      ///< change - z se
  std::vector<float> upper;      ///< change + z se
  std::vector<float> p_decline;  ///< Phi(-change / se): probability that suitability fell
  std::vector<std::uint8_t> classes;  ///< change_classes.hpp; empty without a threshold
};

/// Pixel counts of the change, merged in block order.
struct ChangeTally {
  std::int64_t compared = 0;        ///< pixels with a value on both sides
  std::int64_t missing_either = 0;  ///< pixels where one side has a value and the other not
  std::int64_t declined = 0;        ///< compared pixels whose upper limit is below zero
  std::int64_t rose = 0;            ///< compared pixels whose lower limit is above zero
  double sum_change = 0.0;
  /// [class 1..5][mark 0..3]: mark bit 1 = baseline extrapolated, bit 2 = scenario extrapolated.
  std::array<std::array<std::int64_t, 4>, change_class::class_count + 1> classes{};
  void merge(const ChangeTally& other);
};

class ChangeCombiner {
 public:
  /// `V`: the model's covariance (required); `z`: the normal quantile of the limits;
  /// `threshold`: the suitability threshold of the classes (none: no classes).
  ChangeCombiner(Link link, Eigen::MatrixXd V, double z, std::optional<double> threshold);

  /// Sizes `out` to `rows` pixels of nodata.
  void begin(Eigen::Index rows, ChangeOutputs& out) const;

  /// After `baseline.chunk(first, rows, ...)` and `scenario.chunk(first, rows, ...)`: fills the
  /// chunk's change outputs. `out_b`, `out_s`: the two sides' block outputs, whose stored
  /// suitability decides the side of the threshold (so a class always agrees with the maps a user
  /// reads) and whose flags mark extrapolation (none without training samples).
  void chunk(Eigen::Index first, Eigen::Index rows, const BlockPredictor& baseline, const BlockPredictor& scenario,
             const BlockOutputs& out_b, const BlockOutputs& out_s, ChangeOutputs& out, ChangeTally& tally);

  [[nodiscard]] bool has_classes() const { return threshold_.has_value(); }

 private:
  Link link_;
  Eigen::MatrixXd V_;
  double z_;
  std::optional<double> threshold_;
  Eigen::MatrixXd G_b_, G_s_, scratch_;
  Eigen::VectorXd se_, mu_b_, mu_s_;
};

/// Probability that the change is below zero under its normal approximation, N(change, se^2):
/// Phi(-change / se); with se = 0 the distribution is a point, so 1 below zero, else 0.
double probability_of_decline(double change, double se);

/// Sizes `out` to `rows` pixels of nodata (classes only with a threshold): what
/// ChangeCombiner::begin does, for combiners of several models' changes.
void begin_change_outputs(Eigen::Index rows, bool with_classes, ChangeOutputs& out);

/// A change output's Float32 value: nodata where Float32 cannot hold it, moved one step off the
/// marker where it lands on it (a change can take any value, so -9999 is possible for counts).
float change_to_float(double v);

/// Whether pixel `o` of a block's flags is extrapolated (flagged, and not nodata); false when the
/// block has no flags.
bool flagged_as_extrapolated(const std::vector<std::uint8_t>& flags, std::size_t o);

}  // namespace habcast
