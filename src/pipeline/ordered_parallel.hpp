#pragma once
// Runs work items on a pool of threads and hands their results to the calling thread strictly in
// item order. At most `max_in_flight` results exist at once, so memory is bounded by that many
// blocks no matter how many items (blocks of a raster) there are.
#include <chrono>
#include <condition_variable>
#include <cstddef>
#include <exception>
#include <functional>
#include <mutex>
#include <optional>
#include <thread>
#include <vector>

namespace habcast {

/// `work(item, worker)` runs on worker `worker` (0..threads-1) and returns a Result;
/// `consume(item, result)` runs on the calling thread in item order 0, 1, 2, ...
/// With `threads` <= 1 everything runs on the calling thread, one item after the other: a job
/// given one core (a cluster slot) then keeps exactly one core busy, where a worker thread beside
/// a consuming caller would keep two busy.
/// `should_stop()` is polled by the calling thread between results; when it returns true no new
/// items start, workers finish, and run_ordered returns early. The first exception thrown by
/// `work` or `consume` stops the run and is rethrown on the calling thread after all workers joined.
template <typename Result>
void run_ordered(std::size_t items, int threads, std::size_t max_in_flight,
                 const std::function<Result(std::size_t item, int worker)>& work,
                 const std::function<void(std::size_t item, Result& result)>& consume,
                 const std::function<bool()>& should_stop) {
  if (threads <= 1) {
    for (std::size_t item = 0; item < items && !should_stop(); ++item) {
      Result result = work(item, 0);
      consume(item, result);
    }
    return;
  }
  if (max_in_flight < static_cast<std::size_t>(threads)) max_in_flight = static_cast<std::size_t>(threads);

  std::mutex mutex;
  std::condition_variable changed;
  std::vector<std::optional<Result>> slots(max_in_flight);  // ring buffer indexed by item % size
  std::size_t next_item = 0;       // next item a worker may start
  std::size_t next_consumed = 0;   // next item the caller consumes
  bool stopping = false;
  std::exception_ptr failure;

  auto worker_loop = [&](int worker) {
    for (;;) {
      std::size_t item;
      {
        std::unique_lock lock(mutex);
        changed.wait(lock, [&] { return stopping || next_item >= items || next_item < next_consumed + max_in_flight; });
        if (stopping || next_item >= items) return;
        item = next_item++;
      }
      try {
        Result result = work(item, worker);
        std::lock_guard lock(mutex);
        slots[item % max_in_flight].emplace(std::move(result));
      } catch (...) {
        std::lock_guard lock(mutex);
        if (!failure) failure = std::current_exception();
        stopping = true;
      }
      changed.notify_all();
    }
  };

  std::vector<std::thread> pool;
  pool.reserve(static_cast<std::size_t>(threads));
  for (int t = 0; t < threads; ++t) pool.emplace_back(worker_loop, t);

  try {
    while (next_consumed < items) {
      std::optional<Result> ready;
      {
        std::unique_lock lock(mutex);
        // Wake up regularly to poll should_stop() (signals arrive asynchronously).
        while (!stopping && !slots[next_consumed % max_in_flight].has_value()) {
          changed.wait_for(lock, std::chrono::milliseconds(100));
          if (should_stop()) stopping = true;
        }
        if (stopping) break;
        ready.swap(slots[next_consumed % max_in_flight]);
      }
      consume(next_consumed, *ready);
      {
        std::lock_guard lock(mutex);
        ++next_consumed;
        if (should_stop()) stopping = true;
      }
      changed.notify_all();
    }
  } catch (...) {
    std::lock_guard lock(mutex);
    if (!failure) failure = std::current_exception();
    stopping = true;
  }
  {
    std::lock_guard lock(mutex);
    stopping = true;
  }
  changed.notify_all();
  for (std::thread& t : pool) t.join();
  if (failure) std::rethrow_exception(failure);
}

}  // namespace habcast
