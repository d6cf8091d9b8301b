// Covariates over HTTP (/vsicurl/), served with byte ranges by a real web server, Debian's
// lighttpd, which this test starts on 127.0.0.1 (a free port) and stops by its process id. The
// prediction must equal the one made from the same files on disk, pixel for pixel.
//
// Hidden from the ordinary run ([.lighttpd]); ctest runs it as its own test (tests/CMakeLists.txt)
// and counts exit code 77 - the server could not be started - as skipped, never as passed.
#include <arpa/inet.h>
#include <fcntl.h>
#include <netinet/in.h>
#include <signal.h>
#include <sys/socket.h>
#include <sys/wait.h>
#include <unistd.h>

#include <catch2/catch.hpp>
#include <chrono>
#include <cmath>
#include <cstdlib>
#include <cstring>
#include <filesystem>
#include <iostream>
#include <string>
#include <thread>
#include <vector>

#include "test_support.hpp"

namespace {

constexpr int kSkip = 77;

[[noreturn]] void skip(const std::string& why) {
  std::cerr << "\n*** SKIPPED: the /vsicurl/ test against lighttpd did not run: " << why << " ***\n";
  std::exit(kSkip);
}

int free_port() {
  const int s = socket(AF_INET, SOCK_STREAM, 0);
  if (s < 0) skip("no socket");
  sockaddr_in address{};
  address.sin_family = AF_INET;
  address.sin_addr.s_addr = htonl(INADDR_LOOPBACK);
  address.sin_port = 0;
  socklen_t size = sizeof address;
  if (bind(s, reinterpret_cast<sockaddr*>(&address), sizeof address) != 0 ||
      getsockname(s, reinterpret_cast<sockaddr*>(&address), &size) != 0) {
    close(s);
    skip("cannot bind a port on 127.0.0.1");
  }
  const int port = ntohs(address.sin_port);
  close(s);
  return port;
}

bool accepts(int port) {
  const int s = socket(AF_INET, SOCK_STREAM, 0);
  sockaddr_in address{};
  address.sin_family = AF_INET;
  address.sin_addr.s_addr = htonl(INADDR_LOOPBACK);
  address.sin_port = htons(static_cast<std::uint16_t>(port));
  const bool ok = connect(s, reinterpret_cast<sockaddr*>(&address), sizeof address) == 0;
  close(s);
  return ok;
}

/// lighttpd in the foreground, stopped (SIGTERM, then SIGKILL) by its pid when this goes.
class WebServer {
 public:
  WebServer(const std::string& root, const std::string& work) {
    std::string binary;
    for (const char* candidate : {"/usr/sbin/lighttpd", "/usr/bin/lighttpd"})
      if (access(candidate, X_OK) == 0) binary = candidate;
    if (binary.empty()) skip("lighttpd is not installed (scripts/install-deps.sh installs it)");
    port_ = free_port();
    const std::string config = work + "/lighttpd.conf";
    habcast::test::write_text(config, "server.document-root = \"" + root + "\"\nserver.bind = \"127.0.0.1\"\nserver.port = " +
                                          std::to_string(port_) + "\nserver.errorlog = \"" + work +
                                          "/lighttpd-error.log\"\nmimetype.assign = (\".tif\" => \"image/tiff\", "
                                          "\".zip\" => \"application/zip\")\n");
    const std::string log = work + "/lighttpd.log";
    pid_ = fork();
    if (pid_ < 0) skip("cannot fork");
    if (pid_ == 0) {
      const int fd = open(log.c_str(), O_WRONLY | O_CREAT | O_TRUNC, 0644);
      if (fd >= 0) {
        dup2(fd, 1);
        dup2(fd, 2);
      }
      execl(binary.c_str(), "lighttpd", "-D", "-f", config.c_str(), static_cast<char*>(nullptr));
      _exit(127);
    }
    for (int i = 0; i < 100; ++i) {
      if (accepts(port_)) return;
      int status = 0;
      if (waitpid(pid_, &status, WNOHANG) == pid_) {
        pid_ = -1;
        skip("lighttpd exited at start: " + habcast::test::read_text(log));
      }
      std::this_thread::sleep_for(std::chrono::milliseconds(100));
    }
    stop();
    skip("lighttpd did not accept connections on port " + std::to_string(port_) + " within 10 s");
  }
  ~WebServer() { stop(); }
  WebServer(const WebServer&) = delete;
  WebServer& operator=(const WebServer&) = delete;
  [[nodiscard]] std::string url(const std::string& name) const {
    return "/vsicurl/http://127.0.0.1:" + std::to_string(port_) + "/" + name;
  }

 private:
  void stop() {
    if (pid_ <= 0) return;
    kill(pid_, SIGTERM);
    for (int i = 0; i < 50; ++i) {
      if (waitpid(pid_, nullptr, WNOHANG) == pid_) {
        pid_ = -1;
        return;
      }
      std::this_thread::sleep_for(std::chrono::milliseconds(100));
    }
    kill(pid_, SIGKILL);
    waitpid(pid_, nullptr, 0);
    pid_ = -1;
  }
  int port_ = 0;
  pid_t pid_ = -1;
};

const char* kModel =
    "habcast_model = 1\n[model]\nfamily = \"gaussian\"\n"
    "[covariates.elev]\nraster = \"elev.tif\"\n"
    "[covariates.temp]\nraster = \"temp.tif\"\n"
    "[coefficients]\nterms = [\"(Intercept)\", \"elev\", \"temp\"]\nestimates = [1.0, 0.01, 0.5]\n";

}  // namespace

TEST_CASE("covariates over HTTP from lighttpd (/vsicurl/) give the prediction the files give", "[.lighttpd]") {
  habcast::test::TempDir dir("vsicurl");
  const std::string root = dir.file("served");
  std::filesystem::create_directories(root);
  habcast::test::GridSpec target{64, 48};
  habcast::test::write_raster(root + "/elev.tif", target, "Float32", [](int r, int c) { return 300.0 + r * 7 + c * 3; });
  habcast::test::GridSpec geo{40, 40};
  geo.origin_x = -3.05;
  geo.origin_y = 36.2;
  geo.pixel = 0.005;
  geo.epsg = 4326;
  habcast::test::write_raster(root + "/temp.tif", geo, "Float32", [](int r, int c) { return 12.0 + std::sin(c * 0.4) * 3 + r * 0.1; });
  const std::string model = root + "/model.toml";
  habcast::test::write_text(model, kModel);
  REQUIRE(habcast::test::run_cli({"predict", model, "-o", dir.file("local"), "-q"}) == 0);

  setenv("no_proxy", "127.0.0.1", 1);  // a proxy in the environment must not stand between
  setenv("NO_PROXY", "127.0.0.1", 1);
  setenv("GDAL_DISABLE_READDIR_ON_OPEN", "EMPTY_DIR", 1);
  WebServer server(root, dir.path().string());
  std::string err;
  REQUIRE(habcast::test::run_cli({"predict", model, "-o", dir.file("http"), "-q", "-c", "elev=" + server.url("elev.tif"), "-c",
                                  "temp=" + server.url("temp.tif")},
                                 nullptr, &err) == 0);
  const std::vector<double> local = habcast::test::read_band(dir.file("local") + "/suitability.tif");
  const std::vector<double> remote = habcast::test::read_band(dir.file("http") + "/suitability.tif");
  REQUIRE(local.size() == remote.size());
  CHECK(std::memcmp(local.data(), remote.data(), local.size() * sizeof(double)) == 0);
  const std::string report = habcast::test::read_text(dir.file("http") + "/report.json");
  CHECK(report.find("/vsicurl/http://127.0.0.1:") != std::string::npos);
}
