#include "pipeline/progress.hpp"

#include <nlohmann/json.hpp>
#include <ostream>

namespace habcast {

namespace {

using Clock = std::chrono::steady_clock;

std::string format_seconds(double s) {
  const auto total = static_cast<long long>(s + 0.5);
  char buf[32];
  if (total >= 3600)
    std::snprintf(buf, sizeof buf, "%lldh%02lldm", total / 3600, (total % 3600) / 60);
  else if (total >= 60)
    std::snprintf(buf, sizeof buf, "%lldm%02llds", total / 60, total % 60);
  else
    std::snprintf(buf, sizeof buf, "%llds", total);
  return buf;
}

/// A redrawn single-line bar: "predict [########----------]  42%  120/288 blocks  ETA 12s".
class BarProgress final : public Progress {
 public:
  explicit BarProgress(std::ostream& err) : err_(err) {}
  void start(const std::string& task, std::int64_t total) override {
    task_ = task;
    total_ = total;
    begin_ = Clock::now();
    last_ = begin_ - std::chrono::seconds(1);
    draw(0, true);
  }
  void advance(std::int64_t done) override { draw(done, done == total_); }
  void finish() override {
    if (drawn_) err_ << "\n";
    drawn_ = false;
    err_.flush();
  }
  void message(const std::string& level, const std::string& text) override {
    if (drawn_) err_ << "\r\033[K";
    err_ << (level == "warning" ? "WARNING: " : "") << text << "\n";
    drawn_ = false;
  }
  void set_unit(const std::string& unit) override { unit_ = unit; }
  void note(const std::string& text) override { note_ = text; }

 private:
  void draw(std::int64_t done, bool force) {
    const auto now = Clock::now();
    if (!force && now - last_ < std::chrono::milliseconds(200)) return;
    last_ = now;
    constexpr int width = 30;
    const double fraction = total_ > 0 ? static_cast<double>(done) / static_cast<double>(total_) : 1.0;
    const int filled = static_cast<int>(fraction * width);
    std::string bar(static_cast<std::size_t>(filled), '#');
    bar.append(static_cast<std::size_t>(width - filled), '-');
    const double elapsed = std::chrono::duration<double>(now - begin_).count();
    std::string eta = "";
    if (done > 0 && done < total_) eta = "  ETA " + format_seconds(elapsed / fraction - elapsed);
    char pct[16];
    std::snprintf(pct, sizeof pct, "%3d%%", static_cast<int>(fraction * 100.0));
    err_ << "\r\033[K" << task_ << " [" << bar << "] " << pct << "  " << done << "/" << total_ << " " << unit_
         << (note_.empty() ? "" : "  " + note_) << eta;
    err_.flush();
    drawn_ = true;
  }

  std::ostream& err_;
  std::string task_;
  std::int64_t total_ = 0;
  Clock::time_point begin_, last_;
  bool drawn_ = false;
  std::string unit_ = "blocks";
  std::string note_;
};

/// One JSON object per line on stderr: {"event":"progress","task":...,"done":...,"total":...}.
class JsonProgress final : public Progress {
 public:
  explicit JsonProgress(std::ostream& err) : err_(err) {}
  void start(const std::string& task, std::int64_t total) override {
    task_ = task;
    total_ = total;
    last_ = Clock::now();
    emit({{"event", "start"}, {"task", task_}, {"total", total_}, {"unit", unit_}});
  }
  void advance(std::int64_t done) override {
    const auto now = Clock::now();
    if (done != total_ && now - last_ < std::chrono::seconds(1)) return;
    last_ = now;
    nlohmann::json event{{"event", "progress"}, {"task", task_}, {"done", done}, {"total", total_}};
    if (!note_.empty()) event["note"] = note_;
    emit(event);
  }
  void finish() override { emit({{"event", "finish"}, {"task", task_}}); }
  void message(const std::string& level, const std::string& text) override {
    emit({{"event", "message"}, {"level", level}, {"text", text}});
  }
  void set_unit(const std::string& unit) override { unit_ = unit; }
  void note(const std::string& text) override { note_ = text; }

 private:
  void emit(const nlohmann::json& j) { err_ << j.dump() << "\n" << std::flush; }
  std::ostream& err_;
  std::string task_;
  std::int64_t total_ = 0;
  Clock::time_point last_;
  std::string unit_ = "blocks";
  std::string note_;
};

/// No bar; messages still printed as plain lines (quiet drops informational ones).
class PlainProgress final : public Progress {
 public:
  PlainProgress(std::ostream& err, bool quiet) : err_(err), quiet_(quiet) {}
  void start(const std::string&, std::int64_t) override {}
  void advance(std::int64_t) override {}
  void finish() override {}
  void message(const std::string& level, const std::string& text) override {
    if (quiet_ && level == "info") return;
    err_ << (level == "warning" ? "WARNING: " : "") << text << "\n";
  }

 private:
  std::ostream& err_;
  bool quiet_;
};

}  // namespace

std::unique_ptr<Progress> make_progress(ProgressStyle style, std::ostream& err, bool err_is_terminal) {
  switch (style) {
    case ProgressStyle::bar: return std::make_unique<BarProgress>(err);
    case ProgressStyle::json: return std::make_unique<JsonProgress>(err);
    case ProgressStyle::quiet: return std::make_unique<PlainProgress>(err, true);
    case ProgressStyle::automatic:
      if (err_is_terminal) return std::make_unique<BarProgress>(err);
      return std::make_unique<PlainProgress>(err, false);
  }
  return std::make_unique<PlainProgress>(err, false);
}

}  // namespace habcast
