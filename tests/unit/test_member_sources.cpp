// Several predictions per pixel share their inputs: MemberSources lists each distinct raster
// (path and band) once, so a window decodes it once for every member that reads it.
#include <catch2/catch.hpp>
#include <string>
#include <vector>

#include "predict/prediction_members.hpp"

TEST_CASE("three scenarios replacing two of five covariates read eleven rasters, not twenty", "[scenarios][members]") {
  const std::vector<std::string> names{"tmin", "precip", "slope", "soil_ph", "landcover"};
  std::vector<habcast::PredictionMember> members(4);
  for (std::size_t m = 0; m < members.size(); ++m)
    for (const std::string& n : names) {
      std::string path = n + ".tif";
      if (m > 0 && (n == "tmin" || n == "precip")) path = n + "_s" + std::to_string(m) + ".tif";
      members[m].inputs.push_back({n, path, 1});
    }
  // The same file spelled differently, and another band of it, in a fifth member.
  members.push_back(members.front());
  members.back().inputs[2].path = "./slope.tif";
  members.back().inputs[3].band = 2;
  const habcast::MemberSources sources(members);
  CHECK(sources.sources.size() == 5 + 3 * 2 + 1);  // soil_ph band 2 is a raster of its own
  // Every member's slope comes from one source; the scenarios' soil_ph from the baseline's.
  for (std::size_t m = 0; m < members.size(); ++m) CHECK(sources.of_member[m][2] == sources.of_member[0][2]);
  for (std::size_t m = 1; m < 4; ++m) {
    CHECK(sources.of_member[m][3] == sources.of_member[0][3]);
    CHECK(sources.of_member[m][0] != sources.of_member[0][0]);
  }
  CHECK(sources.of_member[4][3] != sources.of_member[0][3]);
}
