#include "pipeline/stop_signal.hpp"

#include <atomic>
#include <csignal>

#include "core/base/bounded_input.hpp"
#include "core/base/error.hpp"

namespace habcast {

namespace {

std::atomic<int> g_signal{0};
static_assert(std::atomic<int>::is_always_lock_free, "the signal handler needs a lock-free flag");

struct sigaction g_previous_int {};
struct sigaction g_previous_term {};

extern "C" void on_stop_signal(int signal_number) { g_signal.store(signal_number); }

}  // namespace

StopSignalGuard::StopSignalGuard() {
  g_signal.store(0);
  struct sigaction action {};
  action.sa_handler = on_stop_signal;
  sigemptyset(&action.sa_mask);
  action.sa_flags = 0;
  sigaction(SIGINT, &action, &g_previous_int);
  sigaction(SIGTERM, &action, &g_previous_term);
  set_stop_poll(throw_if_stopped);  // loading in the core polls it too
}

StopSignalGuard::~StopSignalGuard() {
  set_stop_poll(nullptr);
  sigaction(SIGINT, &g_previous_int, nullptr);
  sigaction(SIGTERM, &g_previous_term, nullptr);
}

int stop_signal() { return g_signal.load(); }

void throw_if_stopped() {
  if (const int s = g_signal.load()) throw Interrupted(s);
}

void raise_stop_for_testing(int signal_number) { g_signal.store(signal_number); }

}  // namespace habcast
