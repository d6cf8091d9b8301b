#include "core/model/model_spec.hpp"

#include <algorithm>
#include <charconv>
#include <cmath>

namespace habcast {

int Covariate::level_index(std::int64_t code) const {
  for (std::size_t i = 0; i < levels.size(); ++i)
    if (levels[i].code == code) return static_cast<int>(i);
  return -1;
}

std::optional<std::int64_t> code_in_text(const std::string& text) {
  const char* first = text.data();
  const char* last = text.data() + text.size();
  if (first != last && *first == '+') ++first;
  double value = 0.0;
  const auto [ptr, ec] = std::from_chars(first, last, value);
  if (first == last || ec != std::errc() || ptr != last) return std::nullopt;
  return level_code(value);
}

LevelLookup Covariate::find_level(const std::string& text) const {
  LevelLookup found;
  for (std::size_t i = 0; i < levels.size(); ++i)
    if (levels[i].name == text) found.by_name = static_cast<int>(i);
  if (const std::optional<std::int64_t> code = code_in_text(text)) found.by_code = level_index(*code);
  if (!found.ambiguous()) found.index = found.by_name >= 0 ? found.by_name : found.by_code;
  return found;
}

std::string LevelLookup::ambiguity(const Covariate& c, const std::string& text) const {
  if (!ambiguous()) return "";
  const Level& named = c.levels[static_cast<std::size_t>(by_name)];
  const Level& coded = c.levels[static_cast<std::size_t>(by_code)];
  return "\"" + text + "\" could mean two levels of \"" + c.name + "\": the level named \"" + named.name + "\" (code " +
         std::to_string(named.code) + ") or the level with code " + std::to_string(coded.code) + " (named \"" +
         coded.name + "\"). Give the levels names that are not another level's code (an integer name is best "
         "written with the same code, as habcast's exporters do)";
}

std::string Covariate::level_list() const {
  std::string s;
  for (const Level& l : levels) s += (s.empty() ? "" : ", ") + l.name + " (code " + std::to_string(l.code) + ")";
  return s;
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
