#include "core/model/model_values.hpp"

#include <cmath>
#include <limits>

#include "core/base/pixel_loops.hpp"
#include "core/model/code_table.hpp"

namespace habcast {

double model_value(const Covariate& c, double raw) {
  double t = raw;
  switch (c.transform) {
    case Transform::none: break;
    case Transform::log: t = raw > 0.0 ? std::log(raw) : std::numeric_limits<double>::quiet_NaN(); break;
    case Transform::log1p: t = raw > -1.0 ? std::log1p(raw) : std::numeric_limits<double>::quiet_NaN(); break;
    case Transform::sqrt: t = raw >= 0.0 ? std::sqrt(raw) : std::numeric_limits<double>::quiet_NaN(); break;
  }
  return (t - c.center) / c.scale;
}

double raw_value(const Covariate& c, double value) {
  const double t = value * c.scale + c.center;
  switch (c.transform) {
    case Transform::none: return t;
    case Transform::log: return std::exp(t);
    case Transform::log1p: return std::expm1(t);
    case Transform::sqrt: return t * t;
  }
  return t;
}

HABCAST_PIXEL_LOOPS void to_model_values(const ModelSpec& spec, const TermPlan& plan, const Eigen::ArrayXXd& raw, Eigen::Index first,
                     Eigen::Index rows, ModelValues& out, std::uint8_t* predict_valid, ModelValueCounts& counts) {
  const Eigen::Index k = static_cast<Eigen::Index>(spec.covariates.size());
  if (out.rows() < rows || out.cols() != k) out.resize(rows, k);
  for (Eigen::Index c = 0; c < k; ++c) {
    const Covariate& cov = spec.covariates[static_cast<std::size_t>(c)];
    const double* in = raw.col(c).data() + first;
    double* dst = out.col(c).data();
    const bool used = plan.uses_covariate(static_cast<int>(c));
    if (cov.categorical && plan.level_table(static_cast<int>(c)).usable()) {
      // Codes looked up in the plan's table, without branches, so that the loops vectorise (the
      // same level as level_index(level_code(code))): first the levels alone (GCC 12 vectorises the
      // table's gather only in a loop without bytes), then the validity. As for continuous
      // covariates below, lost pixels (an unknown level of a covariate the model uses) are counted
      // only when there are any.
      const CodeTable::View levels = plan.level_table(static_cast<int>(c)).view();
      for (Eigen::Index i = 0; i < rows; ++i) dst[i] = levels.entry(in[i]);
      const bool lose = used;
      unsigned char any_lost = 0;
      for (Eigen::Index i = 0; i < rows; ++i) {
        const double level = dst[i];
        const bool valid = predict_valid[i] != 0;
        dst[i] = valid ? level : 0.0;
        const bool lost = valid & (level < 0.0) & lose;
        any_lost |= static_cast<unsigned char>(lost);
        predict_valid[i] = static_cast<std::uint8_t>(valid & !lost);
      }
      if (any_lost)
        for (Eigen::Index i = 0; i < rows; ++i) counts.unknown_level += dst[i] < 0.0 ? 1 : 0;
    } else if (cov.categorical) {
      // Codes spanning too many whole numbers for a table. Class rasters come in runs of one class,
      // so the last code's level is remembered (NaN, the start value, equals nothing, and nodata
      // pixels never get here).
      double last_code = std::numeric_limits<double>::quiet_NaN();
      int last_level = -1;
      for (Eigen::Index i = 0; i < rows; ++i) {
        if (!predict_valid[i]) {
          dst[i] = 0.0;
          continue;
        }
        const double code = in[i];
        if (code != last_code) {
          const std::optional<std::int64_t> whole = level_code(code);
          last_level = whole ? cov.level_index(*whole) : -1;
          last_code = code;
        }
        const int level = last_level;
        dst[i] = static_cast<double>(level);
        if (level < 0 && used) {
          predict_valid[i] = 0;
          ++counts.unknown_level;
        }
      }
    } else if (cov.transform == Transform::none) {
      // The common case without branches, so the loop vectorises: the same value as model_value().
      // A pixel is lost where a valid raw value has no finite model value (a value near the
      // largest double over a small scale), which is rare. The loop marks a lost pixel's model
      // value NaN and notes whether there was any; only then are they counted and set to 0 (a
      // count per pixel, widened from the flag bytes, costs more than the rest of the loop).
      const double center = cov.center, scale = cov.scale;
      const double lost_mark = used ? std::numeric_limits<double>::quiet_NaN() : 0.0;
      const bool lose = used;
      unsigned char any_lost = 0;
      for (Eigen::Index i = 0; i < rows; ++i) {
        const double m = (in[i] - center) / scale;
        const bool finite = std::isfinite(m);
        const bool valid = predict_valid[i] != 0;
        dst[i] = valid & finite ? m : (valid ? lost_mark : 0.0);
        const bool lost = valid & !finite & lose;
        any_lost |= static_cast<unsigned char>(lost);
        predict_valid[i] = static_cast<std::uint8_t>(valid & !lost);
      }
      if (any_lost)
        for (Eigen::Index i = 0; i < rows; ++i)
          if (std::isnan(dst[i])) {
            dst[i] = 0.0;
            ++counts.outside_transform;
          }
    } else {
      for (Eigen::Index i = 0; i < rows; ++i) {
        if (!predict_valid[i]) {
          dst[i] = 0.0;
          continue;
        }
        dst[i] = model_value(cov, in[i]);
        if (!std::isfinite(dst[i])) {
          dst[i] = 0.0;
          if (used) {
            predict_valid[i] = 0;
            ++counts.outside_transform;
          }
        }
      }
    }
  }
}

}  // namespace habcast
