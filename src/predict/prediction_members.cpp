#include "predict/prediction_members.hpp"

#include <algorithm>
#include <filesystem>
#include <map>

#include "core/base/error.hpp"
#include "pipeline/resource_limits.hpp"

namespace habcast {

MemberSources::MemberSources(const std::vector<PredictionMember>& members) {
  std::map<std::pair<std::string, int>, std::size_t> index;
  std::vector<std::string> first_reader;  // per source: "covariate X of MODEL", for messages
  for (const PredictionMember& m : members) {
    std::vector<std::size_t> mine;
    for (std::size_t c = 0; c < m.inputs.size(); ++c) {
      const CovariateInput& in = m.inputs[c];
      const Covariate& covariate = m.spec->covariates[c];
      const std::string reader = "covariate " + covariate.name + " of " + m.spec->path;
      const auto key = std::make_pair(std::filesystem::path(in.path).lexically_normal().string(), in.band);
      auto it = index.find(key);
      if (it == index.end()) {
        it = index.emplace(key, sources.size()).first;
        sources.push_back(in);
        alignment_inputs.push_back({in.name, in.path, in.band, covariate.categorical, covariate.resampling});
        first_reader.push_back(reader);
      } else {
        const AlignmentInput& seen = alignment_inputs[it->second];
        if (seen.categorical != covariate.categorical || seen.resampling != covariate.resampling)
          throw InputError(in.path + " is read as " + first_reader[it->second] + " (" +
                           (seen.categorical ? "categorical" : "continuous") + ", resampling " +
                           (seen.resampling ? to_string(*seen.resampling) : std::string("by the default rule")) +
                           ") and as " + reader + " (" + (covariate.categorical ? "categorical" : "continuous") +
                           ", resampling " +
                           (covariate.resampling ? to_string(*covariate.resampling) : std::string("by the default rule")) +
                           "); one raster must be aligned one way: make the two covariates' declarations agree");
      }
      mine.push_back(it->second);
    }
    of_member.push_back(std::move(mine));
  }
}

AlignmentPlan MemberSources::align(const AlignmentOptions& options) const {
  AlignmentPlan plan = plan_alignment(alignment_inputs, options);
  check_raster_size(sources.front().path, plan.target);
  return plan;
}

std::pair<AlignmentPlan, std::vector<std::int64_t>> members_alignment(const AlignmentPlan& plan,
                                                                      const MemberSources& sources,
                                                                      const std::vector<std::size_t>& members,
                                                                      const std::vector<std::int64_t>& missing) {
  std::vector<bool> used(sources.sources.size(), false);
  for (const std::size_t m : members)
    for (const std::size_t s : sources.of_member[m]) used[s] = true;
  std::pair<AlignmentPlan, std::vector<std::int64_t>> part{plan, {}};
  part.first.covariates.clear();
  for (std::size_t s = 0; s < used.size(); ++s) {
    if (!used[s]) continue;
    part.first.covariates.push_back(plan.covariates[s]);
    part.second.push_back(missing[s]);
  }
  return part;
}

MemberWindow::MemberWindow(const std::vector<PredictionMember>& members, const MemberSources& sources,
                           const AlignmentPlan& alignment, double level, double quantum)
    : members_(members), sources_(sources), missing_(sources.sources.size(), 0) {
  for (std::size_t s = 0; s < sources.sources.size(); ++s) readers_.push_back(open_covariate_source(alignment, s));
  for (const PredictionMember& m : members) {
    evaluators_.push_back(std::make_unique<Evaluator>(*m.spec, level, quantum));
    predictors_.push_back(std::make_unique<BlockPredictor>(*m.spec, *m.plan, *evaluators_.back(), m.domain, m.novelty));
  }
  source_valid_.resize(sources.sources.size());
  raw_.resize(members.size());
  valid_.resize(members.size());
}

void MemberWindow::run(const Window& window, std::vector<BlockOutputs>& outputs, std::vector<PredictionTally>& tallies,
                       const std::function<void(Eigen::Index, Eigen::Index)>& combine) {
  const Eigen::Index n = static_cast<Eigen::Index>(window.pixels());
  const auto un = static_cast<std::size_t>(n);
  decoded_.resize(n, static_cast<Eigen::Index>(sources_.sources.size()));
  for (std::size_t s = 0; s < sources_.sources.size(); ++s) {
    source_valid_[s].assign(un, 1);
    missing_[s] += readers_[s]->read(window, decoded_.col(static_cast<Eigen::Index>(s)).data(), source_valid_[s].data());
  }
  const std::size_t members = members_.size();
  outputs.resize(members);
  tallies.clear();
  for (std::size_t m = 0; m < members; ++m) {
    const std::size_t k = members_[m].spec->covariates.size();
    tallies.emplace_back(k);
    raw_[m].resize(n, static_cast<Eigen::Index>(k));
    valid_[m].assign(un, 1);
    for (std::size_t c = 0; c < k; ++c) {
      const std::size_t s = sources_.of_member[m][c];
      raw_[m].col(static_cast<Eigen::Index>(c)) = decoded_.col(static_cast<Eigen::Index>(s));
      const std::vector<std::uint8_t>& sv = source_valid_[s];
      for (std::size_t i = 0; i < un; ++i) valid_[m][i] &= sv[i];
    }
    predictors_[m]->begin(raw_[m], valid_[m], n, outputs[m], tallies[m]);
  }
  for (Eigen::Index first = 0; first < n; first += BlockPredictor::kChunk) {
    const Eigen::Index rows = std::min(BlockPredictor::kChunk, n - first);
    for (std::size_t m = 0; m < members; ++m) predictors_[m]->chunk(first, rows, outputs[m], tallies[m]);
    combine(first, rows);
  }
  for (auto& p : predictors_) p->end();
}

}  // namespace habcast
