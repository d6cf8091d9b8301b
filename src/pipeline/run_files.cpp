#include "pipeline/run_files.hpp"

#include <sys/stat.h>

#include <filesystem>
#include <system_error>

#include "core/base/error.hpp"

namespace habcast {

namespace fs = std::filesystem;

std::string real_path(const std::string& path) {
  std::error_code ec;
  const fs::path absolute = fs::absolute(path, ec);
  if (ec) return fs::path(path).lexically_normal().string();
  // weakly_canonical follows every link of the part that exists, the last component included,
  // so an output that is a link onto an input resolves to that input.
  const fs::path resolved = fs::weakly_canonical(absolute, ec);
  return ec ? absolute.lexically_normal().string() : resolved.string();
}

namespace {

/// A path resolved once: its real path and, when it exists, its device and inode (so hard links
/// to one file are recognised too).
struct Resolved {
  std::string real;
  bool exists = false;
  dev_t device = 0;
  ino_t inode = 0;
};

Resolved resolve(const std::string& path) {
  Resolved r{real_path(path)};
  struct stat info {};
  if (stat(r.real.c_str(), &info) == 0) {
    r.exists = true;
    r.device = info.st_dev;
    r.inode = info.st_ino;
  }
  return r;
}

bool same_file(const Resolved& a, const Resolved& b) {
  return a.real == b.real || (a.exists && b.exists && a.device == b.device && a.inode == b.inode);
}

std::string shown(const std::string& role, const std::string& path, const Resolved& r) {
  return role + " (" + path + (r.real != fs::absolute(path).lexically_normal().string() ? ", which is " + r.real : "") + ")";
}

}  // namespace

void RunFiles::input(const std::string& role, const std::string& path) {
  if (!path.empty()) inputs_.push_back({role, path});
}

void RunFiles::output(const std::string& role, const std::string& path) {
  if (!path.empty()) outputs_.push_back({role, path});
}

void RunFiles::check() const {
  std::vector<Resolved> in, out;
  for (const Entry& e : inputs_) in.push_back(resolve(e.path));
  for (const Entry& e : outputs_) out.push_back(resolve(e.path));
  for (std::size_t i = 0; i < outputs_.size(); ++i) {
    for (std::size_t k = 0; k < inputs_.size(); ++k) {
      if (same_file(out[i], in[k]))
        throw UsageError("the output " + shown(outputs_[i].role, outputs_[i].path, out[i]) + " is the input " +
                         shown(inputs_[k].role, inputs_[k].path, in[k]) +
                         ": writing it would destroy the input. Choose another output name or folder; no option "
                         "allows this");
    }
    for (std::size_t j = 0; j < i; ++j) {
      if (same_file(out[i], out[j]))
        throw UsageError("two outputs of this run are one file: " + shown(outputs_[j].role, outputs_[j].path, out[j]) +
                         " and " + shown(outputs_[i].role, outputs_[i].path, out[i]) + ". Give them different names");
    }
  }
}

}  // namespace habcast
