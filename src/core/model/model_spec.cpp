#include "core/model/model_spec.hpp"

#include <algorithm>
#include <cmath>

namespace habcast {

int Covariate::level_index(std::int64_t code) const {
  for (std::size_t i = 0; i < levels.size(); ++i)
    if (levels[i].code == code) return static_cast<int>(i);
  return -1;
}

int ModelSpec::covariate_index(const std::string& covariate_name) const {
  for (std::size_t i = 0; i < covariates.size(); ++i)
    if (covariates[i].name == covariate_name) return static_cast<int>(i);
  return -1;
}

std::size_t ModelSpec::continuous_count() const {
  return static_cast<std::size_t>(
      std::count_if(covariates.begin(), covariates.end(), [](const Covariate& c) { return !c.categorical; }));
}

const char* to_string(Family family) {
  switch (family) {
    case Family::binomial: return "binomial";
    case Family::poisson: return "poisson";
    case Family::gaussian: return "gaussian";
  }
  return "?";
}

const char* to_string(Link link) {
  switch (link) {
    case Link::logit: return "logit";
    case Link::probit: return "probit";
    case Link::cloglog: return "cloglog";
    case Link::log: return "log";
    case Link::identity: return "identity";
  }
  return "?";
}

const char* to_string(PointSampling sampling) {
  return sampling == PointSampling::bilinear ? "bilinear" : "pixel";
}

const char* to_string(Transform transform) {
  switch (transform) {
    case Transform::none: return "none";
    case Transform::log: return "log";
    case Transform::log1p: return "log1p";
    case Transform::sqrt: return "sqrt";
  }
  return "?";
}

std::string response_description(const ModelSpec& spec) {
  const std::string of = spec.response.empty() ? "" : " of " + spec.response;
  switch (spec.family) {
    case Family::binomial: return "predicted probability" + of;
    case Family::poisson: return "predicted expected count" + of;
    case Family::gaussian: return "predicted mean" + of;
  }
  return "prediction";
}

}  // namespace habcast
