// Several predictions per pixel share their inputs: MemberSources lists each distinct raster
// (path and band) once, so a window decodes it once for every member that reads it.
#include <catch2/catch.hpp>
#include <string>
#include <vector>

#include "core/base/error.hpp"
#include "core/model/model_spec.hpp"
#include "predict/prediction_members.hpp"

namespace {

/// A model with the five covariates of the bench stack (landcover categorical).
habcast::ModelSpec five_covariates(const std::string& path) {
  habcast::ModelSpec spec;
  spec.path = path;
  for (const char* name : {"tmin", "precip", "slope", "soil_ph", "landcover"}) {
    habcast::Covariate c;
    c.name = name;
    c.categorical = c.name == "landcover";
    spec.covariates.push_back(c);
  }
  return spec;
}

}  // namespace

TEST_CASE("three scenarios replacing two of five covariates read eleven rasters, not twenty", "[scenarios][members]") {
  const std::vector<std::string> names{"tmin", "precip", "slope", "soil_ph", "landcover"};
  const habcast::ModelSpec spec = five_covariates("model.toml");
  std::vector<habcast::PredictionMember> members(4);
  for (auto& m : members) m.spec = &spec;
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

TEST_CASE("one raster read as a categorical and a continuous covariate is ambiguous and refused", "[members]") {
  const habcast::ModelSpec a = five_covariates("a.toml");
  habcast::ModelSpec b = five_covariates("b.toml");
  b.covariates[4].categorical = false;  // b reads landcover.tif as a number
  std::vector<habcast::PredictionMember> members(2);
  members[0].spec = &a;
  members[1].spec = &b;
  for (auto& m : members)
    for (const auto& c : a.covariates) m.inputs.push_back({c.name, c.name + ".tif", 1});
  try {
    const habcast::MemberSources sources(members);
    FAIL("no error");
  } catch (const habcast::InputError& e) {
    const std::string what = e.what();
    CHECK_THAT(what, Catch::Matchers::Contains("covariate landcover of a.toml (categorical"));
    CHECK_THAT(what, Catch::Matchers::Contains("covariate landcover of b.toml (continuous"));
  }
}
