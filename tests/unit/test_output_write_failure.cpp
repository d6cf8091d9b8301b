// A full disk, simulated with a file size limit: the write error must surface as an IoError when
// the output is closed, not be lost in GDALClose. The limit applies to a child process that runs
// one hidden test case of this binary, so the rest of the suite is unaffected.
#include <sys/resource.h>
#include <sys/wait.h>
#include <unistd.h>

#include <catch2/catch.hpp>
#include <csignal>
#include <cstdlib>
#include <fstream>
#include <iterator>
#include <string>
#include <vector>

#include "core/base/error.hpp"
#include "raster/output_raster.hpp"
#include "raster_test_support.hpp"

extern char** environ;

namespace {

constexpr const char* folder_variable = "HABCAST_TEST_WRITE_FAILURE_FOLDER";
constexpr rlim_t kFileSizeLimit = 64 * 1024;

}  // namespace

TEST_CASE("Child process: closing an output that cannot be written in full throws IoError",
          "[.][raster-write-failure-child]") {
  const char* folder = std::getenv(folder_variable);
  if (folder == nullptr) return;  // meaningful only under the file size limit set by the test below
  habcast::OutputSpec spec;
  spec.final_path = std::string(folder) + "/suitability.tif";
  spec.bands = {{"suitability", ""}};
  // One partial block that stays in GDAL's cache until close, larger than the limit even compressed.
  spec.creation_options = {"NUM_THREADS=1", "COMPRESS=NONE"};
  habcast::OutputRaster output(spec, habcast::test::utm_grid(250, 250));
  std::vector<float> pixels(250 * 250);
  for (std::size_t i = 0; i < pixels.size(); ++i) pixels[i] = static_cast<float>(i);
  REQUIRE_NOTHROW(output.write(1, habcast::Window{0, 0, 250, 250}, pixels.data()));
  CHECK_THROWS_AS(output.close(), habcast::IoError);
  CHECK_THROWS_WITH(output.commit(), Catch::Matchers::Contains("suitability.tif"));
}

TEST_CASE("A write error that surfaces when the output is closed is an I/O error and leaves no file",
          "[raster][output]") {
  habcast::test::TempFolder folder;
  const std::string report = folder.file("child-report.txt");
  // Everything the child needs is prepared before fork(): between fork and exec only
  // async-signal-safe calls are allowed in a process that may have other threads.
  std::vector<std::string> environment;
  for (char** variable = environ; *variable != nullptr; ++variable) environment.emplace_back(*variable);
  environment.push_back(std::string(folder_variable) + "=" + folder.path().string());
  std::vector<char*> envp;
  for (auto& variable : environment) envp.push_back(variable.data());
  envp.push_back(nullptr);
  std::string program = "/proc/self/exe";
  std::vector<std::string> arguments = {"habcast_tests", "[raster-write-failure-child]", "-o", report};
  std::vector<char*> argv;
  for (auto& argument : arguments) argv.push_back(argument.data());
  argv.push_back(nullptr);

  const pid_t child = fork();
  if (child == 0) {
    const rlimit limit{kFileSizeLimit, kFileSizeLimit};
    setrlimit(RLIMIT_FSIZE, &limit);
    signal(SIGXFSZ, SIG_IGN);  // write() then fails with EFBIG, as it would with ENOSPC
    execve(program.c_str(), argv.data(), envp.data());
    _exit(127);
  }
  REQUIRE(child > 0);
  int status = 0;
  REQUIRE(waitpid(child, &status, 0) == child);
  std::ifstream in(report);
  INFO(std::string(std::istreambuf_iterator<char>(in), std::istreambuf_iterator<char>()));
  REQUIRE(WIFEXITED(status));
  CHECK(WEXITSTATUS(status) == 0);
  CHECK(folder.names() == std::vector<std::string>{"child-report.txt"});
}
