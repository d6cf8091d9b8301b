#include "pipeline/folder_lock.hpp"

#include <fcntl.h>
#include <sys/file.h>
#include <sys/stat.h>
#include <unistd.h>

#include <algorithm>
#include <cerrno>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <map>
#include <mutex>
#include <sstream>

#include "core/base/error.hpp"
#include "core/base/utc_time.hpp"
#include "pipeline/run_files.hpp"
#include "raster/output_raster.hpp"

namespace habcast {

namespace {

namespace fs = std::filesystem;

struct Held {
  int fd = -1;
  int count = 0;
  bool exclusive = false;
  std::string lock_path;
};

std::mutex g_mutex;
std::map<std::string, Held>& registry() {
  static std::map<std::string, Held> held;
  return held;
}

std::string first_line(const std::string& path) {
  std::ifstream in(path);
  std::string line;
  std::getline(in, line);
  return line;
}

/// Filesystems without advisory locks (some network and parallel filesystems) say so with
/// these; a run there goes ahead unlocked rather than not at all.
bool locks_unsupported(int error) { return error == ENOLCK || error == EINVAL || error == EOPNOTSUPP || error == ENOSYS; }

}  // namespace

std::string process_identity() {
  static const std::string identity = [] {
    char host[256] = {};
    gethostname(host, sizeof host - 1);
    std::string boot = first_line("/proc/sys/kernel/random/boot_id");
    if (boot.empty()) boot = "unknown";
    // Field 22 of /proc/self/stat: the start time in clock ticks since boot. With the boot id it
    // names this process uniquely, even after its pid is reused.
    std::string ticks = "unknown";
    const std::string stat = first_line("/proc/self/stat");
    if (const auto close = stat.rfind(')'); close != std::string::npos) {
      std::istringstream fields(stat.substr(close + 2));
      std::string field;
      for (int i = 3; i <= 22 && fields >> field; ++i)
        if (i == 22) ticks = field;
    }
    return std::string("host ") + host + ", boot " + boot + ", pid " + std::to_string(getpid()) + " (start tick " +
           ticks + "), started " + utc_now();
  }();
  return identity;
}

FolderLock::FolderLock(const std::string& folder, Mode mode) : key_(real_path(folder)) {
  std::lock_guard guard(g_mutex);
  auto& held = registry();
  if (auto it = held.find(key_); it != held.end()) {
    ++it->second.count;
    held_ = true;
    return;
  }
  const std::string lock_path = (fs::path(key_) / kLockFileName).string();
  const int operation = (mode == Mode::exclusive ? LOCK_EX : LOCK_SH) | LOCK_NB;
  for (int attempt = 0; attempt < 100; ++attempt) {
    const int fd = open(lock_path.c_str(), O_RDWR | O_CREAT | O_CLOEXEC, 0644);
    if (fd < 0)
      throw IoError(folder + ": cannot create the lock file " + lock_path + " (" + std::strerror(errno) +
                    "); check that the folder is writable");
    if (flock(fd, operation) != 0) {
      const int error = errno;
      close(fd);
      if (locks_unsupported(error)) return;  // unlocked: held_ stays false
      if (error == EWOULDBLOCK) {
        const std::string holder = first_line(lock_path);
        throw UsageError(folder + " is in use by another habcast run" +
                         (holder.empty() ? std::string() : " (" + holder + ")") +
                         "; wait for it to finish, or write to another folder. The lock ends with its process, "
                         "so it is never stale");
      }
      throw IoError(folder + ": cannot lock " + lock_path + " (" + std::strerror(error) + ")");
    }
    // The previous holder removes the file as it leaves; if we locked a file that is no longer
    // (or no longer the one) at that name, our lock guards nothing: try again.
    struct stat by_fd {}, by_name {};
    if (fstat(fd, &by_fd) == 0 && stat(lock_path.c_str(), &by_name) == 0 && by_fd.st_dev == by_name.st_dev &&
        by_fd.st_ino == by_name.st_ino) {
      if (mode == Mode::exclusive) {
        const std::string text = process_identity() + "\n";
        if (ftruncate(fd, 0) == 0 && pwrite(fd, text.data(), text.size(), 0) < 0) {
          // The holder's description is a courtesy for the message above; the lock stands without it.
        }
      }
      held.emplace(key_, Held{fd, 1, mode == Mode::exclusive, lock_path});
      held_ = true;
      return;
    }
    close(fd);
  }
  throw IoError(folder + ": the lock file " + lock_path + " keeps being replaced; is another program deleting it?");
}

FolderLock::~FolderLock() {
  if (!held_) return;
  std::lock_guard guard(g_mutex);
  auto& held = registry();
  const auto it = held.find(key_);
  if (it == held.end() || --it->second.count > 0) return;
  // Removed while still locked (a shared holder only when it is the last one), so the folder is
  // left as it was found; a run that opened the old file notices the swap and retries.
  if (it->second.exclusive || flock(it->second.fd, LOCK_EX | LOCK_NB) == 0) unlink(it->second.lock_path.c_str());
  close(it->second.fd);
  held.erase(it);
}

OutputFolders::OutputFolders(const std::vector<std::string>& files) {
  std::map<std::string, std::vector<std::string>> by_folder;
  for (const std::string& file : files) {
    if (file.empty()) continue;
    const fs::path parent = fs::path(file).parent_path();
    by_folder[parent.empty() ? std::string(".") : parent.string()].push_back(fs::path(file).filename().string());
  }
  std::vector<std::string> seen;
  for (const auto& [folder, names] : by_folder) {
    std::error_code ec;
    if (!fs::is_directory(folder, ec)) continue;
    const std::string key = real_path(folder);
    if (std::find(seen.begin(), seen.end(), key) != seen.end()) continue;
    seen.push_back(key);
    locks_.push_back(std::make_unique<FolderLock>(folder));
    if (locks_.back()->held()) remove_stale_partials(folder, names);
  }
}

}  // namespace habcast
