#pragma once
// Reading text inputs with limits: a model file or a table may be a device (/dev/zero), a file
// without a line break, or simply huge; each read stops at a stated size (docs/limits.md) and
// polls for a stop request as it goes, so Ctrl-C and a scheduler's SIGTERM are honoured while
// loading too.
#include <cstddef>
#include <istream>
#include <string>

namespace habcast {

/// Set by the command's signal handling (pipeline/stop_signal): throws when a stop was requested.
/// Long reads in the core call poll_stop(); without a hook it does nothing.
void set_stop_poll(void (*hook)());
void poll_stop();

/// The whole file at `path`, at most `max_bytes`. Throws InputError naming the file and `what`
/// (e.g. "a model file") when it is larger, and when it cannot be opened or read.
std::string read_text_file_bounded(const std::string& path, std::size_t max_bytes, const std::string& what);

/// Lines of a stream ('\n' ends a line; a '\r' before it is kept, for the caller to strip), each
/// at most `max_line` bytes; polls for a stop request every few thousand lines.
class LineReader {
 public:
  LineReader(std::istream& in, std::string path, std::size_t max_line);
  /// The next line; false at the end. Throws InputError naming the file and line when a line is
  /// longer than the limit.
  bool next(std::string& line);
  [[nodiscard]] long line_number() const { return line_number_; }

 private:
  std::istream& in_;
  std::string path_;
  std::size_t max_line_;
  long line_number_ = 0;
};

}  // namespace habcast
