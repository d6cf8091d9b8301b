// Per-stage cost of predict's computation (not a test): nanoseconds per pixel per core for each
// step from covariate values to outputs, single-threaded, on blocks already in memory, so that
// neither decoding nor encoding nor the other threads enter the figures.
//
//   habcast_stage_cost MODEL.toml [--pixels N] [--reps R] [--json] [--count STAGE]
//
// MODEL.toml is bench/make_stack.py's model (its rasters and training table). N pixels (default
// 1,048,576) are read from a band of full rows in the middle of the stack, which holds both
// pixels inside and outside the training domain, in blocks of about 64k pixels. Every stage is run
// R times (default 15) over all blocks and timed per call in thread CPU time; reported are the sum
// over calls of each call's MINIMUM over the repetitions, and the median of the repetitions' sums:
// on a loaded machine the minimum is what the code costs, the rest is other programs. Each stage runs the product's own code (Evaluator's stages, TermPlan,
// TrainingDomain, NoveltyModel, BlockPredictor).
//
// --count STAGE runs one repetition and brackets only that stage's calls with callgrind's
// collection toggle, for instruction counts that do not depend on load:
//   valgrind --tool=callgrind --collect-atstart=no --callgrind-out-file=/dev/null
//            habcast_stage_cost MODEL.toml --pixels 262144 --count eta+se
// and divide "Collected" by the pixel count (bench/run.py --stages does this for every stage).
#include <Eigen/Core>
#include <algorithm>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <ctime>
#include <functional>
#include <map>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#if __has_include(<valgrind/callgrind.h>)
#include <valgrind/callgrind.h>
#define HABCAST_TOGGLE_COLLECT() CALLGRIND_TOGGLE_COLLECT
#else
#define HABCAST_TOGGLE_COLLECT() ((void)0)
#endif

#include "core/domain/novelty_model.hpp"
#include "core/domain/training_domain.hpp"
#include "core/domain/training_samples.hpp"
#include "core/model/evaluator.hpp"
#include "core/model/model_file.hpp"
#include "core/model/model_values.hpp"
#include "core/model/term_plan.hpp"
#include "core/prediction/block_predictor.hpp"
#include "raster/covariate_reader.hpp"
#include "raster/gdal_session.hpp"
#include "raster/raster_grid.hpp"

namespace {

using namespace habcast;
using Clock = std::chrono::steady_clock;

struct Block {
  Eigen::ArrayXXd raw;
  std::vector<std::uint8_t> valid;
  Eigen::Index rows = 0;
};

// Stage names, in the order they are printed. "model" is what the issue calls the model: prediction,
// standard error, limits, outputs and range flags (BlockPredictor with range checks only).
const std::vector<std::string> kStages = {"values", "design", "eta+se", "links", "range",
                                          "model",  "mess",   "nt2",   "hull", "pairs", "checks"};

// Thread CPU time, not wall time: on a shared machine the wall clock also counts the time this
// thread waits for a core.
double cpu_seconds() {
  timespec t{};
  clock_gettime(CLOCK_THREAD_CPUTIME_ID, &t);
  return static_cast<double>(t.tv_sec) + 1e-9 * static_cast<double>(t.tv_nsec);
}

struct Timer {
  const std::string* counting = nullptr;  // stage whose calls callgrind counts, or null
  std::map<std::string, std::vector<double>> calls;  // per stage: seconds of each call, in call order
  void run(const std::string& stage, const std::function<void()>& f) {
    const bool count = counting && *counting == stage;
    if (count) HABCAST_TOGGLE_COLLECT();
    const double t0 = cpu_seconds();
    f();
    calls[stage].push_back(cpu_seconds() - t0);
    if (count) HABCAST_TOGGLE_COLLECT();
  }
};

NoveltyOptions only(bool mess, bool nt2, bool hull, bool pairs) {
  NoveltyOptions o;
  o.mess = mess;
  o.nt2 = nt2;
  o.hull = hull;
  o.pairs = pairs;
  return o;
}

}  // namespace

int main(int argc, char** argv) {
  if (argc < 2) {
    std::fprintf(stderr, "usage: habcast_stage_cost MODEL.toml [--pixels N] [--reps R] [--json] [--count STAGE]\n");
    return 2;
  }
  std::int64_t pixels = 1 << 20;
  int reps = 15;
  bool json = false;
  std::string count_stage;
  for (int a = 2; a < argc; ++a) {
    const std::string arg = argv[a];
    if (arg == "--pixels" && a + 1 < argc) pixels = std::atoll(argv[++a]);
    else if (arg == "--reps" && a + 1 < argc) reps = std::atoi(argv[++a]);
    else if (arg == "--json") json = true;
    else if (arg == "--count" && a + 1 < argc) count_stage = argv[++a];
    else {
      std::fprintf(stderr, "unknown argument %s\n", arg.c_str());
      return 2;
    }
  }
  if (!count_stage.empty()) {
    if (std::find(kStages.begin(), kStages.end(), count_stage) == kStages.end()) {
      std::fprintf(stderr, "unknown stage %s\n", count_stage.c_str());
      return 2;
    }
    reps = 1;
  }

  ensure_gdal();
  const ModelSpec spec = read_model_file(argv[1]);
  const TermPlan plan(spec);
  const TrainingSamples samples = read_training_samples(spec);
  const TrainingDomain domain(spec, samples);
  const std::size_t k = spec.covariates.size();

  // A band of full rows in the middle of the stack, cut into blocks of about 64k pixels.
  std::vector<CovariateReader> readers;
  for (const Covariate& c : spec.covariates) readers.emplace_back(*c.raster, c.band);
  const RasterGrid grid = read_grid(*spec.covariates.front().raster, spec.covariates.front().band);
  const int band_rows = static_cast<int>(std::min<std::int64_t>(grid.height, (pixels + grid.width - 1) / grid.width));
  const int rows_per_block = std::max(1, 65536 / grid.width);
  std::vector<Block> blocks;
  std::int64_t total = 0;
  for (int y = (grid.height - band_rows) / 2, end = y + band_rows; y < end; y += rows_per_block) {
    const Window w{0, y, grid.width, std::min(rows_per_block, end - y)};
    Block b;
    b.rows = static_cast<Eigen::Index>(w.pixels());
    b.raw.resize(b.rows, static_cast<Eigen::Index>(k));
    b.valid.assign(static_cast<std::size_t>(b.rows), 1);
    for (std::size_t c = 0; c < k; ++c) readers[c].read(w, b.raw.col(static_cast<Eigen::Index>(c)).data(), b.valid.data());
    total += b.rows;
    blocks.push_back(std::move(b));
  }

  const Evaluator evaluator(spec, 0.95);
  const NoveltyModel mess(spec, plan, samples, only(true, false, false, false));
  const NoveltyModel nt2(spec, plan, samples, only(false, true, false, false));
  const NoveltyModel hull(spec, plan, samples, only(false, false, true, false));
  const NoveltyModel pairs(spec, plan, samples, only(false, false, false, true));
  const NoveltyModel checks(spec, plan, samples, NoveltyOptions{});
  BlockPredictor model(spec, plan, evaluator, &domain, nullptr);

  std::map<std::string, std::vector<double>> per_rep;     // per stage: seconds of each repetition
  std::map<std::string, std::vector<double>> fastest;     // per stage: each call's minimum over repetitions
  ModelValues values;
  Eigen::MatrixXd X;
  Eigen::VectorXd offset;
  Prediction prediction;
  std::vector<std::uint8_t> ok, flags;
  BlockOutputs outputs;
  NoveltyBlock novelty;
  for (int rep = 0; rep < reps; ++rep) {
    Timer timer;
    timer.counting = count_stage.empty() ? nullptr : &count_stage;
    for (const Block& b : blocks) {
      // The evaluation chain, chunk by chunk as BlockPredictor runs it.
      ok.assign(b.valid.begin(), b.valid.end());
      for (Eigen::Index first = 0; first < b.rows; first += BlockPredictor::kChunk) {
        const Eigen::Index n = std::min(BlockPredictor::kChunk, b.rows - first);
        std::uint8_t* chunk_ok = ok.data() + first;
        ModelValueCounts counts;
        timer.run("values", [&] { to_model_values(spec, plan, b.raw, first, n, values, chunk_ok, counts); });
        timer.run("design", [&] {
          plan.size_design(BlockPredictor::kChunk, X);
          plan.fill(values, n, X, chunk_ok);
          if (plan.offset_term()) plan.fill_offset(values, n, offset, chunk_ok);  // as BlockPredictor::chunk
        });
        timer.run("eta+se", [&] { evaluator.linear_predictor(X, n, offset, prediction); });
        timer.run("links", [&] { evaluator.response(n, prediction); });
      }
      PredictionTally tally(k);
      flags.resize(static_cast<std::size_t>(b.rows));
      timer.run("range", [&] {
        domain.flag(b.raw, b.rows, b.valid.data(), flags.data(), tally.domain);
        TrainingDomain::count_causes(b.rows, b.valid.data(), flags.data(), tally.domain);
      });
      timer.run("model", [&] { model.run(b.raw, b.valid, b.rows, outputs, tally); });
      // Each joint check on the range flags, as BlockPredictor calls it (the flags are reset
      // each time: the checks add bits).
      const auto check = [&](const std::string& stage, const NoveltyModel& m) {
        domain.flag(b.raw, b.rows, b.valid.data(), flags.data(), tally.domain);
        timer.run(stage, [&] { m.check(b.raw, b.rows, b.valid.data(), flags.data(), novelty, tally.domain); });
      };
      check("mess", mess);
      check("nt2", nt2);
      check("hull", hull);
      check("pairs", pairs);
      check("checks", checks);
    }
    for (const auto& [stage, calls] : timer.calls) {
      double sum = 0.0;
      for (double c : calls) sum += c;
      per_rep[stage].push_back(sum);
      std::vector<double>& best = fastest[stage];
      if (best.empty()) best = calls;
      for (std::size_t i = 0; i < calls.size(); ++i) best[i] = std::min(best[i], calls[i]);
    }
  }

  const auto ns = [&](double s) { return 1e9 * s / static_cast<double>(total); };
  if (!count_stage.empty()) {
    std::printf("counted stage %s over %lld pixels\n", count_stage.c_str(), static_cast<long long>(total));
    return 0;
  }
  if (json) std::printf("{\"pixels\": %lld, \"reps\": %d, \"terms\": %lld, \"stages\": {", static_cast<long long>(total),
                        reps, static_cast<long long>(plan.term_count()));
  else
    std::printf("%lld pixels, %d repetitions, %lld terms; ns per pixel, one core\n%-8s %8s %8s\n",
                static_cast<long long>(total), reps, static_cast<long long>(plan.term_count()), "stage", "min",
                "median");
  bool first = true;
  for (const std::string& stage : kStages) {
    auto it = per_rep.find(stage);
    if (it == per_rep.end()) continue;
    std::vector<double> v = it->second;
    std::sort(v.begin(), v.end());
    double best = 0.0;
    for (double c : fastest[stage]) best += c;
    const double lo = ns(best), median = ns(v[v.size() / 2]);
    if (json) std::printf("%s\"%s\": {\"min_ns\": %.2f, \"median_ns\": %.2f}", first ? "" : ", ", stage.c_str(), lo, median);
    else std::printf("%-8s %8.1f %8.1f\n", stage.c_str(), lo, median);
    first = false;
  }
  if (json) std::printf("}}\n");
  return 0;
}
