#pragma once
// When a prediction's confidence interval is too wide to read the prediction as a value: the rule
// behind the "low certainty" count and warning. Each family and link gets a rule that means
// something on its scale (common practice, no source; docs/report.md, "Low certainty").
#include <string>

#include "core/domain/training_samples.hpp"
#include "core/model/model_spec.hpp"

namespace habcast {

class LowCertaintyRule {
 public:
  enum class Kind {
    probability_width,  ///< binomial: interval wider than 0.5 on the probability scale
    ratio,              ///< log links and poisson/identity (positive means): upper > 3 x lower, or lower <= 0 < upper
    spread_width,       ///< gaussian/identity (means of any sign): width > 0.5 x the spread of the fitted mean over the training samples
    unavailable,        ///< gaussian/identity without training samples (or with a constant fitted mean): no rule
  };

  /// The rule for `spec`'s family and link. `samples` (may be null) give the spread of the fitted
  /// mean that the gaussian/identity rule compares against.
  static LowCertaintyRule for_model(const ModelSpec& spec, const TrainingSamples* samples);

  [[nodiscard]] Kind kind() const { return kind_; }
  [[nodiscard]] double spread() const { return spread_; }
  /// Whether the interval [lower, upper] is too wide; always false when the rule is unavailable.
  /// (Inline: predict asks it for every pixel.)
  [[nodiscard]] bool applies(double lower, double upper) const {
    switch (kind_) {
      case Kind::probability_width: return upper - lower > kShareOfScale;
      case Kind::ratio: return lower <= 0.0 ? upper > 0.0 : upper > kRatio * lower;
      case Kind::spread_width: return upper - lower > kShareOfScale * spread_;
      case Kind::unavailable: return false;
    }
    return false;
  }
  /// The rule in words, for the warning and report.json: "a confidence interval wider than 0.5 in
  /// probability", ...
  [[nodiscard]] std::string description() const;

 private:
  // The thresholds are common practice, no source: 0.5 of the scale the predictions live on (the
  // probability scale, or the range of the fitted mean over the training sites), and a factor of 3
  // between the limits of a positive mean (a link-scale interval wider than log 3).
  static constexpr double kShareOfScale = 0.5;
  static constexpr double kRatio = 3.0;
  Kind kind_ = Kind::unavailable;
  double spread_ = 0.0;
};

}  // namespace habcast
