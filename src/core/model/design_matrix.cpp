#include "core/model/design_matrix.hpp"

#include <cmath>
#include <sstream>

#include "core/base/error.hpp"
#include "core/model/model_values.hpp"
#include "core/model/term_plan.hpp"

namespace habcast {

Design build_design(const ModelSpec& spec, const Eigen::ArrayXXd& raw) {
  const TermPlan plan(spec);
  const Eigen::Index n = raw.rows();
  Design d;
  d.usable.assign(static_cast<std::size_t>(n), 1);
  for (Eigen::Index i = 0; i < n; ++i)
    for (Eigen::Index c = 0; c < raw.cols(); ++c)
      if (std::isnan(raw(i, c)) && plan.uses_covariate(static_cast<int>(c)) && d.usable[static_cast<std::size_t>(i)]) {
        d.usable[static_cast<std::size_t>(i)] = 0;
        ++d.missing;
      }
  ModelValues values;
  ModelValueCounts counts;
  to_model_values(spec, plan, raw, 0, n, values, d.usable.data(), counts);
  d.outside_transform = counts.outside_transform + counts.unknown_level;
  d.undefined_term = plan.fill(values, n, d.X, d.usable.data());
  d.offset.resize(n);
  plan.fill_offset(values, n, d.offset, d.usable.data());
  d.offset.array() += spec.offset_constant;
  return d;
}

void standardise_covariates(ModelSpec& spec, const Eigen::ArrayXXd& raw, const std::vector<std::uint8_t>& use) {
  for (std::size_t c = 0; c < spec.covariates.size(); ++c) {
    Covariate& cov = spec.covariates[c];
    if (cov.categorical) continue;
    cov.center = 0.0;
    cov.scale = 1.0;
    double sum = 0.0;
    double count = 0.0;
    for (Eigen::Index i = 0; i < raw.rows(); ++i) {
      const double t = model_value(cov, raw(i, static_cast<Eigen::Index>(c)));
      if (use[static_cast<std::size_t>(i)] && std::isfinite(t)) {
        sum += t;
        count += 1.0;
      }
    }
    if (count < 2.0) continue;
    const double mean = sum / count;
    double ss = 0.0;
    for (Eigen::Index i = 0; i < raw.rows(); ++i) {
      const double t = model_value(cov, raw(i, static_cast<Eigen::Index>(c)));
      if (use[static_cast<std::size_t>(i)] && std::isfinite(t)) ss += (t - mean) * (t - mean);
    }
    const double sd = std::sqrt(ss / (count - 1.0));
    if (!(sd > 1e-12 * std::max(1.0, std::fabs(mean)))) {
      std::ostringstream os;
      os.precision(10);
      os << "covariate \"" << cov.name << "\" is constant (" << raw_value(cov, mean) << ") at all "
         << static_cast<long long>(count) << " usable observations, so its effect cannot be estimated; drop it from "
         << "the formula, or add observations where it varies";
      throw InputError(os.str());
    }
    cov.center = mean;
    cov.scale = sd;
  }
}

}  // namespace habcast
