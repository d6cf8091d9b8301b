#pragma once
// One writer per output folder: an advisory lock (flock) on ".habcast.lock" in the folder, held
// for the whole run. A second run into the same folder is refused at once with a message that
// says who holds it (host, boot id, pid, start time). The kernel drops the lock when its process
// dies, however it dies, so a lock can never be stale; the file itself is removed by the run
// that leaves, and one left by a killed run is simply taken over. While a run holds the lock,
// any temporary file of habcast's in the folder is a leftover of a dead run: that, not a pid
// that may have been reused or belong to another node, is what lets the clean-up delete it.
#include <memory>
#include <string>
#include <vector>

namespace habcast {

constexpr const char* kLockFileName = ".habcast.lock";

class FolderLock {
 public:
  enum class Mode {
    exclusive,  ///< the only writer (predict, fit, a whole batch run, its mosaic step)
    shared,     ///< one of several cooperating writers (batch --shard runs into one region)
  };
  /// Locks `folder` (which must exist). Throws UsageError when another run holds it. Within one
  /// process the lock is counted, so a batch that holds a tile folder can run predict into it.
  /// On a filesystem without locks the run goes ahead unlocked (held() is false).
  explicit FolderLock(const std::string& folder, Mode mode = Mode::exclusive);
  ~FolderLock();
  FolderLock(const FolderLock&) = delete;
  FolderLock& operator=(const FolderLock&) = delete;

  /// True when the folder is really locked (the filesystem supports it).
  [[nodiscard]] bool held() const { return held_; }

 private:
  std::string key_;
  bool held_ = false;
};

/// The commands that write single files (fit, evaluate, describe): locks the folder of each
/// output (each folder once; empty paths, and folders that do not exist yet, are skipped: the
/// write reports those) and, holding it, deletes temporaries a killed run left for those names.
class OutputFolders {
 public:
  explicit OutputFolders(const std::vector<std::string>& files);
  OutputFolders(const OutputFolders&) = delete;
  OutputFolders& operator=(const OutputFolders&) = delete;

 private:
  std::vector<std::unique_ptr<FolderLock>> locks_;
};

/// Who this process is, beyond its pid: "host H, boot B, pid P, started T".
std::string process_identity();

}  // namespace habcast
