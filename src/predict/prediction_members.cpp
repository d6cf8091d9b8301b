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
                           const AlignmentPlan& alignment, double level, double quantum, bool member_arrays)
    : members_(members), sources_(sources), missing_(sources.sources.size(), 0) {
  for (std::size_t s = 0; s < sources.sources.size(); ++s) readers_.push_back(open_covariate_source(alignment, s));
  for (const PredictionMember& m : members) {
    evaluators_.push_back(std::make_unique<Evaluator>(*m.spec, level, quantum));
    evaluators_.back()->set_limits(member_arrays);
    predictors_.push_back(std::make_unique<BlockPredictor>(*m.spec, *m.plan, *evaluators_.back(), m.domain, m.novelty));
    predictors_.back()->set_arrays(member_arrays);
  }
  for (std::size_t m = 0; m < members.size(); ++m) {
    std::size_t stack = 0;
    while (stack < stack_member_.size() && sources.of_member[stack_member_[stack]] != sources.of_member[m]) ++stack;
    if (stack == stack_member_.size()) stack_member_.push_back(m);
    stack_of_.push_back(stack);
    std::size_t from = m;
    for (std::size_t e = 0; e < m && from == m; ++e)
      if (checks_from_[e] == e && stack_of_[e] == stack && predictors_[m]->can_share_checks(*predictors_[e])) from = e;
    checks_from_.push_back(from);
    checks_kept_.push_back(false);
    if (from != m) checks_kept_[from] = true;
    values_from_.push_back(m);
    for (std::size_t e = 0; e < m && values_from_[m] == m; ++e)
      if (values_from_[e] == e && stack_of_[e] == stack && predictors_[m]->can_share_values(*predictors_[e])) {
        values_from_[m] = e;
        predictors_[m]->take_values_from(predictors_[e].get());
      }
  }
  // A stack that reads every source in source order is the decoded window itself: no copy.
  for (const std::size_t first : stack_member_) {
    const std::vector<std::size_t>& of = sources.of_member[first];
    bool identity = of.size() == sources.sources.size();
    for (std::size_t c = 0; c < of.size() && identity; ++c) identity = of[c] == c;
    stack_is_decoded_.push_back(identity);
  }
  source_valid_.resize(sources.sources.size());
  raw_.resize(stack_member_.size());
  valid_.resize(stack_member_.size());
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
  for (std::size_t j = 0; j < stack_member_.size(); ++j) {
    const std::vector<std::size_t>& of = sources_.of_member[stack_member_[j]];
    if (!stack_is_decoded_[j]) raw_[j].resize(n, static_cast<Eigen::Index>(of.size()));
    valid_[j].assign(un, 1);
    for (std::size_t c = 0; c < of.size(); ++c) {
      if (!stack_is_decoded_[j]) raw_[j].col(static_cast<Eigen::Index>(c)) = decoded_.col(static_cast<Eigen::Index>(of[c]));
      const std::vector<std::uint8_t>& sv = source_valid_[of[c]];
      for (std::size_t i = 0; i < un; ++i) valid_[j][i] &= sv[i];
    }
  }
  for (std::size_t m = 0; m < members; ++m) {
    tallies.emplace_back(members_[m].spec->covariates.size());
    const std::size_t from = checks_from_[m];
    const SharedChecks shared{&outputs[from], &tallies[from].domain, members_[from].novelty};
    const std::size_t j = stack_of_[m];
    outputs[m].novelty.keep_pairs = checks_kept_[m];
    predictors_[m]->begin(stack_is_decoded_[j] ? decoded_ : raw_[j], valid_[j], n, outputs[m], tallies[m], nullptr,
                          from == m ? nullptr : &shared);
  }
  for (Eigen::Index first = 0; first < n; first += BlockPredictor::kChunk) {
    const Eigen::Index rows = std::min(BlockPredictor::kChunk, n - first);
    for (std::size_t m = 0; m < members; ++m) predictors_[m]->chunk(first, rows, outputs[m], tallies[m]);
    combine(first, rows);
  }
  for (auto& p : predictors_) p->end();
}

}  // namespace habcast
