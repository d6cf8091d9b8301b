#include "core/domain/novelty_model.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <set>

#include "core/base/error.hpp"
#include "core/base/number_text.hpp"
#include "core/base/pixel_loops.hpp"
#include "core/domain/extrapolation_flags.hpp"
#include "core/domain/novelty_indices.hpp"
#include "core/model/float_nodata.hpp"
#include "core/model/model_values.hpp"
#include "core/numeric/qhull_facets.hpp"

namespace habcast {

namespace {

/// Novelty values written to Float32 never reach the nodata value, however far out a pixel is.
float novelty_output(double v) { return static_cast<float>(std::max(v, -9000.0)); }

}  // namespace

NoveltyModel::NoveltyModel(const ModelSpec& spec, const TermPlan& plan, const TrainingSamples& samples,
                           const NoveltyOptions& options)
    : spec_(spec), options_(options) {
  for (std::size_t c = 0; c < spec.covariates.size(); ++c)
    if (!spec.covariates[c].categorical && plan.uses_covariate(static_cast<int>(c)) && !plan.offset_only(static_cast<int>(c)))
      covariates_.push_back(static_cast<int>(c));
  if (!active()) {
    hull_method_ = covariates_.empty() ? "not applicable: the model uses no continuous covariate" : "not requested";
    return;
  }
  build_univariate(spec, samples);
  build_joint(spec, samples);
  if (options_.pairs) build_pairs(spec, plan, samples);
}

std::string NoveltyModel::names(const std::vector<int>& covariates) const {
  std::string s;
  for (int c : covariates) s += (s.empty() ? "" : ", ") + spec_.covariates[static_cast<std::size_t>(c)].name;
  return s;
}

void NoveltyModel::build_univariate(const ModelSpec& spec, const TrainingSamples& samples) {
  const std::string fix = " Fix the training table, or run with --checks range to check ranges only.";
  for (int c : covariates_) {
    const Covariate& cov = spec.covariates[static_cast<std::size_t>(c)];
    std::vector<double> values;
    for (Eigen::Index i = 0; i < samples.raw.rows(); ++i) {
      const double raw = samples.raw(i, c);
      if (std::isnan(raw)) continue;
      const double z = model_value(cov, raw);
      if (!std::isfinite(z))
        throw InputError(located(samples.path, 0,
                                 "sample " + std::to_string(i + 1) + ": " + cov.name + " = " + significant(raw, 6) +
                                     " is outside the domain of its " + to_string(cov.transform) + " transform." + fix));
      values.push_back(z);
    }
    std::sort(values.begin(), values.end());
    if (values.size() < 2)
      throw InputError(located(samples.path, 0,
                               count_of(static_cast<std::int64_t>(values.size()), "sample") +
                                   (values.size() == 1 ? " records " : " record ") + cov.name +
                                   "; similarity, NT2 and the hulls need at least 2 distinct values." + fix));
    if (values.front() == values.back())
      throw InputError(located(samples.path, 0,
                               "every sample has " + cov.name + " = " +
                                   significant(raw_value(cov, values.front()), 6) +
                                   " (zero variance): the model cannot have learned its effect, and similarity "
                                   "and NT2 are undefined." + fix));
    sorted_.emplace_back(std::move(values));
  }
}

void NoveltyModel::build_joint(const ModelSpec& spec, const TrainingSamples& samples) {
  const auto d = static_cast<Eigen::Index>(covariates_.size());
  std::vector<Eigen::Index> rows;
  for (Eigen::Index i = 0; i < samples.raw.rows(); ++i) {
    bool complete = true;
    for (int c : covariates_) complete = complete && !std::isnan(samples.raw(i, c));
    if (complete) rows.push_back(i);
  }
  complete_ = static_cast<std::int64_t>(rows.size());
  complete_points_.resize(static_cast<Eigen::Index>(rows.size()), d);
  for (std::size_t r = 0; r < rows.size(); ++r)
    for (Eigen::Index j = 0; j < d; ++j) {
      const int c = covariates_[static_cast<std::size_t>(j)];
      complete_points_(static_cast<Eigen::Index>(r), j) =
          model_value(spec.covariates[static_cast<std::size_t>(c)], samples.raw(rows[r], c));
    }
  const bool need_joint = (options_.nt2 || options_.hull) && d >= 1;
  if (need_joint && complete_ < 2) {
    notes_.push_back("Only " + count_of(complete_, "training sample") + (complete_ == 1 ? " records" : " record") +
                     " all of " + names(covariates_) +
                     ", so NT2 and the training hull were not computed.");
    options_.nt2 = false;
    options_.hull = false;
  }
  if (options_.nt2) {
    frame_ = whitening_frame(complete_points_, options_.hull_tolerance);
    std::vector<double> y(static_cast<std::size_t>(std::max(frame_->rank, 1)));
    for (Eigen::Index i = 0; i < complete_points_.rows(); ++i) {
      const Eigen::VectorXd x = complete_points_.row(i).transpose();
      frame_->whiten(x.data(), y.data());
      double r2 = 0.0;
      for (int j = 0; j < frame_->rank; ++j) r2 += y[static_cast<std::size_t>(j)] * y[static_cast<std::size_t>(j)];
      nt2_max_ = std::max(nt2_max_, r2);  // squared distances: NT2 is their ratio (Mesgaran et al. 2014)
    }
    if (frame_->rank < d)
      notes_.push_back("The training samples of " + names(covariates_) + " span only " + std::to_string(frame_->rank) +
                       " of " + std::to_string(d) +
                       " dimensions (collinear covariates or too few distinct samples): their covariance is singular, "
                       "so NT2 uses its pseudo-inverse and measures distance within the span of the samples only.");
  }
  if (!options_.hull) {
    hull_method_ = "not requested";
  } else if (d < 2) {
    hull_method_ = "not applicable: one continuous covariate (its range is its hull)";
  } else if (d > options_.hull_max_dim) {
    hull_method_ = "not built: " + std::to_string(d) + " covariates exceed --hull-max-dim " +
                   std::to_string(options_.hull_max_dim) +
                   "; standing in: 2-D hulls of interacting pairs (bit 16) and NT2 > " +
                   significant(options_.nt2_threshold, 6) + " (bit 8)";
    notes_.push_back("The full training hull was not built for " + std::to_string(d) + " covariates (limit " +
                     std::to_string(options_.hull_max_dim) +
                     "); pairwise hulls of interacting covariates and NT2 stand in for it, and they can miss "
                     "combinations novel in three or more covariates at once.");
  } else {
    try {
      hull_.emplace(complete_points_, options_.hull_tolerance);
      hull_shares_nt2_frame_ = options_.nt2 && frame_ && hull_->frame().same_as(*frame_);
      hull_method_ = "exact convex hull (Qhull) of " + std::to_string(complete_) + " samples in " + std::to_string(d) +
                     " dimensions, " + std::to_string(hull_->facet_count()) + " facets, relative tolerance " +
                     significant(hull_->tolerance(), 6);
      if (hull_->rank() < d) {
        hull_method_ += "; flat: the samples span " + std::to_string(hull_->rank()) + " dimensions";
        notes_.push_back("The training samples of " + names(covariates_) + " span only " + std::to_string(hull_->rank()) +
                         " of " + std::to_string(d) +
                         " dimensions (collinear, duplicate or too few samples): their hull is flat, so it was built "
                         "in the plane they span and every pixel off that plane counts as outside it.");
      }
    } catch (const HullBuildError& e) {
      hull_method_ = std::string("not built: ") + e.what() + "; standing in: pairwise hulls and NT2";
      notes_.push_back(std::string("The training hull could not be built (") + e.what() +
                       "); pairwise hulls of interacting covariates and NT2 stand in for it.");
    }
  }
}

void NoveltyModel::build_pairs(const ModelSpec& spec, const TermPlan& plan, const TrainingSamples& samples) {
  std::set<std::pair<int, int>> seen;
  for (std::size_t t = 0; t < plan.terms().size(); ++t) {
    std::vector<int> in_term;
    for (const TermFactor& f : plan.terms()[t].factors)
      if (f.level < 0 && !spec.covariates[static_cast<std::size_t>(f.covariate)].categorical)
        in_term.push_back(f.covariate);
    std::sort(in_term.begin(), in_term.end());
    in_term.erase(std::unique(in_term.begin(), in_term.end()), in_term.end());
    for (std::size_t i = 0; i < in_term.size(); ++i)
      for (std::size_t j = i + 1; j < in_term.size(); ++j) {
        const std::pair<int, int> key{in_term[i], in_term[j]};
        if (seen.insert(key).second) pairs_.push_back({key.first, key.second, {}});
        for (CovariatePair& p : pairs_)
          if (p.a == key.first && p.b == key.second) p.terms.push_back(spec.terms[t]);
      }
  }
  const auto column = [&](int c) {
    return static_cast<std::size_t>(std::find(covariates_.begin(), covariates_.end(), c) - covariates_.begin());
  };
  for (const CovariatePair& p : pairs_) {
    pair_columns_.push_back({column(p.a), column(p.b)});
    std::vector<Eigen::Index> rows;
    for (Eigen::Index i = 0; i < samples.raw.rows(); ++i)
      if (!std::isnan(samples.raw(i, p.a)) && !std::isnan(samples.raw(i, p.b))) rows.push_back(i);
    Eigen::MatrixXd points(static_cast<Eigen::Index>(rows.size()), 2);
    for (std::size_t r = 0; r < rows.size(); ++r) {
      points(static_cast<Eigen::Index>(r), 0) = model_value(spec.covariates[static_cast<std::size_t>(p.a)], samples.raw(rows[r], p.a));
      points(static_cast<Eigen::Index>(r), 1) = model_value(spec.covariates[static_cast<std::size_t>(p.b)], samples.raw(rows[r], p.b));
    }
    const std::string label = names({p.a, p.b});
    if (rows.size() < 2)
      throw InputError(located(samples.path, 0,
                               "fewer than 2 samples record both " + label +
                                   ", so their joint hull is unknown. Add samples, or leave out the pair check "
                                   "with --checks range,hull,nt2,mess."));
    pair_hulls_.emplace_back(points, options_.hull_tolerance);
    pair_points_.push_back(std::move(points));
    if (pair_hulls_.back().rank() < 2)
      notes_.push_back("The training samples of " + label +
                       " lie on one line, so their joint hull is that line segment and every pixel off it counts "
                       "as outside.");
  }
}

void NoveltyModel::check(const Eigen::ArrayXXd& raw, Eigen::Index rows, const std::uint8_t* valid, std::uint8_t* flags,
                         NoveltyBlock& out, DomainTally& tally) const {
  const auto n = static_cast<std::size_t>(rows);
  out.mess.assign(n, kFloatNodata);
  out.nt1.assign(n, kFloatNodata);
  out.nt2.assign(n, kFloatNodata);
  out.least_similar.assign(n, flag::nodata);
  if (out.keep_pairs) out.pair_outside.assign(pairs_.size(), std::vector<std::uint8_t>(n, 0));
  check_pixels(raw, rows, valid, flags, out, tally, true, nullptr);
}

void NoveltyModel::check_pairs(const Eigen::ArrayXXd& raw, Eigen::Index rows, const std::uint8_t* valid,
                               std::uint8_t* flags, NoveltyBlock& out, DomainTally& tally, const NoveltyModel& donor,
                               const NoveltyBlock& donor_block) const {
  if (pairs_.empty() || !active()) return;
  if (tally.pair_outside.size() < pairs_.size()) tally.pair_outside.resize(pairs_.size());
  const auto n = static_cast<std::size_t>(rows);
  // A pair the donor checked against the same hull (the same two covariates, the same training
  // points; the options agree) is taken from its mask; the others are checked here.
  std::vector<bool> taken(pairs_.size(), false);
  bool all_taken = true;
  for (std::size_t p = 0; p < pairs_.size(); ++p) {
    for (std::size_t q = 0; q < donor.pairs_.size() && !taken[p]; ++q) {
      if (donor.pairs_[q].a != pairs_[p].a || donor.pairs_[q].b != pairs_[p].b || q >= donor_block.pair_outside.size())
        continue;
      const Eigen::MatrixXd& mine = pair_points_[p];
      const Eigen::MatrixXd& theirs = donor.pair_points_[q];
      if (mine.rows() != theirs.rows() || mine != theirs) continue;
      taken[p] = true;
      const std::vector<std::uint8_t>& outside = donor_block.pair_outside[q];
      std::int64_t count = 0;
      for (std::size_t i = 0; i < n; ++i) {
        flags[i] = static_cast<std::uint8_t>(flags[i] | (outside[i] ? flag::outside_pair_hull : 0));
        count += outside[i];
      }
      tally.pair_outside[p] += count;
    }
    all_taken = all_taken && taken[p];
  }
  if (!all_taken) check_pixels(raw, rows, valid, flags, out, tally, false, &taken);
}

bool NoveltyModel::same_joint_checks(const NoveltyModel& other) const {
  const NoveltyOptions& a = options_;
  const NoveltyOptions& b = other.options_;
  if (a.mess != b.mess || a.nt2 != b.nt2 || a.hull != b.hull || a.pairs != b.pairs ||
      a.nt2_threshold != b.nt2_threshold || a.hull_tolerance != b.hull_tolerance || a.hull_max_dim != b.hull_max_dim)
    return false;
  if (covariates_ != other.covariates_ || active() != other.active()) return false;
  for (const int c : covariates_) {
    const Covariate& x = spec_.covariates[static_cast<std::size_t>(c)];
    const Covariate& y = other.spec_.covariates[static_cast<std::size_t>(c)];
    if (x.name != y.name || x.transform != y.transform || x.center != y.center || x.scale != y.scale) return false;
  }
  if (!active()) return true;
  for (std::size_t j = 0; j < sorted_.size(); ++j)
    if (sorted_[j].values() != other.sorted_[j].values()) return false;
  // The frame, NT2's denominator and the hull are built from these points by the same code.
  return complete_points_.rows() == other.complete_points_.rows() &&
         complete_points_.cols() == other.complete_points_.cols() && complete_points_ == other.complete_points_;
}

namespace {

/// Model values of the slab's pixels (column j from raw column covariates[j]) and which pixels
/// the checks use: valid, with every model value finite. The same values as model_value().
HABCAST_PIXEL_LOOPS void slab_values(const ModelSpec& spec, const std::vector<int>& covariates, const Eigen::ArrayXXd& raw,
                                     std::size_t first, std::size_t m, const std::uint8_t* valid, double* z,
                                     std::size_t stride, double* bad, std::uint8_t* use) {
  for (std::size_t i = 0; i < m; ++i) bad[i] = 0.0;
  for (std::size_t j = 0; j < covariates.size(); ++j) {
    const Covariate& cov = spec.covariates[static_cast<std::size_t>(covariates[j])];
    const double* __restrict in = raw.col(covariates[j]).data() + first;
    double* __restrict zj = z + j * stride;
    if (cov.transform == Transform::none) {
      const double center = cov.center, scale = cov.scale;
      for (std::size_t i = 0; i < m; ++i) zj[i] = (in[i] - center) / scale;
    } else {
      for (std::size_t i = 0; i < m; ++i) zj[i] = model_value(cov, in[i]);
    }
    // 0 * z is NaN exactly where z is not finite: the sum marks a pixel with any such value.
    for (std::size_t i = 0; i < m; ++i) bad[i] += 0.0 * zj[i];
  }
  for (std::size_t i = 0; i < m; ++i) use[i] = static_cast<std::uint8_t>((valid[i] != 0) & (bad[i] == 0.0));
}

/// Running minimum of the similarities (the first covariate wins ties) and the sum of NT1 terms,
/// covariate `j` added to the slab's columns: per pixel the operations of a loop over covariates.
HABCAST_PIXEL_LOOPS void add_similarity(std::size_t m, std::int64_t j, const double* __restrict similarity,
                                        const double* __restrict z, double lo, double hi, double* __restrict mess,
                                        std::int64_t* __restrict least, double* __restrict nt1) {
  for (std::size_t i = 0; i < m; ++i) {
    const bool smaller = similarity[i] < mess[i];
    mess[i] = smaller ? similarity[i] : mess[i];
    least[i] = smaller ? j : least[i];
    nt1[i] += std::min(std::min(z[i] - lo, hi - z[i]), 0.0) / (hi - lo);  // nt1_term(lo, hi, z)
  }
}

}  // namespace

void NoveltyModel::check_pixels(const Eigen::ArrayXXd& raw, Eigen::Index rows, const std::uint8_t* valid,
                                std::uint8_t* flags, NoveltyBlock& out, DomainTally& tally, bool joint,
                                const std::vector<bool>* skip_pairs) const {
  const auto n = static_cast<std::size_t>(rows);
  if (!active()) return;
  const std::size_t d = covariates_.size();
  NoveltyBlock::Slab& slab = out.slab;
  const int joint_rank = frame_ ? frame_->rank : (hull_ ? hull_->rank() : 0);
  slab.z.resize(kSlab * d);
  slab.y.resize(kSlab * static_cast<std::size_t>(std::max(joint_rank, 2)));
  for (std::vector<double>* v : {&slab.off, &slab.mess, &slab.nt1, &slab.similarity}) v->resize(kSlab);
  slab.least.resize(kSlab);
  slab.use.resize(kSlab);
  slab.point.resize(std::max<std::size_t>(2 * d, 4));
  slab.columns.resize(std::max<std::size_t>(d, 2));
  if (tally.pair_outside.size() < pairs_.size()) tally.pair_outside.resize(pairs_.size());
  // Climbs start afresh in every block, so a block's result never depends on which blocks a
  // worker handled before it.
  int hull_start = 0;
  std::vector<int> pair_start(pairs_.size(), 0);
  for (std::size_t first = 0; first < n; first += kSlab) {
    const std::size_t m = std::min(kSlab, n - first);
    slab_values(spec_, covariates_, raw, first, m, valid + first, slab.z.data(), kSlab, slab.similarity.data(),
                slab.use.data());
    check_slab(first, m, flags, out, tally, joint, skip_pairs, hull_start, pair_start);
  }
}

// Each check runs over the slab in columns where it can (model values, similarities, whitening,
// NT2); the hull climbs go pixel by pixel, in pixel order, each from where the last one ended.
// Every pixel gets exactly the operations, in the same order, of a check done pixel by pixel.
void NoveltyModel::check_slab(std::size_t first, std::size_t m, std::uint8_t* flags, NoveltyBlock& out,
                              DomainTally& tally, bool joint, const std::vector<bool>* skip_pairs, int& hull_start,
                              std::vector<int>& pair_start) const {
  NoveltyBlock::Slab& slab = out.slab;
  const std::size_t d = covariates_.size();
  const std::uint8_t* use = slab.use.data();
  std::uint8_t* slab_flags = flags + first;
  const auto z_column = [&](std::size_t j) { return slab.z.data() + j * kSlab; };

  if (joint && options_.mess) {
    std::fill_n(slab.mess.data(), m, std::numeric_limits<double>::infinity());
    std::fill_n(slab.least.data(), m, 0);
    std::fill_n(slab.nt1.data(), m, 0.0);
    for (std::size_t j = 0; j < d; ++j) {
      const SortedValues& s = sorted_[j];
      s.mess_similarity_columns(z_column(j), m, slab.similarity.data());
      add_similarity(m, static_cast<std::int64_t>(j), slab.similarity.data(), z_column(j), s.values().front(),
                     s.values().back(), slab.mess.data(), slab.least.data(), slab.nt1.data());
    }
    for (std::size_t i = 0; i < m; ++i) {
      if (!use[i]) continue;
      const double mess = slab.mess[i];
      const auto least = static_cast<std::size_t>(covariates_[static_cast<std::size_t>(slab.least[i])]);
      out.mess[first + i] = novelty_output(mess);
      out.nt1[first + i] = novelty_output(slab.nt1[i]);
      out.least_similar[first + i] = static_cast<std::uint8_t>(least + 1);
      if (mess < 0.0) {
        ++tally.mess_negative;
        ++tally.least_similar[least];
      }
    }
  }

  // Whitened coordinates in NT2's frame (the hull's too when they are the same frame).
  const WhiteningFrame* joint_frame = nullptr;
  if (joint && options_.nt2) joint_frame = &*frame_;
  else if (joint && hull_) joint_frame = &hull_->frame();
  if (joint_frame) {
    for (std::size_t j = 0; j < d; ++j) slab.columns[j] = z_column(j);
    joint_frame->whiten_columns(slab.columns.data(), m, slab.y.data(), kSlab, slab.off.data());
  }
  const int rank = joint_frame ? joint_frame->rank : 0;
  if (joint && options_.nt2) {
    for (std::size_t i = 0; i < m; ++i) {
      if (!use[i]) continue;
      double r2 = 0.0;
      for (int j = 0; j < rank; ++j) r2 += slab.y[static_cast<std::size_t>(j) * kSlab + i] * slab.y[static_cast<std::size_t>(j) * kSlab + i];
      // NT2 = D²(pixel) / max D²(training samples), the ratio of squared Mahalanobis distances of
      // Mesgaran, Cousens & Webber 2014 (from memory). NT2 > 1 exactly where D > max D, so the
      // flag is the same as for the ratio of distances.
      const double nt2 = nt2_max_ > 0.0 ? r2 / nt2_max_ : 0.0;
      out.nt2[first + i] = static_cast<float>(std::min(nt2, 1e30));
      if (nt2 > options_.nt2_threshold) {
        ++tally.nt2_above;
        if ((slab_flags[i] & flag::outside_range) == 0) slab_flags[i] |= flag::novel_combination;
      }
    }
  }

  const auto checked = [&](std::size_t i) { return use[i] && (slab_flags[i] & flag::outside_range) == 0; };
  double* point = slab.point.data();
  if (joint && hull_) {
    // Whitened in the hull's own frame above when it is NT2's (checked equal when built) or NT2 is off.
    const bool whitened = joint_frame == &hull_->frame() || hull_shares_nt2_frame_;
    for (std::size_t i = 0; i < m; ++i) {
      if (!checked(i)) continue;
      bool inside = false;
      if (whitened) {
        for (int j = 0; j < rank; ++j) point[j] = slab.y[static_cast<std::size_t>(j) * kSlab + i];
        inside = hull_->contains_whitened(point, slab.off[i], hull_start);
      } else {
        for (std::size_t j = 0; j < d; ++j) point[j] = z_column(j)[i];
        inside = hull_->contains(point, point + d, hull_start);
      }
      if (!inside) slab_flags[i] |= flag::outside_hull;
    }
  }
  const bool keep_pairs = joint && out.keep_pairs;
  for (std::size_t p = 0; p < pairs_.size(); ++p) {
    if (skip_pairs && (*skip_pairs)[p]) continue;
    const TrainingHull& hull = pair_hulls_[p];
    const double* columns[2] = {z_column(pair_columns_[p][0]), z_column(pair_columns_[p][1])};
    hull.frame().whiten_columns(columns, m, slab.y.data(), kSlab, slab.off.data());
    for (std::size_t i = 0; i < m; ++i) {
      if (!checked(i)) continue;
      for (int j = 0; j < hull.rank(); ++j) point[j] = slab.y[static_cast<std::size_t>(j) * kSlab + i];
      if (!hull.contains_whitened(point, slab.off[i], pair_start[p])) {
        slab_flags[i] |= flag::outside_pair_hull;
        ++tally.pair_outside[p];
        if (keep_pairs) out.pair_outside[p][first + i] = 1;
      }
    }
  }
}

}  // namespace habcast
