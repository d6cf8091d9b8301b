#pragma once
// The one check every command makes before any work: which files it reads and which it writes,
// resolved to real paths (symbolic links followed, hard links recognised), so that no output is,
// or would replace, one of the run's inputs or another of its outputs. Such a run is a usage
// error naming both files; no option overrides it, because the loss would be the user's own data.
#include <string>
#include <vector>

namespace habcast {

class RunFiles {
 public:
  /// `role` says what the file is for the user (e.g. "covariate tmin", "--quicklook"); empty
  /// paths (options not given) are ignored.
  void input(const std::string& role, const std::string& path);
  void output(const std::string& role, const std::string& path);

  /// Throws UsageError naming both files when an output is the same file as an input or as
  /// another output.
  void check() const;

 private:
  struct Entry {
    std::string role, path;
  };
  std::vector<Entry> inputs_, outputs_;
};

/// The real path of `path`: absolute, every symbolic link followed (as far as the path exists),
/// "." and ".." removed. A path that cannot be resolved comes back absolute and normalised.
std::string real_path(const std::string& path);

}  // namespace habcast
