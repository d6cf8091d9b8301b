#include "predict/prediction_members.hpp"

#include <algorithm>
#include <filesystem>
#include <map>

#include "pipeline/resource_limits.hpp"

namespace habcast {

MemberSources::MemberSources(const std::vector<PredictionMember>& members) {
  std::map<std::pair<std::string, int>, std::size_t> index;
  for (const PredictionMember& m : members) {
    std::vector<std::size_t> mine;
    for (const CovariateInput& in : m.inputs) {
      const auto key = std::make_pair(std::filesystem::path(in.path).lexically_normal().string(), in.band);
      auto it = index.find(key);
      if (it == index.end()) {
        it = index.emplace(key, sources.size()).first;
        sources.push_back(in);
      }
      mine.push_back(it->second);
    }
    of_member.push_back(std::move(mine));
  }
}

RasterGrid MemberSources::check_co_registered() const {
  const RasterGrid reference = read_grid(sources.front().path, sources.front().band);
  check_raster_size(sources.front().path, reference);
  for (std::size_t i = 1; i < sources.size(); ++i)
    check_same_grid(sources.front().path, reference, sources[i].path, read_grid(sources[i].path, sources[i].band));
  return reference;
}

MemberWindow::MemberWindow(const std::vector<PredictionMember>& members, const MemberSources& sources, double level,
                           double quantum)
    : members_(members), sources_(sources) {
  for (const CovariateInput& in : sources.sources) readers_.emplace_back(in.path, in.band);
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
    readers_[s].read(window, decoded_.col(static_cast<Eigen::Index>(s)).data(), source_valid_[s].data());
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
