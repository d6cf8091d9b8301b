#include "core/prediction/change_combiner.hpp"

#include <cmath>
#include <limits>

#include "core/domain/extrapolation_flags.hpp"
#include "core/model/float_nodata.hpp"
#include "core/model/link.hpp"
#include "core/numeric/normal_distribution.hpp"
#include "core/prediction/response_gradient.hpp"

namespace habcast {

void ChangeTally::merge(const ChangeTally& other) {
  compared += other.compared;
  missing_either += other.missing_either;
  declined += other.declined;
  rose += other.rose;
  sum_change += other.sum_change;
  for (std::size_t c = 0; c < classes.size(); ++c)
    for (std::size_t m = 0; m < 4; ++m) classes[c][m] += other.classes[c][m];
}

double probability_of_decline(double change, double se) {
  if (se > 0.0) return normal_cdf(-change / se);
  return change < 0.0 ? 1.0 : 0.0;
}

ChangeCombiner::ChangeCombiner(Link link, Eigen::MatrixXd V, double z, std::optional<double> threshold)
    : link_(link), V_(std::move(V)), z_(z), threshold_(threshold) {}

void ChangeCombiner::begin(Eigen::Index rows, ChangeOutputs& out) const {
  begin_change_outputs(rows, threshold_.has_value(), out);
}

void begin_change_outputs(Eigen::Index rows, bool with_classes, ChangeOutputs& out) {
  const auto n = static_cast<std::size_t>(rows);
  out.change.assign(n, kFloatNodata);
  out.se.assign(n, kFloatNodata);
  out.lower.assign(n, kFloatNodata);
  out.upper.assign(n, kFloatNodata);
  out.p_decline.assign(n, kFloatNodata);
  out.classes.assign(with_classes ? n : 0, change_class::nodata);
}

float change_to_float(double v) {
  if (!std::isfinite(v) || std::fabs(v) > static_cast<double>(std::numeric_limits<float>::max())) return kFloatNodata;
  const auto f = static_cast<float>(v);
  return f == kFloatNodata ? std::nextafter(kFloatNodata, 0.0f) : f;
}

bool flagged_as_extrapolated(const std::vector<std::uint8_t>& flags, std::size_t o) {
  return !flags.empty() && flags[o] != 0 && flags[o] != flag::nodata;
}

void ChangeCombiner::chunk(Eigen::Index first, Eigen::Index rows, const BlockPredictor& baseline,
                           const BlockPredictor& scenario, const BlockOutputs& out_b, const BlockOutputs& out_s,
                           ChangeOutputs& out, ChangeTally& tally) {
  const std::vector<std::uint8_t>& flags_b = out_b.flags;
  const std::vector<std::uint8_t>& flags_s = out_s.flags;
  const Eigen::VectorXd& eta_b = baseline.prediction().eta;
  const Eigen::VectorXd& eta_s = scenario.prediction().eta;
  response_gradient(link_, baseline.design(), eta_b, rows, G_b_);
  response_gradient(link_, scenario.design(), eta_s, rows, G_s_);
  G_s_ -= G_b_;  // the gradient of the change
  row_standard_errors(G_s_, rows, V_, scratch_, se_);

  // Unrounded means from eta (a --max-error grid applies to the stored suitability only).
  mu_b_.resize(rows);
  mu_s_.resize(rows);
  link_inverse_all(link_, eta_b.data(), mu_b_.data(), rows);
  link_inverse_all(link_, eta_s.data(), mu_s_.data(), rows);
  const std::uint8_t* ok_b = baseline.predicted(first);
  const std::uint8_t* ok_s = scenario.predicted(first);
  for (Eigen::Index i = 0; i < rows; ++i) {
    if (!ok_b[i] || !ok_s[i]) {
      tally.missing_either += (ok_b[i] != ok_s[i]) ? 1 : 0;
      continue;
    }
    const auto o = static_cast<std::size_t>(first + i);
    const double mu_b = mu_b_[i];
    const double mu_s = mu_s_[i];
    const double change = mu_s - mu_b;
    const double se = se_[i];
    // Both sides have values but their difference does not (inf - inf on a log link): nodata.
    if (!std::isfinite(change) || !std::isfinite(se)) continue;
    const double lower = change - z_ * se;
    const double upper = change + z_ * se;
    ++tally.compared;
    tally.sum_change += change;
    tally.declined += upper < 0.0 ? 1 : 0;
    tally.rose += lower > 0.0 ? 1 : 0;
    out.change[o] = change_to_float(change);
    out.se[o] = change_to_float(se);
    out.lower[o] = change_to_float(lower);
    out.upper[o] = change_to_float(upper);
    out.p_decline[o] = static_cast<float>(probability_of_decline(change, se));
    if (threshold_) {
      const std::uint8_t cls = change_class::classify(out_b.suitability[o], out_s.suitability[o], *threshold_, lower, upper);
      const bool xb = flagged_as_extrapolated(flags_b, o);
      const bool xs = flagged_as_extrapolated(flags_s, o);
      out.classes[o] = static_cast<std::uint8_t>(cls | (xb ? change_class::baseline_extrapolated : 0) |
                                                 (xs ? change_class::scenario_extrapolated : 0));
      ++tally.classes[cls][(xb ? 1 : 0) | (xs ? 2 : 0)];
    }
  }
}

}  // namespace habcast
