#pragma once
// Finished results handed back for reuse. A block's output buffers are a few megabytes; taking
// them from here instead of allocating anew spares the allocator and the kernel's page faults on
// every block, and keeps the memory of a run at the same few buffers from start to end.
#include <mutex>
#include <utility>
#include <vector>

namespace habcast {

template <typename T>
class RecyclingPool {
 public:
  /// A spare object (its buffers keep their capacity) or a new one. Thread-safe.
  T take() {
    std::lock_guard lock(mutex_);
    if (spare_.empty()) return T{};
    T object = std::move(spare_.back());
    spare_.pop_back();
    return object;
  }

  /// Hands `object` back. Thread-safe. The pool never holds more than were ever out at once.
  void give(T&& object) {
    std::lock_guard lock(mutex_);
    spare_.push_back(std::move(object));
  }

 private:
  std::mutex mutex_;
  std::vector<T> spare_;
};

}  // namespace habcast
