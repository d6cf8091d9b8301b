// Every number option refuses NaN and infinities: CLI11 reads them as numbers and its range checks
// let NaN through, so `--max-extrapolated nan` used to switch the exit-5 gate off silently.
#include <catch2/catch.hpp>
#include <filesystem>
#include <string>
#include <vector>

#include "test_support.hpp"

using Catch::Matchers::Contains;

TEST_CASE("Number options refuse NaN and infinities with a usage error naming the option", "[safety][options]") {
  const std::string model = habcast::test::source_path("sample-rasters/demo-model.toml");
  habcast::test::TempDir dir("numbers");
  habcast::test::write_text(dir.file("p.csv"), "x,y,seen\n1,2,1\n");
  const std::vector<std::vector<std::string>> cases = {
      {"predict", model, "-o", dir.file("o"), "--max-extrapolated", "nan"},
      {"predict", model, "-o", dir.file("o"), "--nt2-threshold", "inf"},
      {"predict", model, "-o", dir.file("o"), "--hull-tolerance", "NaN"},
      {"predict", model, "-o", dir.file("o"), "--max-error", "-inf"},
      {"describe", model, "--confidence", "nan"},
      {"describe", model, "--fraction", "nan"},
      {"describe", model, "--at", "slope=nan"},
      {"evaluate", dir.file("p.csv"), "--model", model, "--response", "seen", "--threshold", "nan"},
  };
  for (const auto& args : cases) {
    INFO(args[0] << " " << args[args.size() - 2] << " " << args.back());
    std::string err;
    CHECK(habcast::test::run_cli(args, nullptr, &err) == 2);
    CHECK_THAT(err, Contains("finite number") || Contains("not a finite"));
  }
  CHECK_FALSE(std::filesystem::exists(dir.file("o")));
}
