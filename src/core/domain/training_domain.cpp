#include "core/domain/training_domain.hpp"

#include <algorithm>
#include <cmath>
#include <limits>

#include "core/base/error.hpp"
#include "core/base/pixel_loops.hpp"
#include "core/domain/extrapolation_flags.hpp"
#include "core/model/model_values.hpp"
#include "core/model/term_plan.hpp"

namespace habcast {

void DomainTally::merge(const DomainTally& other) {
  if (below.size() < other.below.size()) {
    below.resize(other.below.size());
    above.resize(other.above.size());
    unseen.resize(other.unseen.size());
    unseen_codes.resize(other.unseen_codes.size());
    least_similar.resize(other.least_similar.size());
  }
  if (pair_outside.size() < other.pair_outside.size()) pair_outside.resize(other.pair_outside.size());
  for (std::size_t p = 0; p < other.pair_outside.size(); ++p) pair_outside[p] += other.pair_outside[p];
  for (std::size_t c = 0; c < other.below.size(); ++c) {
    below[c] += other.below[c];
    above[c] += other.above[c];
    unseen[c] += other.unseen[c];
    for (const auto& [code, n] : other.unseen_codes[c]) unseen_codes[c][code] += n;
    least_similar[c] += other.least_similar[c];
  }
  for (int b = 0; b < flag::cause_count; ++b) cause[b] += other.cause[b];
  mess_negative += other.mess_negative;
  nt2_above += other.nt2_above;
  flagged += other.flagged;
  checked += other.checked;
}

TrainingDomain::TrainingDomain(const ModelSpec& spec, const TrainingSamples& samples)
    : spec_(spec), ranges_(spec.covariates.size()), seen_(spec.covariates.size()), offset_only_(spec.covariates.size()),
      samples_(samples.raw.rows()) {
  const TermPlan plan(spec);
  for (std::size_t c = 0; c < spec.covariates.size(); ++c) offset_only_[c] = plan.offset_only(static_cast<int>(c));
  for (std::size_t c = 0; c < spec.covariates.size(); ++c) {
    const auto col = samples.raw.col(static_cast<Eigen::Index>(c));
    CovariateRange r{std::numeric_limits<double>::infinity(), -std::numeric_limits<double>::infinity(), 0};
    for (Eigen::Index i = 0; i < col.size(); ++i) {
      const double v = col[i];
      if (std::isnan(v)) continue;
      r.min = std::min(r.min, v);
      r.max = std::max(r.max, v);
      ++r.samples;
      if (spec.covariates[c].categorical) {
        if (const std::optional<std::int64_t> code = level_code(v)) seen_[c].push_back(*code);
      }
    }
    if (r.samples == 0)
      throw InputError(located(samples.path, 0, "no sample records covariate \"" + spec.covariates[c].name +
                                                    "\"; its training range is unknown"));
    ranges_[c] = r;
    // Beyond a spline's boundary knots the basis is its own extension (linear for ns, the last
    // piece's polynomial for bs), shaped by no data: those values are flagged as outside the range
    // too, whichever of the training range and the boundary knots is narrower.
    flag_limits_.emplace_back(r.min, r.max);
    for (const auto* d : {&spec.covariates[c].natural_spline, &spec.covariates[c].bspline})
      if (*d) {
        flag_limits_.back().first = std::max(flag_limits_.back().first, raw_value(spec.covariates[c], (*d)->lower));
        flag_limits_.back().second = std::min(flag_limits_.back().second, raw_value(spec.covariates[c], (*d)->upper));
      }
    std::sort(seen_[c].begin(), seen_[c].end());
    seen_[c].erase(std::unique(seen_[c].begin(), seen_[c].end()), seen_[c].end());
  }
  seen_tables_.resize(spec.covariates.size());
  for (std::size_t c = 0; c < spec.covariates.size(); ++c) {
    std::vector<std::pair<std::int64_t, std::int32_t>> seen;
    for (std::int64_t code : seen_[c]) seen.emplace_back(code, 1);
    seen_tables_[c] = CodeTable(seen, 0);
  }
}

bool TrainingDomain::same_checks(const TrainingDomain& other) const {
  if (spec_.covariates.size() != other.spec_.covariates.size() || samples_ != other.samples_ ||
      flag_limits_ != other.flag_limits_ || seen_ != other.seen_ || offset_only_ != other.offset_only_)
    return false;
  for (std::size_t c = 0; c < spec_.covariates.size(); ++c) {
    const Covariate& x = spec_.covariates[c];
    const Covariate& y = other.spec_.covariates[c];
    const CovariateRange& r = ranges_[c];
    const CovariateRange& q = other.ranges_[c];
    if (x.name != y.name || x.categorical != y.categorical || r.min != q.min || r.max != q.max || r.samples != q.samples)
      return false;
  }
  return true;
}

namespace {

/// Counts the valid pixels whose code `unseen(code)` says the training never saw: per covariate,
/// and per code (a value that is not whole at its floor; a value beyond any code, such as a float
/// raster's 1e30, at the nearer end). Class rasters come in runs of one code: the verdict is
/// taken once per run and the run added to the map once.
template <class Unseen>
void count_unseen(std::size_t c, const double* v, Eigen::Index rows, const std::uint8_t* valid, Unseen unseen,
                  DomainTally& tally) {
  std::map<std::int64_t, std::int64_t>& by_code = tally.unseen_codes[c];
  double last_code = std::numeric_limits<double>::quiet_NaN();  // NaN, the start value, equals nothing
  bool last_unseen = false;
  std::int64_t last_key = 0;
  std::int64_t key = 0, run = 0;  // `run` pixels of code `key` not yet in the map
  for (Eigen::Index r = 0; r < rows; ++r) {
    if (!valid[r]) continue;
    const double code = v[r];
    if (code != last_code) {
      last_code = code;
      last_unseen = unseen(code);
      const std::optional<std::int64_t> floor_code = level_code(std::floor(code));
      last_key = floor_code ? *floor_code
                            : (code < 0 ? std::numeric_limits<std::int64_t>::min()
                                        : std::numeric_limits<std::int64_t>::max());
    }
    if (!last_unseen) continue;
    ++tally.unseen[c];
    if (run > 0 && last_key != key) {
      by_code[key] += run;
      run = 0;
    }
    key = last_key;
    ++run;
  }
  if (run > 0) by_code[key] += run;
}

}  // namespace

HABCAST_PIXEL_LOOPS void TrainingDomain::flag(const Eigen::ArrayXXd& raw, Eigen::Index rows,
                                              const std::uint8_t* valid, std::uint8_t* flags,
                                              DomainTally& tally) const {
  for (Eigen::Index r = 0; r < rows; ++r) flags[r] = valid[r] ? 0 : flag::nodata;
  for (std::size_t c = 0; c < spec_.covariates.size(); ++c) {
    const double* v = raw.col(static_cast<Eigen::Index>(c)).data();
    if (spec_.covariates[c].categorical) {
      const std::vector<std::int64_t>& seen = seen_[c];
      const CodeTable& table = seen_tables_[c];
      const auto is_unseen = [&](double code) {
        const std::optional<std::int64_t> whole = level_code(code);
        return !whole || !std::binary_search(seen.begin(), seen.end(), *whole);
      };
      // Where the codes seen fit a table, the bits are set without branches (the loops vectorise),
      // a slab of pixels at a time, and the unseen pixels of a slab that has any are counted after.
      // (GCC 12 vectorises the table's gather only in a loop without bytes: the verdicts go through
      // a slab of doubles in the first-level cache.) Invalid pixels hold flag::nodata, all bits set,
      // which OR leaves as it is.
      if (table.usable()) {
        const CodeTable::View known = table.view();
        const auto unseen_code = [&](double code) { return known.entry(code) == 0.0; };
        constexpr Eigen::Index kSlab = 256;
        double seen_here[kSlab];
        for (Eigen::Index first = 0; first < rows; first += kSlab) {
          const Eigen::Index m = std::min(kSlab, rows - first);
          const double* code = v + first;
          for (Eigen::Index r = 0; r < m; ++r) seen_here[r] = known.entry(code[r]);
          const std::uint8_t* ok = valid + first;
          std::uint8_t* f = flags + first;
          unsigned char any = 0;
          for (Eigen::Index r = 0; r < m; ++r) {
            const unsigned unseen = static_cast<unsigned>(seen_here[r] == 0.0) & static_cast<unsigned>(ok[r] != 0);
            f[r] |= static_cast<std::uint8_t>(unseen * flag::unseen_level);
            any |= static_cast<unsigned char>(unseen);
          }
          if (any) count_unseen(c, code, m, ok, unseen_code, tally);
        }
        continue;
      }
      // Class rasters come in runs of one class: the last code's verdict is remembered (NaN, the
      // start value, equals nothing).
      double last_code = std::numeric_limits<double>::quiet_NaN();
      bool last_unseen = false;
      for (Eigen::Index r = 0; r < rows; ++r) {
        if (!valid[r]) continue;
        const double code = v[r];
        if (code != last_code) {
          last_unseen = is_unseen(code);
          last_code = code;
        }
        if (last_unseen) flags[r] |= flag::unseen_level;
      }
      count_unseen(c, v, rows, valid, is_unseen, tally);
    } else {
      const double lo = flag_limits_[c].first;
      const double hi = flag_limits_[c].second;
      const std::uint8_t bit = offset_only_[c] ? std::uint8_t{0} : flag::outside_range;
      // Without branches, so that the loop vectorises (both comparisons are always made: & rather
      // than &&, since a condition on a comparison is control flow, which stops the vectoriser).
      // Invalid pixels hold flag::nodata, all bits set, which OR leaves as it is; they are not
      // counted. A value both below lo and above hi (limits crossed by a spline's knots) counts as
      // below, as it always has.
      std::int64_t below = 0, above = 0;
      for (Eigen::Index r = 0; r < rows; ++r) {
        const unsigned ok = valid[r] != 0;
        const unsigned is_below = v[r] < lo;
        const unsigned is_above = static_cast<unsigned>(v[r] > hi) & (is_below ^ 1u);
        flags[r] |= static_cast<std::uint8_t>((is_below | is_above) * bit);
        below += ok & is_below;
        above += ok & is_above;
      }
      tally.below[c] += below;
      tally.above[c] += above;
    }
  }
}

HABCAST_PIXEL_LOOPS void TrainingDomain::count_causes(Eigen::Index rows, const std::uint8_t* valid,
                                                      const std::uint8_t* flags, DomainTally& tally) {
  // Counted without branches (flags of valid pixels hold only the cause bits), one sum per bit
  // so that the loop vectorises.
  std::int64_t checked = 0, flagged = 0;
  std::int64_t cause[flag::cause_count] = {};
  for (Eigen::Index r = 0; r < rows; ++r) {
    const unsigned ok = valid[r] != 0;
    const unsigned f = flags[r] & (0u - ok);  // a mask, not a condition: see flag()
    checked += ok;
    flagged += f != 0 ? 1 : 0;
    cause[0] += f & 1u;
    cause[1] += (f >> 1) & 1u;
    cause[2] += (f >> 2) & 1u;
    cause[3] += (f >> 3) & 1u;
    cause[4] += (f >> 4) & 1u;
  }
  static_assert(flag::cause_count == 5, "one sum per cause bit above");
  tally.checked += checked;
  tally.flagged += flagged;
  for (int b = 0; b < flag::cause_count; ++b) tally.cause[b] += cause[b];
}

}  // namespace habcast
