#include "core/prediction/block_predictor.hpp"

#include <algorithm>
#include <cmath>
#include <limits>

#include "core/domain/extrapolation_flags.hpp"
#include "core/model/link.hpp"

namespace habcast {

void PredictionTally::merge(const PredictionTally& other) {
  if (other.predicted > 0) {
    min_response = predicted > 0 ? std::min(min_response, other.min_response) : other.min_response;
    max_response = predicted > 0 ? std::max(max_response, other.max_response) : other.max_response;
  }
  pixels += other.pixels;
  missing_input += other.missing_input;
  outside_transform += other.outside_transform;
  unknown_level += other.unknown_level;
  undefined_term += other.undefined_term;
  not_representable += other.not_representable;
  moved_off_nodata += other.moved_off_nodata;
  predicted += other.predicted;
  low_certainty += other.low_certainty;
  sum_response += other.sum_response;
  domain.merge(other.domain);
}

BlockPredictor::BlockPredictor(const ModelSpec& spec, const TermPlan& plan, const Evaluator& evaluator,
                               const TrainingDomain* domain, const NoveltyModel* novelty,
                               const LowCertaintyRule* certainty)
    : spec_(spec), plan_(plan), evaluator_(evaluator), domain_(domain),
      certainty_(certainty ? *certainty : LowCertaintyRule::for_model(spec, nullptr)),
      novelty_(domain ? novelty : nullptr) {}

namespace {

bool representable(double v) {
  return std::isfinite(v) && std::fabs(v) <= static_cast<double>(std::numeric_limits<float>::max());
}

float to_output(double v) { return representable(v) ? static_cast<float>(v) : kFloatNodata; }

/// A computed value that lands exactly on the nodata marker (possible for an identity link, whose
/// means and limits can take any value) would read as "no data"; it moves one Float32 step
/// towards zero instead (a relative change of 6e-8), and is counted.
float off_nodata(float v, std::int64_t& moved) {
  if (v != kFloatNodata) return v;
  ++moved;
  return std::nextafter(kFloatNodata, 0.0f);
}

/// A value for a Float32 output band that must never be mistaken for nodata: nodata where Float32
/// cannot hold it, moved off the marker where it equals it.
float to_output_off_nodata(double v, std::int64_t& moved) {
  return representable(v) ? off_nodata(static_cast<float>(v), moved) : kFloatNodata;
}

}  // namespace

void BlockPredictor::run(const Eigen::ArrayXXd& raw, const std::vector<std::uint8_t>& valid, Eigen::Index rows,
                         BlockOutputs& out, PredictionTally& tally, const UnitPass* units) {
  begin(raw, valid, rows, out, tally, units);
  for (Eigen::Index first = 0; first < rows; first += kChunk) chunk(first, std::min(kChunk, rows - first), out, tally);
  end();
}

bool BlockPredictor::can_share_checks(const BlockPredictor& other) const {
  if (!domain_ || !other.domain_ || !domain_->same_checks(*other.domain_)) return false;
  if (!novelty_ || !other.novelty_) return !novelty_ && !other.novelty_;
  return novelty_->same_joint_checks(*other.novelty_);
}

bool BlockPredictor::can_share_values(const BlockPredictor& other) const {
  const std::vector<Covariate>& a = spec_.covariates;
  const std::vector<Covariate>& b = other.spec_.covariates;
  if (a.size() != b.size()) return false;
  for (std::size_t c = 0; c < a.size(); ++c) {
    const Covariate& x = a[c];
    const Covariate& y = b[c];
    if (x.name != y.name || x.categorical != y.categorical || x.transform != y.transform || x.center != y.center ||
        x.scale != y.scale || x.levels.size() != y.levels.size())
      return false;
    for (std::size_t l = 0; l < x.levels.size(); ++l)
      if (x.levels[l].code != y.levels[l].code) return false;
    const int ci = static_cast<int>(c);
    if (plan_.uses_covariate(ci) != other.plan_.uses_covariate(ci)) return false;
  }
  return true;
}

void BlockPredictor::take_values_from(BlockPredictor* donor) {
  values_from_ = donor;
  if (donor) donor->keeps_values_ = true;
}

namespace {

void add_counts(std::vector<std::int64_t>& to, const std::vector<std::int64_t>& from) {
  for (std::size_t c = 0; c < from.size(); ++c) to[c] += from[c];
}

/// Every check but the pair hulls, taken over from `shared` (see BlockPredictor::begin).
void take_over_checks(const SharedChecks& shared, std::size_t n, BlockOutputs& out, DomainTally& tally, bool bands) {
  const std::vector<std::uint8_t>& flags = shared.outputs->flags;
  for (std::size_t i = 0; i < n; ++i)
    out.flags[i] = flags[i] == flag::nodata ? flag::nodata : static_cast<std::uint8_t>(flags[i] & ~flag::outside_pair_hull);
  const DomainTally& from = *shared.tally;
  add_counts(tally.below, from.below);
  add_counts(tally.above, from.above);
  add_counts(tally.unseen, from.unseen);
  add_counts(tally.least_similar, from.least_similar);
  for (std::size_t c = 0; c < from.unseen_codes.size(); ++c)
    for (const auto& [code, count] : from.unseen_codes[c]) tally.unseen_codes[c][code] += count;
  tally.mess_negative += from.mess_negative;
  tally.nt2_above += from.nt2_above;
  if (!bands) return;
  const NoveltyBlock& novelty = shared.outputs->novelty;
  out.novelty.mess = novelty.mess;
  out.novelty.nt1 = novelty.nt1;
  out.novelty.nt2 = novelty.nt2;
  out.novelty.least_similar = novelty.least_similar;
}

}  // namespace

void BlockPredictor::begin(const Eigen::ArrayXXd& raw, const std::vector<std::uint8_t>& valid, Eigen::Index rows,
                           BlockOutputs& out, PredictionTally& tally, const UnitPass* units, const SharedChecks* shared) {
  const auto n = static_cast<std::size_t>(rows);
  const bool with_se = evaluator_.has_covariance();
  const bool with_limits = with_se && evaluator_.limits() && arrays_;
  // Sized, not filled: chunk() writes every value of these arrays (nodata where a pixel has no
  // prediction), and the checks below every flag. (Filling them first cost as much as the
  // chunks' writes: each array is several MiB, far out of cache.)
  out.suitability.resize(arrays_ ? n : 0);
  out.se.resize(with_se && arrays_ ? n : 0);
  out.lower.resize(with_limits ? n : 0);
  out.upper.resize(with_limits ? n : 0);
  out.flags.resize(domain_ ? n : 0);

  predict_valid_.assign(valid.begin(), valid.begin() + static_cast<std::ptrdiff_t>(n));
  tally.pixels += rows;
  for (std::size_t i = 0; i < n; ++i) tally.missing_input += valid[i] ? 0 : 1;
  if (domain_) {
    if (shared) {
      take_over_checks(*shared, n, out, tally.domain, arrays_);
      if (novelty_)
        novelty_->check_pairs(raw, rows, valid.data(), out.flags.data(), out.novelty, tally.domain, *shared->novelty,
                              shared->outputs->novelty);
    } else {
      domain_->flag(raw, rows, valid.data(), out.flags.data(), tally.domain);
      if (novelty_) novelty_->check(raw, rows, valid.data(), out.flags.data(), out.novelty, tally.domain);
    }
    TrainingDomain::count_causes(rows, valid.data(), out.flags.data(), tally.domain);
  }

  raw_ = &raw;
  units_ = units && units->cover && units->cover->size() > 0 ? units : nullptr;
  unit_cursor_ = 0;
}

void BlockPredictor::chunk(Eigen::Index first, Eigen::Index rows, BlockOutputs& out, PredictionTally& tally) {
  std::uint8_t* ok = predict_valid_.data() + first;
  const auto n = static_cast<std::size_t>(rows);
  const ModelValues* values = &values_;
  ModelValueCounts counts;
  if (values_from_) {
    values = &values_from_->values_;
    std::copy(values_from_->values_ok_.begin(), values_from_->values_ok_.begin() + static_cast<std::ptrdiff_t>(n), ok);
    counts = values_from_->values_counts_;
  } else {
    to_model_values(spec_, plan_, *raw_, first, rows, values_, ok, counts);
    if (keeps_values_) {
      values_ok_.assign(ok, ok + n);
      values_counts_ = counts;
    }
  }
  tally.outside_transform += counts.outside_transform;
  tally.unknown_level += counts.unknown_level;

  plan_.size_design(kChunk, X_);
  tally.undefined_term += plan_.fill(*values, rows, X_, ok);
  if (plan_.offset_term()) plan_.fill_offset(*values, rows, offset_, ok);  // else the evaluator reads no offset
  evaluator_.evaluate(X_, rows, offset_, prediction_);

  const bool with_se = evaluator_.has_covariance() && arrays_;
  const bool with_limits = with_se && evaluator_.limits();
  // The loop works on local copies of the counts, the sums and the array pointers, written back
  // after it: `ok` is a byte array, which may alias anything, so every store to it would otherwise
  // make the compiler store and reload the tally's fields and the vectors' pointers, and the sum
  // of the responses would wait on memory at every pixel. The same operations in the same order.
  float* const suitability = arrays_ ? out.suitability.data() + first : nullptr;
  float* const se = with_se ? out.se.data() + first : nullptr;
  float* const lower = with_limits ? out.lower.data() + first : nullptr;
  float* const upper = with_limits ? out.upper.data() + first : nullptr;
  const double* const mu_of = prediction_.mu.data();
  const double* const se_mu_of = with_se ? prediction_.se_mu.data() : nullptr;
  const double* const lower_of = with_limits ? prediction_.lower.data() : nullptr;
  const double* const upper_of = with_limits ? prediction_.upper.data() : nullptr;
  std::int64_t not_representable = 0, moved = 0, predicted = tally.predicted, low_certainty = 0;
  double min_response = tally.min_response, max_response = tally.max_response, sum_response = tally.sum_response;
  const auto no_value = [&](Eigen::Index i) {
    if (!arrays_) return;
    suitability[i] = kFloatNodata;
    if (with_se) se[i] = kFloatNodata;
    if (with_limits) lower[i] = upper[i] = kFloatNodata;
  };
  for (Eigen::Index i = 0; i < rows; ++i) {
    if (!ok[i]) {
      no_value(i);
      continue;
    }
    const double mu = mu_of[i];
    if (!representable(mu)) {
      ++not_representable;
      ok[i] = 0;  // so predicted() tells combiners this pixel has no value
      no_value(i);
      continue;
    }
    if (arrays_) suitability[i] = off_nodata(static_cast<float>(mu), moved);
    if (predicted == 0) {
      min_response = mu;
      max_response = mu;
    } else {
      min_response = std::min(min_response, mu);
      max_response = std::max(max_response, mu);
    }
    ++predicted;
    sum_response += mu;
    if (with_se) se[i] = to_output(se_mu_of[i]);
    if (with_limits) {
      lower[i] = to_output_off_nodata(lower_of[i], moved);
      upper[i] = to_output_off_nodata(upper_of[i], moved);
      if (certainty_.applies(lower_of[i], upper_of[i])) ++low_certainty;
    }
  }
  tally.not_representable += not_representable;
  tally.moved_off_nodata += moved;
  tally.predicted = predicted;
  tally.low_certainty += low_certainty;
  tally.min_response = min_response;
  tally.max_response = max_response;
  tally.sum_response = sum_response;
  if (units_) add_to_units(first, rows, out);
}

void BlockPredictor::add_to_units(Eigen::Index first, Eigen::Index rows, const BlockOutputs& out) {
  const BlockUnitCover& cover = *units_->cover;
  const auto end = static_cast<std::uint32_t>(first + rows);
  if (units_->with_gradient) {
    slope_.resize(rows);
    link_inverse_derivative_all(evaluator_.link(), prediction_.eta.data(), slope_.data(), rows);
  }
  for (; unit_cursor_ < cover.size() && cover.pixel[unit_cursor_] < end; ++unit_cursor_) {
    const std::size_t o = cover.pixel[unit_cursor_];
    const double a = cover.area_ha[unit_cursor_];
    UnitSums& u = units_->sums->at(cover.unit[unit_cursor_], *units_->slot_of);
    u.area_ha += a;
    if (!out.flags.empty() && out.flags[o] != flag::nodata) {
      u.checked_area_ha += a;
      if (out.flags[o] != 0) u.flagged_area_ha += a;
      for (std::size_t k = 0; k < kUnitFlagBits.size(); ++k)
        if (out.flags[o] & kUnitFlagBits[k]) u.cause_area_ha[k] += a;
    }
    if (out.suitability[o] == kFloatNodata) continue;
    const Eigen::Index i = static_cast<Eigen::Index>(o) - first;
    const double mu = prediction_.mu[i];
    u.data_area_ha += a;
    u.sum_mu += a * mu;
    if (mu >= units_->threshold) u.above_area_ha += a;
    if (units_->with_gradient) {
      // d mu / d beta = (d mu / d eta) x: the row of the design matrix scaled by the link's slope.
      if (u.sum_gradient.size() == 0) u.sum_gradient = Eigen::VectorXd::Zero(X_.cols());
      const double w = a * slope_[i];
      u.sum_gradient += w * X_.row(i).transpose();
    }
  }
}

}  // namespace habcast
