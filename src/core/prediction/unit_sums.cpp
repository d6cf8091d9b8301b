#include "core/prediction/unit_sums.hpp"

#include <algorithm>
#include <cmath>
#include <numeric>

#include "core/model/link.hpp"

namespace habcast {

void UnitSums::merge(const UnitSums& other) {
  area_ha += other.area_ha;
  data_area_ha += other.data_area_ha;
  checked_area_ha += other.checked_area_ha;
  sum_mu += other.sum_mu;
  above_area_ha += other.above_area_ha;
  flagged_area_ha += other.flagged_area_ha;
  for (std::size_t k = 0; k < cause_area_ha.size(); ++k) cause_area_ha[k] += other.cause_area_ha[k];
  if (other.sum_gradient.size() > 0) {
    if (sum_gradient.size() == 0) sum_gradient = Eigen::VectorXd::Zero(other.sum_gradient.size());
    sum_gradient += other.sum_gradient;
  }
}

void BlockUnitCover::sort() {
  const std::size_t n = pixel.size();
  if (n == 0) return;
  const std::uint32_t largest = *std::max_element(pixel.begin(), pixel.end());
  start_.assign(static_cast<std::size_t>(largest) + 2, 0);
  for (const std::uint32_t p : pixel) ++start_[p + 1];
  std::partial_sum(start_.begin(), start_.end(), start_.begin());
  pixel_scratch_.resize(n);
  unit_scratch_.resize(n);
  area_scratch_.resize(n);
  // Stable: within one pixel the entries keep their order of addition, which is unit order.
  for (std::size_t i = 0; i < n; ++i) {
    const std::uint32_t to = start_[pixel[i]]++;
    pixel_scratch_[to] = pixel[i];
    unit_scratch_[to] = unit[i];
    area_scratch_[to] = area_ha[i];
  }
  pixel.swap(pixel_scratch_);
  unit.swap(unit_scratch_);
  area_ha.swap(area_scratch_);
}

UnitSums& BlockUnitSums::at(std::uint32_t unit, std::vector<std::uint32_t>& slot_of) {
  std::uint32_t& slot = slot_of[unit];
  if (slot == 0) {
    units.push_back(unit);
    sums.emplace_back();
    slot = static_cast<std::uint32_t>(units.size());
  }
  return sums[slot - 1];
}

void BlockUnitSums::release_slots(std::vector<std::uint32_t>& slot_of) const {
  for (std::uint32_t u : units) slot_of[u] = 0;
}

namespace {

/// Limits of a mean m with standard error se, formed on the link scale: g(m) -/+ z se / (dg^-1/deta).
void link_scale_limits(Link link, double m, double se, double z, double& lower, double& upper) {
  if (!(se > 0.0) || !std::isfinite(se)) {
    lower = upper = m;
    return;
  }
  const double eta = link_function(link, m);
  const double slope = std::isfinite(eta) ? link_inverse_derivative(link, eta) : 0.0;
  if (!std::isfinite(eta) || !(slope > 0.0) || !std::isfinite(slope)) {
    // m at the edge of the link's range (a mean of exactly 0 or 1): the interval cannot be formed
    // on the link scale; a symmetric one, cut to the range, is the honest fallback.
    lower = m - z * se;
    upper = m + z * se;
    if (link != Link::identity) lower = std::max(lower, 0.0);
    if (link == Link::logit || link == Link::probit || link == Link::cloglog) upper = std::min(upper, 1.0);
    return;
  }
  const double half = z * se / slope;
  lower = link_inverse(link, eta - half);
  upper = link_inverse(link, eta + half);
}

}  // namespace

UnitSummary summarise_unit(const UnitSums& s, Link link, const Eigen::MatrixXd* covariance, double z) {
  UnitSummary u;
  u.area_ha = s.area_ha;
  u.data_area_ha = s.data_area_ha;
  u.nodata_area_ha = std::max(0.0, s.area_ha - s.data_area_ha);
  u.checked_area_ha = s.checked_area_ha;
  u.above_area_ha = s.above_area_ha;
  if (s.checked_area_ha > 0.0) {
    u.flagged_share = s.flagged_area_ha / s.checked_area_ha;
    for (std::size_t k = 0; k < u.cause_share.size(); ++k) u.cause_share[k] = s.cause_area_ha[k] / s.checked_area_ha;
  }
  if (!(s.data_area_ha > 0.0)) return u;
  u.has_prediction = true;
  u.mean = s.sum_mu / s.data_area_ha;
  u.expected_ha = s.sum_mu;
  u.mean_lower = u.mean_upper = u.mean;
  u.expected_lower_ha = u.expected_upper_ha = u.expected_ha;
  if (covariance && s.sum_gradient.size() == covariance->rows()) {
    const double total_var = s.sum_gradient.dot(*covariance * s.sum_gradient);
    u.expected_se_ha = std::sqrt(std::max(0.0, total_var));
    u.mean_se = u.expected_se_ha / s.data_area_ha;
    u.has_se = true;
    link_scale_limits(link, u.mean, u.mean_se, z, u.mean_lower, u.mean_upper);
    u.expected_lower_ha = u.mean_lower * s.data_area_ha;
    u.expected_upper_ha = u.mean_upper * s.data_area_ha;
  }
  return u;
}

}  // namespace habcast
