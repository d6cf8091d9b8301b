#include "core/prediction/averaged_change.hpp"

#include <cmath>
#include <limits>

#include "core/domain/extrapolation_flags.hpp"
#include "core/model/float_nodata.hpp"

namespace habcast {

void average_changes(const std::vector<double>& weights, const std::vector<const ChangeOutputs*>& per_model,
                     const AverageOutputs& baseline, const AverageOutputs& scenario, double z,
                     std::optional<double> threshold, UnconditionalForm form, Eigen::Index first, Eigen::Index rows,
                     ChangeOutputs& out, ChangeTally& tally) {
  const std::size_t k = per_model.size();
  std::vector<double> change(k), se(k);
  for (Eigen::Index i = 0; i < rows; ++i) {
    const auto o = static_cast<std::size_t>(first + i);
    const bool b_ok = baseline.suitability[o] != kFloatNodata, s_ok = scenario.suitability[o] != kFloatNodata;
    bool all = b_ok && s_ok;
    for (std::size_t m = 0; m < k && all; ++m) {
      const ChangeOutputs& c = *per_model[m];
      if (c.change[o] == kFloatNodata || c.se[o] == kFloatNodata) all = false;
      change[m] = c.change[o];
      se[m] = c.se[o];
    }
    if (!all) {
      tally.missing_either += b_ok != s_ok ? 1 : 0;
      continue;
    }
    const AveragedValue a = average_models(weights.data(), change.data(), se.data(), k, form);
    const double lower = a.mean - z * a.se, upper = a.mean + z * a.se;
    ++tally.compared;
    tally.sum_change += a.mean;
    tally.declined += upper < 0.0 ? 1 : 0;
    tally.rose += lower > 0.0 ? 1 : 0;
    out.change[o] = change_to_float(a.mean);
    out.se[o] = change_to_float(a.se);
    out.lower[o] = change_to_float(lower);
    out.upper[o] = change_to_float(upper);
    out.p_decline[o] = static_cast<float>(probability_of_decline(a.mean, a.se));
    if (threshold) {
      const std::uint8_t cls =
          change_class::classify(baseline.suitability[o], scenario.suitability[o], *threshold, lower, upper);
      const bool xb = flagged_as_extrapolated(baseline.flags, o), xs = flagged_as_extrapolated(scenario.flags, o);
      out.classes[o] = static_cast<std::uint8_t>(cls | (xb ? change_class::baseline_extrapolated : 0) |
                                                 (xs ? change_class::scenario_extrapolated : 0));
      ++tally.classes[cls][(xb ? 1 : 0) | (xs ? 2 : 0)];
    }
  }
}

}  // namespace habcast
