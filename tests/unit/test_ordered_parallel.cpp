// run_ordered: results reach the caller in item order whatever the thread count, the first failure
// is rethrown after every worker has joined, and a stop request ends the run early. Invariants of
// our own scheduler, checked by construction (no outside reference applies).
#include <catch2/catch.hpp>

#include <atomic>
#include <mutex>
#include <set>
#include <stdexcept>
#include <thread>
#include <vector>

#include "pipeline/ordered_parallel.hpp"

using habcast::run_ordered;

TEST_CASE("run_ordered hands results over in item order at any thread count", "[parallel]") {
  for (const int threads : {1, 2, 3, 8}) {
    INFO("threads = " << threads);
    std::vector<std::size_t> consumed;
    std::set<int> workers_seen;
    std::mutex seen_mutex;
    run_ordered<std::size_t>(
        200, threads, 4,
        [&](std::size_t item, int worker) {
          {
            std::lock_guard lock(seen_mutex);
            workers_seen.insert(worker);
          }
          if (item % 7 == 0) std::this_thread::yield();  // finish out of order now and then
          return item * item;
        },
        [&](std::size_t item, std::size_t& result) {
          CHECK(result == item * item);
          consumed.push_back(item);
        },
        [] { return false; });
    REQUIRE(consumed.size() == 200);
    for (std::size_t i = 0; i < consumed.size(); ++i) CHECK(consumed[i] == i);
    for (const int w : workers_seen) CHECK((w >= 0 && w < threads));
  }
}

TEST_CASE("run_ordered with one thread does all work on the calling thread", "[parallel]") {
  const std::thread::id caller = std::this_thread::get_id();
  int foreign = 0;
  run_ordered<int>(
      50, 1, 4, [&](std::size_t, int) { return std::this_thread::get_id() == caller ? 0 : 1; },
      [&](std::size_t, int& on_other_thread) { foreign += on_other_thread; }, [] { return false; });
  CHECK(foreign == 0);
}

TEST_CASE("run_ordered rethrows the first failure and stops on request", "[parallel]") {
  for (const int threads : {1, 3}) {
    INFO("threads = " << threads);
    std::atomic<int> started{0};
    CHECK_THROWS_WITH(run_ordered<int>(
                          1000, threads, 4,
                          [&](std::size_t item, int) {
                            ++started;
                            if (item == 10) throw std::runtime_error("item 10 failed");
                            return 0;
                          },
                          [](std::size_t, int&) {}, [] { return false; }),
                      "item 10 failed");
    // At most the items in flight when the failure surfaced were started, never the whole run.
    CHECK(started.load() < 1000);

    std::size_t consumed = 0;
    run_ordered<int>(
        1000, threads, 4, [](std::size_t, int) { return 0; }, [&](std::size_t, int&) { ++consumed; },
        [&] { return consumed >= 20; });
    CHECK(consumed >= 20);
    CHECK(consumed < 1000);
  }
}
