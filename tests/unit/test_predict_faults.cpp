// Faults during a real `habcast predict` process (the built binary, run as a child): a disk that
// fills part-way, SIGINT and SIGTERM, and SIGKILL. Whatever happens, no file under a final name is
// partial, earlier outputs stay intact, and a re-run after SIGKILL gives bit-identical rasters.
#include <signal.h>
#include <sys/resource.h>
#include <sys/wait.h>
#include <unistd.h>

#include <catch2/catch.hpp>
#include <cerrno>
#include <cmath>
#include <map>
#include <string>
#include <vector>

#include "test_support.hpp"

extern char** environ;

namespace {

using Catch::Matchers::Contains;
using habcast::test::GridSpec;
using habcast::test::TempDir;

/// A `habcast` child process whose stderr the test reads through a pipe.
class Child {
 public:
  /// Starts HABCAST_BINARY with `args`; `file_size_limit` > 0 sets RLIMIT_FSIZE in the child.
  explicit Child(const std::vector<std::string>& args, rlim_t file_size_limit = 0) {
    // Everything the child needs is built before fork(): only async-signal-safe calls may run
    // between fork and exec in a process that has other threads (GDAL's, Catch's).
    std::vector<std::string> arguments{HABCAST_BINARY};
    arguments.insert(arguments.end(), args.begin(), args.end());
    std::vector<char*> argv;
    for (auto& a : arguments) argv.push_back(a.data());
    argv.push_back(nullptr);
    int fds[2];
    REQUIRE(pipe(fds) == 0);
    pid_ = fork();
    REQUIRE(pid_ >= 0);
    if (pid_ == 0) {
      dup2(fds[1], STDERR_FILENO);
      close(fds[0]);
      close(fds[1]);
      if (file_size_limit > 0) {
        const rlimit limit{file_size_limit, file_size_limit};
        setrlimit(RLIMIT_FSIZE, &limit);
        signal(SIGXFSZ, SIG_IGN);  // write() then fails with EFBIG, as it would with ENOSPC
      }
      execve(argv[0], argv.data(), environ);
      _exit(127);
    }
    close(fds[1]);
    err_ = fds[0];
  }
  ~Child() {
    if (pid_ > 0) {
      kill(pid_, SIGKILL);
      waitpid(pid_, nullptr, 0);
    }
    if (err_ >= 0) close(err_);
  }
  Child(const Child&) = delete;
  Child& operator=(const Child&) = delete;

  /// Reads stderr until `needle` appears (true) or the child closes it (false).
  bool read_until(const std::string& needle) {
    while (text_.find(needle) == std::string::npos) {
      if (!read_some()) return false;
    }
    return true;
  }
  void signal_child(int signal_number) const { REQUIRE(kill(pid_, signal_number) == 0); }
  /// Waits for the child: its exit code, or 128 + the signal that killed it.
  int wait() {
    while (read_some()) {
    }
    int status = 0;
    REQUIRE(waitpid(pid_, &status, 0) == pid_);
    pid_ = -1;
    return WIFEXITED(status) ? WEXITSTATUS(status) : 128 + WTERMSIG(status);
  }
  [[nodiscard]] const std::string& stderr_text() const { return text_; }

 private:
  bool read_some() {
    char buffer[4096];
    ssize_t n = 0;
    do {
      n = read(err_, buffer, sizeof buffer);
    } while (n < 0 && errno == EINTR);
    if (n <= 0) return false;
    text_.append(buffer, static_cast<std::size_t>(n));
    return true;
  }
  pid_t pid_ = -1;
  int err_ = -1;
  std::string text_;
};

/// A model with covariance and training samples (all three rasters are written) over a
/// size x size raster in 16 x 16 tiles: with --block-size 16 and one thread a 2000 x 2000 run
/// takes 15,625 windows, long enough to be interrupted after it has started writing.
struct FaultScene {
  TempDir dir{"faults"};
  std::string model = dir.file("m.toml");

  explicit FaultScene(int size = 2000) {
    GridSpec grid{size, size};
    habcast::test::write_raster(dir.file("x.tif"), grid, "Float32",
                                [](int r, int c) { return std::fmod(r * 0.013 + c * 0.007, 9.0); });
    habcast::test::write_text(dir.file("t.csv"), "x\n1\n2.5\n6\n");
    habcast::test::write_text(model,
                              "habcast_model = 1\n[model]\nfamily = \"binomial\"\n[training]\nsamples = \"t.csv\"\n"
                              "[covariates.x]\nraster = \"x.tif\"\ncenter = 3\nscale = 2\n[coefficients]\n"
                              "terms = [\"(Intercept)\", \"x\", \"x^2\"]\nestimates = [0.1, 0.8, -0.6]\n"
                              "covariance = [[0.1, 0.01, 0.0], [0.01, 0.2, 0.02], [0.0, 0.02, 0.05]]\n");
  }
  std::vector<std::string> slow_args(const std::string& out) const {
    return {"predict", model, "-o", out, "--block-size", "16", "--threads", "1", "--log-format", "json"};
  }
};

const std::vector<std::string> kRasters{"extrapolation.tif", "suitability.tif", "uncertainty.tif"};

std::map<std::string, std::string> contents(const std::string& folder) {
  std::map<std::string, std::string> files;
  for (const std::string& name : habcast::test::list_dir(folder))
    files[name] = habcast::test::read_text(folder + "/" + name);
  return files;
}

bool is_partial(const std::string& name) {
  return name.front() == '.' && (name.ends_with(".partial") || name.ends_with(".partial.aux.xml"));
}

/// A leftover of a killed run: a temporary file, or the lock file (whose lock died with the run).
bool is_leftover(const std::string& name) { return is_partial(name) || name == ".habcast.lock"; }

}  // namespace

TEST_CASE("a disk that fills during predict gives exit code 4 and keeps the earlier outputs", "[faults]") {
  FaultScene s(300);
  const std::string out = s.dir.file("out");
  REQUIRE(habcast::test::run_cli({"predict", s.model, "-o", out, "-q"}) == 0);
  const auto before = contents(out);
  // suitability, uncertainty, extrapolation (+ .aux.xml), novelty, least_similar (+ .aux.xml), report.json
  REQUIRE(before.size() == 8);

  // Uncompressed, suitability alone is 300 * 300 * 4 bytes: it cannot fit under 64 KiB.
  Child child({"predict", s.model, "-o", out, "--overwrite", "--co", "COMPRESS=NONE", "-q"}, 64 * 1024);
  CHECK(child.wait() == 4);
  // RLIMIT_FSIZE gives EFBIG; the message names the limit, not libtiff's words alone.
  CHECK_THAT(child.stderr_text(), Contains("habcast: error:") && Contains(".tif") && Contains("file-size limit"));
  CHECK(contents(out) == before);  // same names, same bytes: no partial file, nothing clobbered
}

TEST_CASE("SIGINT and SIGTERM during predict exit with 130 and 143 and leave no file behind", "[faults]") {
  FaultScene s;
  for (const int signal_number : {SIGINT, SIGTERM}) {
    const std::string out = s.dir.file("out-" + std::to_string(signal_number));
    Child child(s.slow_args(out));
    // "start" is printed once every output's temporary file exists.
    REQUIRE(child.read_until("\"event\":\"start\""));
    child.signal_child(signal_number);
    CHECK(child.wait() == 128 + signal_number);
    CHECK_THAT(child.stderr_text(), Contains("interrupted by signal " + std::to_string(signal_number)));
    CHECK(habcast::test::list_dir(out).empty());
  }
}

TEST_CASE("after SIGKILL only hidden partial files remain, and a re-run removes them and matches", "[faults]") {
  FaultScene s(1000);  // 3,907 windows: still long enough to kill, and two full runs stay quick
  const std::string out = s.dir.file("out");
  {
    Child child(s.slow_args(out));
    REQUIRE(child.read_until("\"event\":\"start\""));
    child.signal_child(SIGKILL);
    CHECK(child.wait() == 128 + SIGKILL);
  }
  const std::vector<std::string> left = habcast::test::list_dir(out);
  CHECK(left.size() >= 3);
  for (const std::string& name : left) {
    INFO(name);
    CHECK(is_leftover(name));
  }

  const std::string reference = s.dir.file("reference");
  REQUIRE(habcast::test::run_cli({"predict", s.model, "-o", reference, "-q"}) == 0);
  REQUIRE(habcast::test::run_cli({"predict", s.model, "-o", out, "-q"}) == 0);
  const std::vector<std::string> names = habcast::test::list_dir(out);
  CHECK(names == habcast::test::list_dir(reference));
  for (const std::string& name : names) CHECK_FALSE(is_partial(name));
  for (const std::string& raster : kRasters) {
    INFO(raster);
    CHECK(habcast::test::read_text(out + "/" + raster) == habcast::test::read_text(reference + "/" + raster));
  }
}
