#include "pipeline/output_set.hpp"

#include <atomic>
#include <cerrno>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <sstream>

#include "core/base/error.hpp"
#include "pipeline/run_files.hpp"
#include "raster/output_raster.hpp"

namespace habcast {

namespace {

namespace fs = std::filesystem;

constexpr const char* kRecordPrefix = ".habcast-commit-";
constexpr const char* kRecordHeader = "habcast commit record 1";

std::atomic<int> g_fault_step{-1};
std::atomic<int> g_steps{0};
std::atomic<bool> g_crashed{false};

void fault_point() {
  const int step = g_steps.fetch_add(1);
  if (g_fault_step.load() == step) {
    g_crashed.store(true);
    throw SimulatedCrash();
  }
}

/// A record names files in its own folder or its sub-folders only ("a.tif", "ssp1/change.tif"):
/// an absolute name, an empty component, or "." / ".." anywhere is not ours.
bool plain_name(const std::string& name) {
  if (name.empty() || name.find('\n') != std::string::npos || name.find('\t') != std::string::npos) return false;
  std::size_t start = 0;
  while (true) {
    const std::size_t slash = name.find('/', start);
    const std::string part = name.substr(start, slash == std::string::npos ? std::string::npos : slash - start);
    if (part.empty() || part == "." || part == "..") return false;
    if (slash == std::string::npos) return true;
    start = slash + 1;
  }
}

/// The temporary files GDAL may add beside a temporary raster (sidecar, overview scratch).
void remove_temporary(const std::string& path) {
  std::error_code ignored;
  fs::remove(path, ignored);
  fs::remove(sidecar_of(path), ignored);
  fs::remove(path + ".ovr.tmp", ignored);
}

struct Record {
  std::vector<std::pair<std::string, std::string>> renames;
  std::vector<std::string> removals;
};

std::string record_text(const Record& r) {
  std::string text = std::string(kRecordHeader) + "\n";
  for (const auto& [from, to] : r.renames) text += "rename\t" + from + "\t" + to + "\n";
  for (const std::string& name : r.removals) text += "remove\t" + name + "\n";
  return text + "end\n";
}

/// Parses a record; false when it is not a complete record of ours (then it is left alone).
bool parse_record(const std::string& path, Record& r) {
  std::ifstream in(path, std::ios::binary);
  std::string line;
  if (!std::getline(in, line) || line != kRecordHeader) return false;
  bool ended = false;
  while (std::getline(in, line)) {
    if (line == "end") {
      ended = true;
      break;
    }
    std::istringstream fields(line);
    std::string kind, a, b;
    std::getline(fields, kind, '\t');
    std::getline(fields, a, '\t');
    std::getline(fields, b, '\t');
    if (kind == "rename" && plain_name(a) && plain_name(b)) r.renames.emplace_back(a, b);
    else if (kind == "remove" && plain_name(a)) r.removals.push_back(a);
    else return false;
  }
  return ended;
}

void rename_or_throw(const fs::path& from, const fs::path& to) {
  fault_point();
  std::error_code ec;
  fs::rename(from, to, ec);
  if (ec)
    throw IoError(located(to.string(), 0, "cannot replace it with the finished file " + from.string() + " (" +
                                              ec.message() + "). The next run into this folder completes the set"));
}

void remove_or_throw(const fs::path& path) {
  fault_point();
  std::error_code ec;
  fs::remove(path, ec);
  if (ec) throw IoError(located(path.string(), 0, "cannot remove this earlier output (" + ec.message() + ")"));
}

/// Steps 3 and 4 of the commit, also what recovery does with a record found on disk. Every step
/// may be repeated: a temporary file already renamed is gone, a removal already made is done.
void apply_record(const fs::path& folder, const Record& r, const fs::path& record_path) {
  for (const auto& [from, to] : r.renames) {
    std::error_code ec;
    if (fs::exists(folder / from, ec)) rename_or_throw(folder / from, folder / to);
  }
  for (const std::string& name : r.removals) {
    std::error_code ec;
    if (fs::exists(fs::symlink_status(folder / name, ec))) remove_or_throw(folder / name);
  }
  remove_or_throw(record_path);
}

}  // namespace

OutputSet::OutputSet(std::string folder, std::string name, std::vector<std::string> owned)
    : folder_(std::move(folder)), name_(std::move(name)), owned_(std::move(owned)) {}

OutputSet::~OutputSet() {
  if (committed_ || crash_simulated()) return;
  for (const auto& [temporary, final_name] : renames_) {
    (void)final_name;
    remove_temporary((fs::path(folder_) / temporary).string());
  }
}

void OutputSet::add(const std::string& temporary, const std::string& final_name) {
  const fs::path t(temporary);
  // The temporary file lies beside its final name: same sub-folder of the set's folder.
  const std::string relative = (fs::path(final_name).parent_path() / t.filename()).string();
  if (!plain_name(final_name) || !plain_name(relative) ||
      real_path(t.parent_path().empty() ? "." : t.parent_path().string()) !=
          real_path((fs::path(folder_) / final_name).parent_path().string()))
    throw std::logic_error("OutputSet::add: " + temporary + " -> " + final_name + " is not a name in " + folder_);
  renames_.emplace_back(relative, final_name);
}

void OutputSet::commit() {
  const fs::path folder(folder_);
  Record record;
  record.renames = renames_;
  for (const std::string& name : owned_) {
    bool provided = false;
    for (const auto& [from, to] : renames_) provided = provided || to == name;
    std::error_code ec;
    if (!provided && fs::exists(fs::symlink_status(folder / name, ec))) record.removals.push_back(name);
  }
  const fs::path record_path = folder / (kRecordPrefix + name_);
  // One writer per folder (FolderLock), so the record's temporary name needs no pid.
  const std::string temporary = record_path.string() + ".partial";
  {
    fault_point();
    std::ofstream out(temporary, std::ios::binary | std::ios::trunc);
    out << record_text(record);
    out.flush();
    if (!out) {
      std::error_code ignored;
      fs::remove(temporary, ignored);
      throw IoError(record_path.string() + ": cannot write the commit record (disk full?); the earlier outputs are "
                                           "unchanged");
    }
  }
  try {
    rename_or_throw(temporary, record_path);
  } catch (const SimulatedCrash&) {
    throw;
  } catch (const Error&) {
    std::error_code ignored;
    fs::remove(temporary, ignored);
    throw;
  }
  committed_ = true;  // the commit point: from here on the new set stands
  // No fsync: the promise is about processes killed at any instant, which the page cache
  // survives; syncing every raster would cost tens of milliseconds per file for a power cut
  // (docs/limits.md says so).
  apply_record(folder, record, record_path);
}

int recover_output_sets(const std::string& folder) {
  std::vector<fs::path> records;
  std::error_code ec;
  for (fs::directory_iterator it(folder, ec), end; !ec && it != end; it.increment(ec)) {
    const std::string file = it->path().filename().string();
    if (!file.starts_with(kRecordPrefix)) continue;
    if (file.ends_with(".partial")) {
      // A record not yet in place: its set never reached the commit point.
      std::error_code ignored;
      fs::remove(it->path(), ignored);
    } else {
      records.push_back(it->path());
    }
  }
  int completed = 0;
  for (const fs::path& path : records) {
    Record record;
    if (!parse_record(path.string(), record))
      throw IoError(located(path.string(), 0, "is an unreadable commit record; the outputs in " + folder +
                                                  " may mix two runs. Delete the outputs and this file, then run again"));
    apply_record(fs::path(folder), record, path);
    ++completed;
  }
  return completed;
}

void arm_commit_fault_for_testing(int step) {
  g_fault_step.store(step);
  g_steps.store(0);
  g_crashed.store(false);
}

int commit_steps_taken() { return g_steps.load(); }

bool crash_simulated() { return g_crashed.load(); }

}  // namespace habcast
