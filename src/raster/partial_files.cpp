// Naming of temporary outputs and clean-up of those left by a killed run.
#include <unistd.h>

#include <filesystem>
#include <string_view>

#include "raster/output_raster.hpp"

namespace habcast {
namespace {

namespace fs = std::filesystem;

constexpr std::string_view partial_suffix = ".partial";

/// True when `file` is a temporary of `name`: ".<name>.<pid>.partial", possibly followed by what
/// GDAL adds beside it (".aux.xml", ".ovr.tmp").
bool is_partial_of(std::string_view file, const std::string& name) {
  const std::string prefix = "." + name + ".";
  if (!file.starts_with(prefix)) return false;
  std::string_view rest = file.substr(prefix.size());
  std::size_t digits = 0;
  while (digits < rest.size() && rest[digits] >= '0' && rest[digits] <= '9') ++digits;
  return digits > 0 && rest.substr(digits).starts_with(partial_suffix);
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
  // writing the new outputs will report any real problem with the folder. The caller holds the
  // folder's lock, so no live habcast run writes here: the pid in a name decides nothing (it may
  // be reused, or belong to another node or pid namespace).
  std::vector<fs::path> stale;
  std::error_code error;
  for (fs::directory_iterator entry(folder, error), end; !error && entry != end; entry.increment(error)) {
    const std::string file = entry->path().filename().string();
    for (const auto& final_name : final_names)
      if (is_partial_of(file, fs::path(final_name).filename().string())) stale.push_back(entry->path());
  }
  int removed = 0;
  for (const auto& path : stale) {
    std::error_code ignored;
    if (fs::remove(path, ignored)) ++removed;
  }
  return removed;
}

}  // namespace habcast
