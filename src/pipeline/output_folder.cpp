#include "pipeline/output_folder.hpp"

#include <filesystem>
#include <map>
#include <stdexcept>

#include "core/base/error.hpp"
#include "pipeline/atomic_file.hpp"
#include "pipeline/output_guard.hpp"
#include "pipeline/output_set.hpp"
#include "pipeline/run_files.hpp"
#include "raster/output_raster.hpp"

namespace habcast {

namespace {

namespace fs = std::filesystem;

std::string parent_of(const std::string& path) {
  const fs::path parent = fs::path(path).parent_path();
  return parent.empty() ? std::string(".") : parent.string();
}

}  // namespace

std::string name_in_folder(const std::string& folder, const std::string& path) {
  const fs::path base(real_path(folder));
  const fs::path relative = fs::path(real_path(parent_of(path))).lexically_relative(base) / fs::path(path).filename();
  const std::string name = relative.lexically_normal().string();
  if (name.empty() || name.starts_with("..") || fs::path(name).is_absolute())
    throw std::logic_error(path + " does not lie in the output folder " + folder);
  return name;
}

OutputFolder::OutputFolder(const std::string& folder, const std::vector<std::string>& owned, bool overwrite,
                           const std::string& other_way) {
  // Sub-folders in the order their names first appear, the top folder first.
  std::vector<std::string> subfolders{""};
  std::map<std::string, std::vector<std::string>> names;  // sub-folder -> file names in it
  for (const std::string& name : owned) {
    const std::string sub = fs::path(name).parent_path().string();
    if (!names.count(sub) && !sub.empty()) subfolders.push_back(sub);
    names[sub].push_back(fs::path(name).filename().string());
  }
  for (const std::string& sub : subfolders) {
    const std::string dir = sub.empty() ? folder : (fs::path(folder) / sub).string();
    std::error_code ec;
    fs::create_directories(dir, ec);
    if (ec || !fs::is_directory(dir))
      throw IoError(dir + ": cannot create the output folder: " + (ec ? ec.message() : "not a folder"));
    locks_.push_back(std::make_unique<FolderLock>(dir));
    if (locks_.back()->held()) {
      // Only under the lock is a leftover surely a dead run's: finish its set, drop temporaries.
      recover_output_sets(dir);
      remove_stale_partials(dir, names[sub]);
    }
  }
  std::vector<std::string> existing;
  for (const std::string& name : owned) existing.push_back((fs::path(folder) / name).string());
  refuse_to_clobber(existing, overwrite, other_way);
}

struct OutputCommit::Impl {
  std::string folder;
  std::string outside_path;
  OutputSet set;
  std::map<std::string, std::string> finished;  ///< final path -> temporary path
  std::string outside_temporary;                ///< temporary picture outside the folder
  Impl(const std::string& f, const std::string& name, std::vector<std::string> owned, const std::string& outside)
      : folder(f), outside_path(outside), set(f, name, std::move(owned)) {}
  ~Impl() {
    if (!outside_temporary.empty() && !crash_simulated()) {
      std::error_code ignored;
      fs::remove(outside_temporary, ignored);
    }
  }
};

OutputCommit::OutputCommit(const std::string& folder, const std::string& name, std::vector<std::string> owned,
                           const std::string& outside_path)
    : impl_(std::make_unique<Impl>(folder, name, std::move(owned), outside_path)) {}
OutputCommit::~OutputCommit() = default;

void OutputCommit::take_rasters(const std::vector<OutputRaster*>& rasters) {
  for (OutputRaster* r : rasters) {
    const std::string temporary = r->hand_over();
    const std::string name = name_in_folder(impl_->folder, r->final_path());
    impl_->set.add(temporary, name);
    impl_->finished[r->final_path()] = temporary;
    std::error_code ec;
    if (fs::exists(sidecar_of(temporary), ec)) impl_->set.add(sidecar_of(temporary), sidecar_of(name));
  }
}

std::string OutputCommit::finished(const std::string& final_path) const {
  const auto it = impl_->finished.find(final_path);
  return it == impl_->finished.end() ? std::string() : it->second;
}

std::string OutputCommit::add_outside_picture(const std::function<void(const std::string& path)>& draw) {
  const std::string& path = impl_->outside_path;
  if (path.empty()) return "";
  const std::string temporary = temporary_path_for(path);
  const fs::path parent(real_path(parent_of(path)));
  const fs::path base(real_path(impl_->folder));
  const std::string relative = parent.lexically_relative(base).string();
  const bool inside = !relative.empty() && !relative.starts_with("..");
  if (!inside) impl_->outside_temporary = temporary;
  try {
    draw(temporary);
  } catch (const Error& e) {
    std::error_code ignored;
    fs::remove(temporary, ignored);
    impl_->outside_temporary.clear();
    return std::string("no quicklook was written: ") + e.what();
  }
  if (inside) impl_->set.add(temporary, name_in_folder(impl_->folder, path));
  return "";
}

void OutputCommit::add_written(const std::string& final_path, const std::function<void(const std::string&)>& write) {
  const std::string temporary = temporary_path_for(final_path);
  impl_->set.add(temporary, name_in_folder(impl_->folder, final_path));
  write(temporary);
}

void OutputCommit::add_file(const std::string& final_path, const std::string& bytes) {
  add_written(final_path, [&](const std::string& temporary) { write_whole_file(temporary, bytes, final_path); });
}

void OutputCommit::commit() {
  impl_->set.commit();
  if (!impl_->outside_temporary.empty()) {
    std::error_code ec;
    fs::rename(impl_->outside_temporary, impl_->outside_path, ec);
    if (ec)
      throw IoError(impl_->outside_path + ": cannot rename the finished picture into place (" + ec.message() +
                    "); the other outputs are complete");
    impl_->outside_temporary.clear();
  }
}

}  // namespace habcast
