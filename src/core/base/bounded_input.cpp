#include "core/base/bounded_input.hpp"

#include <atomic>
#include <fstream>

#include "core/base/error.hpp"

namespace habcast {

namespace {

std::atomic<void (*)()> g_stop_poll{nullptr};

std::string mebibytes(std::size_t bytes) { return std::to_string(bytes >> 20) + " MiB"; }

}  // namespace

void set_stop_poll(void (*hook)()) { g_stop_poll.store(hook); }

void poll_stop() {
  if (auto* hook = g_stop_poll.load()) hook();
}

std::string read_text_file_bounded(const std::string& path, std::size_t max_bytes, const std::string& what) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw InputError(path + ": cannot open " + what + "; check the path and that it is readable");
  std::string text;
  char buffer[1 << 16];
  while (in) {
    in.read(buffer, sizeof buffer);
    text.append(buffer, static_cast<std::size_t>(in.gcount()));
    if (text.size() > max_bytes)
      throw InputError(path + ": larger than the " + mebibytes(max_bytes) + " " + what + " may be (docs/limits.md); " +
                       "is this the right file?");
    poll_stop();
  }
  if (in.bad()) throw InputError(path + ": cannot read " + what);
  return text;
}

LineReader::LineReader(std::istream& in, std::string path, std::size_t max_line)
    : in_(in), path_(std::move(path)), max_line_(max_line) {}

bool LineReader::next(std::string& line) {
  line.clear();
  std::streambuf* buffer = in_.rdbuf();
  if (buffer == nullptr) return false;
  if ((line_number_ & 4095) == 0) poll_stop();
  bool any = false;
  for (;;) {
    const int c = buffer->sbumpc();
    if (c == std::char_traits<char>::eof()) {
      if (any) ++line_number_;
      return any;
    }
    any = true;
    if (c == '\n') {
      ++line_number_;
      return true;
    }
    line.push_back(static_cast<char>(c));
    if (line.size() > max_line_) {
      throw InputError(located(path_, line_number_ + 1, "a line longer than " + mebibytes(max_line_) +
                                                            " (docs/limits.md); is this the right file?"));
    }
    // A long line without breaks (a device, a binary file) must still answer Ctrl-C.
    if ((line.size() & 0xFFFFF) == 0) poll_stop();
  }
}

}  // namespace habcast
