// Naming of temporary outputs and clean-up of those left by a killed run.
#include <sys/types.h>
#include <unistd.h>

#include <cerrno>
#include <charconv>
#include <csignal>
#include <filesystem>
#include <limits>
#include <optional>

#include "raster/output_raster.hpp"

namespace habcast {
namespace {

namespace fs = std::filesystem;

constexpr std::string_view partial_suffix = ".partial";
constexpr std::string_view sidecar_suffix = ".aux.xml";  // GDAL's PAM file for categories etc.

/// The writer's pid when `file` is a partial of `name` (".<name>.<pid>.partial").
std::optional<pid_t> partial_pid(std::string_view file, const std::string& name) {
  const std::string prefix = "." + name + ".";
  if (file.size() <= prefix.size() + partial_suffix.size() || !file.starts_with(prefix) ||
      !file.ends_with(partial_suffix)) {
    return std::nullopt;
  }
  const std::string_view digits = file.substr(prefix.size(), file.size() - prefix.size() - partial_suffix.size());
  long long pid = 0;
  const auto [end, error] = std::from_chars(digits.data(), digits.data() + digits.size(), pid);
  // pid 0 and negative pids address process groups in kill(); never treat them as a writer.
  if (error != std::errc() || end != digits.data() + digits.size() || pid <= 0 ||
      pid > std::numeric_limits<pid_t>::max()) {
    return std::nullopt;
  }
  return static_cast<pid_t>(pid);
}

bool process_is_gone(pid_t pid) {
  // EPERM means the process exists under another user: its file is not ours to delete.
  return kill(pid, 0) != 0 && errno == ESRCH;
}

}  // namespace

std::string temporary_path_for(const std::string& final_path) {
  const fs::path destination(final_path);
  // A leading dot hides the file from casual listings, and the pid tells a later run whether the
  // writer is still alive (see remove_stale_partials).
  const std::string name =
      "." + destination.filename().string() + "." + std::to_string(getpid()) + std::string(partial_suffix);
  return (destination.parent_path() / name).string();
}

int remove_stale_partials(const std::string& folder, const std::vector<std::string>& final_names) {
  // Best effort: an unreadable folder or a file we cannot delete is left for the user, because
  // writing the new outputs will report any real problem with the folder.
  std::vector<fs::path> stale;
  std::error_code error;
  for (fs::directory_iterator entry(folder, error), end; !error && entry != end; entry.increment(error)) {
    const std::string file = entry->path().filename().string();
    for (const auto& final_name : final_names) {
      const auto pid = partial_pid(file, fs::path(final_name).filename().string());
      if (pid && process_is_gone(*pid)) stale.push_back(entry->path());
    }
  }
  int removed = 0;
  for (const auto& path : stale) {
    std::error_code ignored;
    if (fs::remove(path, ignored)) ++removed;
    fs::remove(path.string() + std::string(sidecar_suffix), ignored);
  }
  return removed;
}

}  // namespace habcast
