// Shards: every process of a job array takes a fixed share of the tiles; together the shares cover
// every tile exactly once, and a final --mosaic-only step finds them all done.
#include <catch2/catch.hpp>
#include <filesystem>
#include <set>
#include <string>

#include "batch/shard.hpp"
#include "batch_test_scene.hpp"
#include "core/base/error.hpp"

using Catch::Matchers::Contains;

TEST_CASE("the shards 1/N..N/N cover every tile exactly once, for several N", "[batch]") {
  for (std::size_t tiles : {0u, 1u, 2u, 7u, 9u, 40u}) {
    for (int n = 1; n <= 8; ++n) {
      std::vector<int> seen(tiles, 0);
      for (int k = 1; k <= n; ++k)
        for (const std::size_t i : habcast::shard_positions(tiles, {k, n})) {
          REQUIRE(i < tiles);
          ++seen[i];
        }
      for (std::size_t i = 0; i < tiles; ++i) {
        INFO("tiles " << tiles << ", N " << n << ", tile " << i);
        CHECK(seen[i] == 1);
      }
    }
  }
}

TEST_CASE("shard shares differ in size by at most one tile", "[batch]") {
  for (int n = 1; n <= 6; ++n) {
    std::set<std::size_t> sizes;
    for (int k = 1; k <= n; ++k) sizes.insert(habcast::shard_positions(20, {k, n}).size());
    CHECK(*sizes.rbegin() - *sizes.begin() <= 1);
  }
}

TEST_CASE("the shard option takes K/N with 1 <= K <= N only", "[batch]") {
  CHECK(habcast::parse_shard("3/8").index == 3);
  CHECK(habcast::parse_shard("3/8").count == 8);
  for (const char* bad : {"0/4", "5/4", "4", "a/b", "1/0", "-1/3", "1/3/5", "", "2/ 3"})
    CHECK_THROWS_AS(habcast::parse_shard(bad), habcast::UsageError);
  try {
    habcast::parse_shard("5/4");
  } catch (const habcast::UsageError& e) {
    CHECK_THAT(std::string(e.what()), Contains("SLURM_ARRAY_TASK_ID"));
  }
}

TEST_CASE("shard runs of the command line each do their share, and --mosaic-only joins them", "[batch]") {
  habcast::test::BatchScene s(2, 3, 18, 14);
  const int n = 4;
  std::set<std::string> done;
  std::size_t runs = 0;
  for (int k = 1; k <= n; ++k) {
    std::string out;
    const std::vector<std::string> args{"batch", s.manifest(), "--shard", std::to_string(k) + "/" + std::to_string(n),
                                        "--threads", "1"};
    REQUIRE(habcast::test::run_cli(args, &out) == 0);
    // 6 tiles over 4 shards: 2, 2, 1, 1 tiles, each run by this shard only.
    const std::size_t share = k <= 2 ? 2 : 1;
    CHECK_THAT(out, Contains("Shard " + std::to_string(k) + "/4: " + std::to_string(share) + " tiles; " +
                             std::to_string(share) + " run, 0 up to date"));
    runs += share;
    // A shard writes no region files: several may run at once into the same folder.
    CHECK_FALSE(std::filesystem::exists(s.out() + "/batch-report.json"));
    CHECK_FALSE(std::filesystem::exists(s.out() + "/suitability.vrt"));
    for (const std::string& id : habcast::test::list_dir(s.out() + "/tiles"))
      if (std::filesystem::exists(s.out() + "/tiles/" + id + "/tile-record.json")) done.insert(id);
    CHECK(done.size() == runs);  // no tile of an earlier shard was run again
  }
  CHECK(done.size() == 6);
  std::string out;
  REQUIRE(s.run({"--mosaic-only"}, &out) == 0);
  CHECK(std::filesystem::exists(s.out() + "/suitability.vrt"));
  CHECK_THAT(habcast::test::read_text(s.out() + "/batch-report.json"), Contains("\"tiles_done\": 6"));
  // A second pass over all shards finds nothing to do.
  for (int k = 1; k <= n; ++k) {
    std::string again;
    REQUIRE(habcast::test::run_cli({"batch", s.manifest(), "--shard", std::to_string(k) + "/4"}, &again) == 0);
    CHECK_THAT(again, Contains(" 0 run,"));
  }
}

TEST_CASE("mosaic-only together with a shard or force is a usage error", "[batch]") {
  habcast::test::BatchScene s(1, 2, 18, 14);
  std::string err;
  CHECK(s.run({"--mosaic-only", "--shard", "1/2"}, nullptr, &err) == 2);
  CHECK_THAT(err, Contains("--mosaic-only and --shard"));
  CHECK(s.run({"--shard", "3/2"}, nullptr, &err) == 2);
}
