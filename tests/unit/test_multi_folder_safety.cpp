// Runs that write several predictions at once (scenarios, model sets) keep predict's promises
// (docs/limits.md): no output may be, or replace, one of the run's inputs; and the whole tree of
// folders changes as one set. A fault injected before each filesystem call of the commit stands
// in for a SIGKILL at that instant; after every one, once the next run has looked at the folder,
// it holds the complete old tree or the complete new tree. Deterministic: every step is hit.
#include <catch2/catch.hpp>
#include <filesystem>
#include <map>
#include <string>
#include <vector>

#include "pipeline/folder_lock.hpp"
#include "pipeline/output_folder.hpp"
#include "pipeline/output_set.hpp"
#include "predict/scenario_run.hpp"
#include "predict/scenario_set.hpp"
#include "raster_test_support.hpp"
#include "test_support.hpp"

namespace {

namespace fs = std::filesystem;
using Catch::Matchers::Contains;
using habcast::test::read_text;
using habcast::test::TempDir;
using habcast::test::write_text;
using Tree = std::map<std::string, std::string>;  ///< relative path -> bytes

/// Every file under `folder` but lock files (a killed run's lock died with it).
Tree tree_of(const std::string& folder) {
  Tree files;
  if (!fs::exists(folder)) return files;
  for (const auto& entry : fs::recursive_directory_iterator(folder)) {
    if (!entry.is_regular_file() || entry.path().filename() == habcast::kLockFileName) continue;
    files[fs::relative(entry.path(), folder).string()] = read_text(entry.path().string());
  }
  return files;
}

/// Rasters and pictures byte for byte; reports and tables (which hold times and folders) by the
/// name of the model that made them.
bool same_tree(const Tree& got, const Tree& want, const std::string& model_name) {
  if (got.size() != want.size()) return false;
  for (const auto& [name, bytes] : want) {
    const auto it = got.find(name);
    if (it == got.end()) return false;
    if (name.ends_with("report.json")) {
      if (it->second.find(model_name) == std::string::npos) return false;
    } else if (!name.ends_with(".json") && !name.ends_with(".csv") && it->second != bytes) {
      return false;
    }
  }
  return true;
}

struct ArmedFault {
  explicit ArmedFault(int step) { habcast::arm_commit_fault_for_testing(step); }
  ~ArmedFault() { habcast::arm_commit_fault_for_testing(-1); }
  ArmedFault(const ArmedFault&) = delete;
  ArmedFault& operator=(const ArmedFault&) = delete;
};

/// Two covariates on a small grid, a model file per slope, and a scenario file with two scenarios.
struct Futures {
  TempDir dir{"multi-folder"};
  Futures() {
    const habcast::test::GridSpec grid{12, 10};
    habcast::test::write_raster(dir.file("t.tif"), grid, "Float32", [](int, int c) { return c * 0.4 - 2.0; });
    habcast::test::write_raster(dir.file("t_warm.tif"), grid, "Float32", [](int, int c) { return c * 0.4 - 1.5; });
    habcast::test::write_raster(dir.file("t_dry.tif"), grid, "Float32", [](int r, int c) { return c * 0.4 - 2.0 + r * 0.05; });
    habcast::test::write_raster(dir.file("p.tif"), grid, "Float32", [](int r, int) { return r * 0.2; });
    write_text(dir.file("train.csv"), "t,p\n-1,0.25\n3,1.75\n1,1\n0,0.5\n2,1.5\n");
    write_text(dir.file("futures.toml"),
               "habcast_scenarios = 1\n[[scenario]]\nname = \"warm\"\n[scenario.covariates]\nt = \"t_warm.tif\"\n"
               "[[scenario]]\nname = \"dry\"\n[scenario.covariates]\nt = \"t_dry.tif\"\n");
  }
  std::string model(const std::string& name, double slope, const std::string& t_raster = "t.tif") {
    const std::string path = dir.file(name + ".toml");
    write_text(path, "habcast_model = 1\n[model]\nname = \"" + name + "\"\nfamily = \"binomial\"\naic = " +
                         std::to_string(100 + slope) +
                         "\n[training]\nsamples = \"train.csv\"\n"
                         "[covariates.t]\nraster = \"" + t_raster + "\"\n[covariates.p]\nraster = \"p.tif\"\n"
                         "[coefficients]\nterms = [\"(Intercept)\", \"t\", \"t^2\", \"p\"]\nestimates = [0.1, " +
                         std::to_string(slope) +
                         ", -0.3, 0.2]\ncovariance = [[0.1, 0.01, 0.0, 0.0], [0.01, 0.2, 0.02, 0.0], "
                         "[0.0, 0.02, 0.05, 0.0], [0.0, 0.0, 0.0, 0.04]]\n");
    return path;
  }
};

}  // namespace

TEST_CASE("A scenario run refuses an output that is one of its inputs, naming both, and touches nothing",
          "[safety][scenarios]") {
  Futures f;
  const std::string model = f.model("m", 0.5);
  // The warm scenario's raster for t lies where the run would write warm/suitability.tif.
  fs::create_directories(f.dir.file("out/warm"));
  fs::copy_file(f.dir.file("t_warm.tif"), f.dir.file("out/warm/suitability.tif"));
  write_text(f.dir.file("futures.toml"),
             "habcast_scenarios = 1\n[[scenario]]\nname = \"warm\"\n[scenario.covariates]\nt = \"out/warm/suitability.tif\"\n");
  const std::string before = read_text(f.dir.file("out/warm/suitability.tif"));
  for (const bool overwrite : {false, true}) {
    std::string out, err;
    std::vector<std::string> args{"predict", model, "--scenarios", f.dir.file("futures.toml"), "-o", f.dir.file("out"), "-q"};
    if (overwrite) args.emplace_back("--overwrite");
    CHECK(habcast::test::run_cli(args, &out, &err) == 2);
    CHECK_THAT(err, Contains("scenario warm raster of covariate t"));
    CHECK_THAT(err, Contains("output warm/suitability.tif"));
    CHECK(read_text(f.dir.file("out/warm/suitability.tif")) == before);
    CHECK_FALSE(fs::exists(f.dir.file("out/baseline")));
  }
}

TEST_CASE("A model-set run refuses an output that is one of its inputs, naming both", "[safety][model-set]") {
  Futures f;
  // The first model reads its covariate t from where the set's suitability.tif would go.
  fs::create_directories(f.dir.file("out"));
  fs::copy_file(f.dir.file("t.tif"), f.dir.file("out/suitability.tif"));
  const std::string a = f.model("a", 0.5, "out/suitability.tif"), b = f.model("b", 0.2, "out/suitability.tif");
  const std::string before = read_text(f.dir.file("out/suitability.tif"));
  std::string out, err;
  CHECK(habcast::test::run_cli({"predict", a, b, "-o", f.dir.file("out"), "-q", "--overwrite"}, &out, &err) == 2);
  CHECK_THAT(err, Contains("raster of covariate t"));
  CHECK_THAT(err, Contains("output suitability.tif"));
  CHECK(read_text(f.dir.file("out/suitability.tif")) == before);
}

TEST_CASE("A scenario name cannot be a file of the run or a hidden folder", "[safety][scenarios]") {
  CHECK_FALSE(habcast::valid_scenario_name("scenarios.json"));
  CHECK_FALSE(habcast::valid_scenario_name("scenarios.csv"));
  CHECK_FALSE(habcast::valid_scenario_name(".habcast.lock"));
  CHECK_FALSE(habcast::valid_scenario_name("-o"));
  CHECK_FALSE(habcast::valid_scenario_name(".."));
  CHECK(habcast::valid_scenario_name("ssp2-4.5_2050"));
}

TEST_CASE("A scenario run killed at any step of its commit leaves the old tree or the new one, whole",
          "[safety][commit][scenarios]") {
  Futures f;
  const std::string old_model = f.model("old", 0.8), new_model = f.model("new", -0.4);
  auto run = [&](const std::string& model, const std::string& out, std::vector<std::string> extra) {
    std::vector<std::string> args{"predict", model, "--scenarios", f.dir.file("futures.toml"), "-o", out, "-q", "--threads", "1"};
    args.insert(args.end(), extra.begin(), extra.end());
    std::string o, e;
    return habcast::test::run_cli(args, &o, &e);
  };
  // The new tree adds change_class.tif to each scenario folder (a threshold) and drops the joint
  // checks (no novelty.tif, least_similar.tif): the commit adds and removes files in sub-folders.
  const std::vector<std::string> new_args{"--threshold", "0.4", "--checks", "range"};
  REQUIRE(run(old_model, f.dir.file("old"), {}) == 0);
  REQUIRE(run(new_model, f.dir.file("new"), new_args) == 0);
  const Tree old_tree = tree_of(f.dir.file("old")), new_tree = tree_of(f.dir.file("new"));
  REQUIRE(old_tree.count("warm/novelty.tif") == 1);
  REQUIRE(new_tree.count("warm/novelty.tif") == 0);
  REQUIRE(new_tree.count("dry/change_class.tif") == 1);
  const std::vector<std::string> owned = habcast::scenario_owned_names(habcast::read_scenario_file(f.dir.file("futures.toml")).scenarios);

  for (const bool first_run : {false, true}) {
    int steps = 0;
    for (int k = 0;; ++k) {
      INFO((first_run ? "first run" : "re-run") << ", crash before commit step " << k);
      const std::string out = f.dir.file("out");
      fs::remove_all(out);
      if (!first_run) fs::copy(f.dir.file("old"), out, fs::copy_options::recursive);
      std::vector<std::string> args = new_args;
      args.emplace_back("--overwrite");
      bool crashed = false;
      {
        const ArmedFault fault(k);
        run(new_model, out, args);
        crashed = habcast::crash_simulated();
      }
      if (!crashed) {
        CHECK(same_tree(tree_of(out), new_tree, "\"new\""));
        steps = k;
        break;
      }
      // The next run into the folder takes the locks, completes or discards, then (here) stops.
      { const habcast::OutputFolder next(out, owned, true, ""); }
      const Tree after = tree_of(out);
      const bool is_old = first_run ? after.empty() : same_tree(after, old_tree, "\"old\"");
      CHECK((is_old || same_tree(after, new_tree, "\"new\"")));
    }
    // Every raster, sidecar, report and table of three folders is one step at least.
    CHECK(steps > 20);
  }
}
