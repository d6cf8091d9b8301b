#pragma once
// Progress of long work: a bar on a terminal, JSON lines for pipelines, or nothing.
#include <chrono>
#include <cstdint>
#include <iosfwd>
#include <memory>
#include <string>

namespace habcast {

class Progress {
 public:
  virtual ~Progress() = default;
  virtual void start(const std::string& task, std::int64_t total) = 0;
  virtual void advance(std::int64_t done) = 0;
  virtual void finish() = 0;
  /// A message for the user (warnings, summaries): text line or JSON event.
  virtual void message(const std::string& level, const std::string& text) = 0;
  /// What `total` counts ("blocks" unless set); call before start().
  virtual void set_unit(const std::string& unit) { (void)unit; }
  /// A short status shown beside the count (e.g. "3/9 tiles, 1 failed"); kept until replaced.
  virtual void note(const std::string& text) { (void)text; }
};

enum class ProgressStyle { automatic, bar, json, quiet };

/// `automatic` shows a bar only when `err` is a terminal (stderr), otherwise plain messages.
std::unique_ptr<Progress> make_progress(ProgressStyle style, std::ostream& err, bool err_is_terminal);

}  // namespace habcast
