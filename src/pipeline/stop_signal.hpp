#pragma once
// SIGINT/SIGTERM turned into a flag that long-running work polls, so an interrupted run unwinds
// normally: destructors delete temporary outputs, and the process exits with 128 + signal.
namespace habcast {

/// Installs handlers for SIGINT and SIGTERM for the lifetime of the object and restores the
/// previous handlers afterwards. Not reentrant: one guard at a time.
class StopSignalGuard {
 public:
  StopSignalGuard();
  ~StopSignalGuard();
  StopSignalGuard(const StopSignalGuard&) = delete;
  StopSignalGuard& operator=(const StopSignalGuard&) = delete;
};

/// The signal received since the guard was installed (0 if none).
int stop_signal();

/// Throws Interrupted when a stop signal arrived.
void throw_if_stopped();

/// For tests: pretend `signal_number` arrived (0 clears).
void raise_stop_for_testing(int signal_number);

}  // namespace habcast
