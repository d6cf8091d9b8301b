#include "core/prediction/model_average.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <stdexcept>

#include "core/base/pixel_loops.hpp"
#include "core/domain/extrapolation_flags.hpp"
#include "core/model/float_nodata.hpp"
#include "core/model/link.hpp"

namespace habcast {

std::vector<double> akaike_weights(const std::vector<double>& aic) {
  if (aic.empty()) throw std::invalid_argument("akaike_weights: no models");
  const double best = *std::min_element(aic.begin(), aic.end());
  std::vector<double> w(aic.size());
  double sum = 0.0;
  for (std::size_t i = 0; i < aic.size(); ++i) sum += (w[i] = std::exp(-(aic[i] - best) / 2.0));
  for (double& v : w) v /= sum;
  return w;
}

AveragedValue average_models(const double* weights, const double* mu, const double* se, std::size_t k,
                             UnconditionalForm form) {
  AveragedValue a;
  // Summed as offsets from the first model: identical predictions then average to exactly that
  // value (weights that sum to 1 only up to rounding cannot move it), with no between-model part.
  double offset = 0.0;
  for (std::size_t i = 1; i < k; ++i) offset += weights[i] * (mu[i] - mu[0]);
  a.mean = mu[0] + offset;
  double within = 0.0, between = 0.0, form_2002 = 0.0;
  for (std::size_t i = 0; i < k; ++i) {
    const double d = mu[i] - a.mean;
    within += weights[i] * se[i] * se[i];
    between += weights[i] * d * d;
  }
  if (form == UnconditionalForm::form_2002)
    for (std::size_t i = 0; i < k; ++i) {
      const double d = mu[i] - a.mean;
      form_2002 += weights[i] * std::sqrt(se[i] * se[i] + d * d);
    }
  a.se = form == UnconditionalForm::revised ? std::sqrt(within + between) : form_2002;
  a.between_share = within + between > 0.0 ? between / (within + between) : 0.0;
  return a;
}

HABCAST_PIXEL_LOOPS void average_models_block(const double* weights, const double* const* mu, const double* const* se,
                                              std::size_t k, std::size_t n, UnconditionalForm form, double* mean,
                                              double* se_out, double* share, double* scratch) {
  double* within = scratch;
  double* between = scratch + n;
  // The operations of average_models(), pixel by pixel, in its order.
  for (std::size_t p = 0; p < n; ++p) mean[p] = 0.0;  // the offset from the first model
  for (std::size_t i = 1; i < k; ++i) {
    const double w = weights[i];
    const double* m = mu[i];
    const double* m0 = mu[0];
    for (std::size_t p = 0; p < n; ++p) mean[p] += w * (m[p] - m0[p]);
  }
  for (std::size_t p = 0; p < n; ++p) {
    mean[p] = mu[0][p] + mean[p];
    within[p] = 0.0;
    between[p] = 0.0;
  }
  // body(p, w, d, s) for every model i and pixel p: weight w_i, d = mu_i - mean, s = se_i.
  const auto each_model = [&](auto&& body) {
    for (std::size_t i = 0; i < k; ++i) {
      const double w = weights[i];
      const double* m = mu[i];
      const double* s = se[i];
      for (std::size_t p = 0; p < n; ++p) body(p, w, m[p] - mean[p], s[p]);
    }
  };
  each_model([&](std::size_t p, double w, double d, double s) {
    within[p] += w * s * s;
    between[p] += w * d * d;
  });
  if (form == UnconditionalForm::revised) {
    for (std::size_t p = 0; p < n; ++p) se_out[p] = std::sqrt(within[p] + between[p]);
  } else {
    for (std::size_t p = 0; p < n; ++p) se_out[p] = 0.0;
    each_model([&](std::size_t p, double w, double d, double s) { se_out[p] += w * std::sqrt(s * s + d * d); });
  }
  for (std::size_t p = 0; p < n; ++p) {
    const double total = within[p] + between[p];
    // Both branches are computed and one is kept, so the loop has no control flow; a 0/0 in
    // the branch not kept is harmless.
    const double ratio = between[p] / total;
    share[p] = total > 0.0 ? ratio : 0.0;
  }
}

namespace {

Link canonical_link(Family family) {
  switch (family) {
    case Family::binomial: return Link::logit;
    case Family::poisson: return Link::log;
    case Family::gaussian: return Link::identity;
  }
  return Link::identity;
}

float to_float(double v) {
  if (!std::isfinite(v) || std::fabs(v) > static_cast<double>(std::numeric_limits<float>::max())) return kFloatNodata;
  const auto f = static_cast<float>(v);
  return f == kFloatNodata ? std::nextafter(kFloatNodata, 0.0f) : f;
}

}  // namespace

void averaged_limits(Family family, double mean, double se, double z, double& lower, double& upper) {
  double scratch[3];
  averaged_limits_block(family, &mean, &se, z, &lower, &upper, 1, scratch);
}

void averaged_limits_block(Family family, const double* mean, const double* se, double z, double* lower, double* upper,
                           std::size_t n, double* scratch) {
  const Link link = canonical_link(family);
  double* eta = scratch;
  double* slope = scratch + n;
  double* se_eta = scratch + 2 * n;
  const auto count = static_cast<long>(n);
  for (std::size_t p = 0; p < n; ++p) eta[p] = link_function(link, mean[p]);
  link_inverse_with_derivative(link, eta, lower, slope, count);  // `lower` only as room for g^-1(eta)
  for (std::size_t p = 0; p < n; ++p) se_eta[p] = se[p] / slope[p];
  link_inverse_interval(link, eta, se_eta, z, lower, upper, count);
  for (std::size_t p = 0; p < n; ++p) {
    if (!(se[p] > 0.0)) {
      lower[p] = upper[p] = mean[p];
    } else if (!(slope[p] > 0.0) || !std::isfinite(eta[p])) {
      // The mean sits on the edge of the range (a probability of exactly 0 or 1): no link-scale
      // width can be formed, so the limits span the whole range.
      lower[p] = link_inverse(link, -std::numeric_limits<double>::infinity());
      upper[p] = link_inverse(link, std::numeric_limits<double>::infinity());
    }
  }
}

void AverageTally::merge(const AverageTally& other) {
  if (other.predicted > 0) {
    min_response = predicted > 0 ? std::min(min_response, other.min_response) : other.min_response;
    max_response = predicted > 0 ? std::max(max_response, other.max_response) : other.max_response;
  }
  pixels += other.pixels;
  predicted += other.predicted;
  disagree += other.disagree;
  checked += other.checked;
  flagged += other.flagged;
  low_certainty += other.low_certainty;
  sum_response += other.sum_response;
}

AverageCombiner::AverageCombiner(Family family, std::vector<double> weights, UnconditionalForm form, double z,
                                 bool with_flags)
    : family_(family), weights_(std::move(weights)), form_(form), z_(z), with_flags_(with_flags) {}

void AverageCombiner::begin(Eigen::Index rows, AverageOutputs& out) const {
  const auto n = static_cast<std::size_t>(rows);
  out.suitability.assign(n, kFloatNodata);
  out.se.assign(n, kFloatNodata);
  out.lower.assign(n, kFloatNodata);
  out.upper.assign(n, kFloatNodata);
  out.between_share.assign(n, kFloatNodata);
  out.flags.assign(with_flags_ ? n : 0, flag::nodata);
}

void AverageCombiner::chunk(Eigen::Index first, Eigen::Index rows, const std::vector<const BlockPredictor*>& members,
                            const BlockOutputs* outputs, AverageOutputs& out, AverageTally& tally) {
  const std::size_t k = members.size();
  const auto n = static_cast<std::size_t>(rows);
  mu_.resize(k);
  se_.resize(k);
  for (std::size_t m = 0; m < k; ++m) {
    mu_[m] = members[m]->prediction().mu.data();
    se_[m] = members[m]->prediction().se_mu.data();
  }
  mean_.resize(n);
  sd_.resize(n);
  share_.resize(n);
  // Every pixel is averaged, those some model left without a value too; only the others are kept.
  lower_.resize(n);
  upper_.resize(n);
  scratch_.resize(3 * n);
  average_models_block(weights_.data(), mu_.data(), se_.data(), k, n, form_, mean_.data(), sd_.data(), share_.data(),
                       scratch_.data());
  averaged_limits_block(family_, mean_.data(), sd_.data(), z_, lower_.data(), upper_.data(), n, scratch_.data());
  tally.pixels += rows;
  for (Eigen::Index i = 0; i < rows; ++i) {
    const auto o = static_cast<std::size_t>(first + i);
    if (with_flags_) {
      // Union of the models' flags; no data if any model has none (each checks its own covariates).
      std::uint8_t u = 0;
      bool nodata = false;
      for (std::size_t m = 0; m < k; ++m) {
        const std::uint8_t f = outputs[m].flags[o];
        if (f == flag::nodata) nodata = true;
        else u = static_cast<std::uint8_t>(u | f);
      }
      out.flags[o] = nodata ? flag::nodata : u;
      if (!nodata) {
        ++tally.checked;
        tally.flagged += u != 0 ? 1 : 0;
      }
    }
    bool all = true;
    for (std::size_t m = 0; m < k && all; ++m) all = members[m]->predicted(first)[i] != 0;
    if (!all) continue;
    const auto p = static_cast<std::size_t>(i);
    const double mean = mean_[p], se = sd_[p], between_share = share_[p], lower = lower_[p], upper = upper_[p];
    out.suitability[o] = to_float(mean);
    out.se[o] = to_float(se);
    out.lower[o] = to_float(lower);
    out.upper[o] = to_float(upper);
    out.between_share[o] = static_cast<float>(between_share);
    if (tally.predicted == 0) tally.min_response = tally.max_response = mean;
    tally.min_response = std::min(tally.min_response, mean);
    tally.max_response = std::max(tally.max_response, mean);
    ++tally.predicted;
    tally.sum_response += mean;
    tally.disagree += between_share > 0.5 ? 1 : 0;
    tally.low_certainty += certainty_.applies(lower, upper) ? 1 : 0;
  }
}

}  // namespace habcast
