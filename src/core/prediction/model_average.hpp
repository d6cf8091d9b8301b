#pragma once
// Model averaging of several models' predictions on the response scale, with the unconditional
// standard error of Burnham & Anderson (2002, Model Selection and Multimodel Inference, 2nd ed.;
// equation numbers from memory):
//   revised (default):  se = sqrt( sum_i w_i (se_i^2 + (mu_i - mu_bar)^2) )          (eq. 6.12)
//   2002 form:          se = sum_i w_i sqrt(se_i^2 + (mu_i - mu_bar)^2)               (eq. 4.9)
// The revised form is the standard deviation of the w-weighted mixture of the models' sampling
// distributions, so it splits exactly into a within-model part sum w_i se_i^2 and a between-model
// part sum w_i (mu_i - mu_bar)^2, whose share is the map of where the models disagree; by Jensen's
// inequality it is never below the 2002 form.
#include <Eigen/Core>
#include <cstdint>
#include <string>
#include <vector>

#include "core/model/model_spec.hpp"
#include "core/prediction/block_predictor.hpp"
#include "core/prediction/low_certainty.hpp"

namespace habcast {

enum class UnconditionalForm { revised, form_2002 };

/// Akaike weights exp(-dAIC_i / 2) / sum_j exp(-dAIC_j / 2), dAIC_i = AIC_i - min AIC.
std::vector<double> akaike_weights(const std::vector<double>& aic);

struct AveragedValue {
  double mean = 0.0;
  double se = 0.0;
  double between_share = 0.0;  ///< between / (within + between), 0 when both are 0
};

/// The average of `k` models' (mu, se) with weights summing to 1.
AveragedValue average_models(const double* weights, const double* mu, const double* se, std::size_t k,
                             UnconditionalForm form);

/// average_models() for `n` pixels at once, model by model over contiguous arrays so that the
/// compiler vectorises it: `mu[i]` and `se[i]` point at model i's n values; `mean`, `se_out` and
/// `share` receive n values each; `scratch` holds 2n doubles. Each pixel gets the same operations
/// in the same order as average_models(), so the results are the same bit for bit.
void average_models_block(const double* weights, const double* const* mu, const double* const* se, std::size_t k,
                          std::size_t n, UnconditionalForm form, double* mean, double* se_out, double* share,
                          double* scratch);

/// Limits of an averaged prediction, formed on the scale of the family's canonical link (logit
/// for binomial, log for Poisson, identity for gaussian) from the unconditional se by the delta
/// method: eta = g(mean), se_eta = se / (d g^-1 / d eta), limits g^-1(eta -/+ z se_eta). They
/// stay in the response's range (0..1, >= 0) whatever the models' own links, and for one model
/// with that link they are exactly its own limits.
void averaged_limits(Family family, double mean, double se, double z, double& lower, double& upper);
/// averaged_limits() for n values; the link's steps run as loops over the values, so the
/// compiler vectorises them (same operations per value, same results). `scratch` holds 3n doubles.
void averaged_limits_block(Family family, const double* mean, const double* se, double z, double* lower, double* upper,
                           std::size_t n, double* scratch);

/// Outputs of one block of a model average.
struct AverageOutputs {
  std::vector<float> suitability;
  std::vector<float> se;
  std::vector<float> lower;
  std::vector<float> upper;
  std::vector<float> between_share;
  std::vector<std::uint8_t> flags;  ///< union of the models' flags; empty without training samples
};

struct AverageTally {
  std::int64_t pixels = 0;
  std::int64_t predicted = 0;       ///< every model has a value
  std::int64_t disagree = 0;        ///< predicted pixels whose between-model share exceeds one half
  std::int64_t checked = 0;         ///< pixels with flags from every model
  std::int64_t flagged = 0;         ///< union of the models' flags non-zero
  std::int64_t low_certainty = 0;
  double sum_response = 0.0;
  double min_response = 0.0;
  double max_response = 0.0;
  void merge(const AverageTally& other);
};

class AverageCombiner {
 public:
  /// `weights` sum to 1, one per member; `with_flags`: the members have training domains.
  AverageCombiner(Family family, std::vector<double> weights, UnconditionalForm form, double z, bool with_flags);
  /// Which averaged intervals count as low certainty (default: none is judged).
  void set_certainty(const LowCertaintyRule& rule) { certainty_ = rule; }

  void begin(Eigen::Index rows, AverageOutputs& out) const;
  /// After every member's chunk(first, rows): `members[i]` is model i's predictor, `outputs[i]`
  /// (an array of members.size()) its block outputs, for the flags.
  void chunk(Eigen::Index first, Eigen::Index rows, const std::vector<const BlockPredictor*>& members,
             const BlockOutputs* outputs, AverageOutputs& out, AverageTally& tally);

 private:
  Family family_;
  LowCertaintyRule certainty_;
  std::vector<double> weights_;
  UnconditionalForm form_;
  double z_;
  bool with_flags_;
  std::vector<const double*> mu_, se_;
  std::vector<double> mean_, sd_, share_, lower_, upper_, scratch_;
};

}  // namespace habcast
