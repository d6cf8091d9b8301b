// Outputs change as a set: a fault injected before each filesystem call of the commit (and of the
// recovery that the next run makes) stands in for a SIGKILL at that instant. After every one,
// once the next run has looked at the folder, it holds the complete old set or the complete new
// set, and nothing else. Deterministic: every step is hit, none by timing.
#include <catch2/catch.hpp>
#include <filesystem>
#include <fstream>
#include <map>
#include <string>

#include "pipeline/folder_lock.hpp"
#include "pipeline/output_set.hpp"
#include "predict/predict_folder.hpp"
#include "raster/output_raster.hpp"
#include "test_support.hpp"

namespace {

namespace fs = std::filesystem;
using habcast::test::read_text;
using habcast::test::TempDir;
using habcast::test::write_text;
using Files = std::map<std::string, std::string>;

/// Every file in `folder` but the lock file (a killed run's lock file is harmless: its lock died
/// with it), name -> bytes.
Files set_files_in(const std::string& folder) {
  Files files;
  for (const std::string& name : habcast::test::list_dir(folder))
    if (name != habcast::kLockFileName) files[name] = read_text(folder + "/" + name);
  return files;
}

void put_set(const std::string& folder, const Files& files) {
  fs::remove_all(folder);
  fs::create_directories(folder);
  for (const auto& [name, text] : files) write_text(folder + "/" + name, text);
}

/// Arms the fault for one test and disarms it however the test ends.
struct ArmedFault {
  explicit ArmedFault(int step) { habcast::arm_commit_fault_for_testing(step); }
  ~ArmedFault() { habcast::arm_commit_fault_for_testing(-1); }
  ArmedFault(const ArmedFault&) = delete;
  ArmedFault& operator=(const ArmedFault&) = delete;
};

/// Commits new_files over `folder` (which holds `old`), crashing at commit step `step` (-1: none).
/// Returns whether the crash happened.
bool commit_with_crash_at(const std::string& folder, const Files& new_files, const std::vector<std::string>& owned,
                          int step) {
  const ArmedFault fault(step);
  try {
    habcast::OutputSet set(folder, "test", owned);
    for (const auto& [name, text] : new_files) {
      const std::string temporary = habcast::temporary_path_for(folder + "/" + name);
      write_text(temporary, text);
      set.add(temporary, name);
    }
    set.commit();
  } catch (const habcast::SimulatedCrash&) {
    return true;
  }
  return false;
}

/// What the next run does first, itself crashing at `step` (-1: none). Returns whether it crashed.
bool recover_with_crash_at(const std::string& folder, const std::vector<std::string>& owned, int step) {
  const ArmedFault fault(step);
  try {
    habcast::recover_output_sets(folder);
    habcast::remove_stale_partials(folder, owned);
  } catch (const habcast::SimulatedCrash&) {
    return true;
  }
  return false;
}

}  // namespace

TEST_CASE("A commit killed before any of its steps leaves the old set or the new set once the next run looked",
          "[safety][commit]") {
  TempDir dir("commit-set");
  const std::string folder = dir.file("out");
  const std::vector<std::string> owned{"a.tif", "b.tif", "c.tif", "report.json"};
  const Files old_set{{"a.tif", "old a"}, {"b.tif", "old b"}, {"c.tif", "old c"}, {"report.json", "old"}};
  // The new set has no c.tif: the commit removes it, which is a step like the renames.
  const Files new_set{{"a.tif", "new a"}, {"b.tif", "new b"}, {"report.json", "new"}};
  for (const Files& before : {old_set, Files{}}) {
    int steps = 0;
    for (int k = 0;; ++k) {
      put_set(folder, before);
      if (!commit_with_crash_at(folder, new_set, owned, k)) {
        steps = k;
        CHECK(set_files_in(folder) == new_set);
        break;
      }
      INFO("crash before commit step " << k);
      // Before the commit record is in place the old set is untouched, under its own names.
      const bool recorded = fs::exists(folder + "/.habcast-commit-test");
      if (!recorded)
        for (const auto& [name, text] : before) CHECK(read_text(folder + "/" + name) == text);
      // The next run may itself be killed while completing the set: at every step of that too.
      for (int j = 0;; ++j) {
        INFO("and the next run crashes at its step " << j);
        const bool crashed = recover_with_crash_at(folder, owned, j);
        if (!crashed) break;
      }
      REQUIRE_FALSE(recover_with_crash_at(folder, owned, -1));
      const Files after = set_files_in(folder);
      CHECK((after == before || after == new_set));
      CHECK(after == (recorded ? new_set : before));
    }
    // record, its rename, 3 renames, 1 removal (only when c.tif exists), the record's removal
    CHECK(steps == (before.empty() ? 6 : 7));
  }
}

TEST_CASE("predict killed at any step of its commit leaves its old outputs or its new ones, whole", "[safety][commit]") {
  TempDir dir("commit-predict");
  habcast::test::GridSpec grid{8, 8};
  habcast::test::write_raster(dir.file("x.tif"), grid, "Float32", [](int r, int c) { return r * 0.7 + c * 0.3; });
  write_text(dir.file("t.csv"), "x\n1\n2.5\n6\n");
  auto model = [&](const std::string& name, double slope) {
    const std::string path = dir.file(name + ".toml");
    write_text(path, "habcast_model = 1\n[model]\nname = \"" + name +
                         "\"\nfamily = \"binomial\"\n[training]\nsamples = \"t.csv\"\n"
                         "[covariates.x]\nraster = \"x.tif\"\ncenter = 3\nscale = 2\n[coefficients]\n"
                         "terms = [\"(Intercept)\", \"x\", \"x^2\"]\nestimates = [0.1, " +
                         std::to_string(slope) + ", -0.6]\ncovariance = [[0.1, 0.01, 0.0], [0.01, 0.2, 0.02], [0.0, 0.02, 0.05]]\n");
    return path;
  };
  const std::string old_model = model("old", 0.8), new_model = model("new", -0.4);
  // The old set has every raster; the new one, without the joint checks, has no novelty.tif or
  // least_similar.tif (and their sidecar), which the commit must remove.
  const std::vector<std::string> old_args{"-q"};
  const std::vector<std::string> new_args{"-q", "--checks", "range", "--overwrite"};
  auto run = [&](const std::string& m, const std::string& out, const std::vector<std::string>& extra) {
    std::vector<std::string> args{"predict", m, "-o", out};
    args.insert(args.end(), extra.begin(), extra.end());
    return habcast::test::run_cli(args);
  };
  REQUIRE(run(old_model, dir.file("old"), old_args) == 0);
  REQUIRE(run(new_model, dir.file("new"), {"-q", "--checks", "range"}) == 0);
  const Files old_set = set_files_in(dir.file("old")), new_set = set_files_in(dir.file("new"));
  REQUIRE(old_set.count("novelty.tif") == 1);
  REQUIRE(new_set.count("novelty.tif") == 0);
  // The report names its own folder and times: the rasters are compared byte for byte, the
  // report by the model that made it.
  auto same_set = [](const Files& got, const Files& want, const std::string& model_name) {
    if (got.size() != want.size()) return false;
    for (const auto& [name, text] : want) {
      const auto it = got.find(name);
      if (it == got.end()) return false;
      if (name == "report.json" ? it->second.find("\"name\": \"" + model_name + "\"") == std::string::npos
                                : it->second != text)
        return false;
    }
    return true;
  };

  for (const bool first_run : {false, true}) {
    for (int k = 0;; ++k) {
      INFO((first_run ? "first run" : "re-run") << ", crash before commit step " << k);
      const std::string out = dir.file("out");
      fs::remove_all(out);
      if (!first_run) fs::copy(dir.file("old"), out);
      bool crashed = false;
      {
        const ArmedFault fault(k);
        run(new_model, out, new_args);
        crashed = habcast::crash_simulated();
      }
      if (!crashed) {
        CHECK(same_set(set_files_in(out), new_set, "new"));
        // The record, its rename, 5 renames (3 rasters, a sidecar, the report), the record's
        // removal; a re-run also removes novelty.tif, least_similar.tif and its sidecar.
        CHECK(k == (first_run ? 8 : 11));
        break;
      }
      // The next run into the folder: it takes the lock, completes or discards, then (here) stops.
      habcast::PredictOptions next;
      next.output_dir = out;
      next.overwrite = true;
      { const habcast::PredictFolder folder(next); }
      const Files after = set_files_in(out);
      const bool is_old = first_run ? after.empty() : same_set(after, old_set, "old");
      CHECK((is_old || same_set(after, new_set, "new")));
    }
  }
}
