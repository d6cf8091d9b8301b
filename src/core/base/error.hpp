#pragma once
// One exception root for the whole library. Each kind maps to one documented exit code, and every
// message carries its context (file, line, band, window, value) so the user knows what to fix.
#include <stdexcept>
#include <string>

namespace habcast {

/// Exit codes that scripts can rely on. Documented in docs/exit-codes.md.
enum class ExitCode : int {
  ok = 0,
  internal = 1,          ///< a bug: please report
  usage = 2,             ///< wrong command-line arguments
  bad_input = 3,         ///< model file, training table or rasters are invalid
  io = 4,                ///< reading or writing failed (disk full, permissions, ...)
  extrapolation = 5,     ///< outputs written, but the extrapolated share exceeds --max-extrapolated
  interrupted = 130,     ///< SIGINT; SIGTERM gives 143. No partial output is left behind.
};

/// Root of all habcast errors. `what()` is the full, user-facing message.
class Error : public std::runtime_error {
 public:
  Error(ExitCode code, const std::string& message) : std::runtime_error(message), code_(code) {}
  [[nodiscard]] ExitCode code() const noexcept { return code_; }

 private:
  ExitCode code_;
};

/// The user asked for something the command line cannot express.
class UsageError : public Error {
 public:
  explicit UsageError(const std::string& message) : Error(ExitCode::usage, message) {}
};

/// An input file is invalid. The message names the file (and line, for text files).
class InputError : public Error {
 public:
  explicit InputError(const std::string& message) : Error(ExitCode::bad_input, message) {}
};

/// Reading or writing failed for reasons outside the file's content.
class IoError : public Error {
 public:
  explicit IoError(const std::string& message) : Error(ExitCode::io, message) {}
};

/// The run was stopped by a signal; the exit code is 128 + signal number.
class Interrupted : public Error {
 public:
  explicit Interrupted(int signal_number)
      : Error(static_cast<ExitCode>(128 + signal_number), "interrupted by signal " + std::to_string(signal_number) +
                                                              "; partial outputs were removed"),
        signal_(signal_number) {}
  [[nodiscard]] int signal_number() const noexcept { return signal_; }

 private:
  int signal_;
};

/// "file:line: message" when a line is known, "file: message" otherwise.
std::string located(const std::string& file, long line, const std::string& message);

}  // namespace habcast
