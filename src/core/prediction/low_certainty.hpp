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
  [[nodiscard]] bool applies(double lower, double upper) const;
  /// The rule in words, for the warning and report.json: "a confidence interval wider than 0.5 in
  /// probability", ...
  [[nodiscard]] std::string description() const;

 private:
  Kind kind_ = Kind::unavailable;
  double spread_ = 0.0;
};

}  // namespace habcast
