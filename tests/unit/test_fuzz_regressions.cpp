// Inputs the fuzzers (fuzz/, scripts/fuzz.sh) found to misbehave, and their relatives found by
// reading the code the finding pointed at. Each must now give a clear error or a defined result.
#include <catch2/catch.hpp>
#include <cstdint>
#include <limits>
#include <map>
#include <cmath>
#include <string>
#include <vector>

#include "core/base/error.hpp"
#include "core/domain/extrapolation_flags.hpp"
#include "core/domain/training_domain.hpp"
#include "core/domain/training_samples.hpp"
#include "core/model/model_values.hpp"
#include "core/model/term_plan.hpp"
#include "core/model/term_syntax.hpp"

namespace {

using Catch::Matchers::Contains;

habcast::ModelSpec soil_spec() {
  habcast::ModelSpec spec;
  spec.path = "model.toml";
  habcast::Covariate tmin;
  tmin.name = "tmin";
  habcast::Covariate soil;
  soil.name = "soil";
  soil.categorical = true;
  soil.levels = {{1, "peat"}, {2, "clay"}};
  soil.reference_level = "peat";
  spec.covariates = {tmin, soil};
  spec.terms = {"(Intercept)", "tmin", "soil[clay]"};
  spec.term_lines = {1, 1, 1};
  spec.estimates = {0.0, 1.0, 1.0};
  return spec;
}

}  // namespace

TEST_CASE("a training level code too large for an integer is reported, not converted", "[fuzz-regression]") {
  // fuzz_training_samples, crash-1db80f67: converting 2.6e40 to int64 was undefined behaviour.
  const habcast::ModelSpec spec = soil_spec();
  const std::string csv = "\xEF\xBB\xBFtmin,soil\r\n1,25555555555555555555555555555555555555555\r\n";
  CHECK_THROWS_WITH(habcast::parse_training_samples(csv, "train.csv", spec),
                    Contains("train.csv:2:") && Contains("level code 25555555555555555555555555555555555555555") &&
                        Contains("not declared"));
  CHECK_THROWS_WITH(habcast::parse_training_samples("tmin,soil\n1,-1e300\n", "train.csv", spec),
                    Contains("train.csv:2:") && Contains("-1e300"));
}

TEST_CASE("level codes are whole numbers within the 64-bit range, nothing else", "[fuzz-regression]") {
  CHECK(habcast::level_code(7.0) == std::optional<std::int64_t>(7));
  CHECK(habcast::level_code(-9223372036854775808.0) == std::optional<std::int64_t>(std::numeric_limits<std::int64_t>::min()));
  CHECK_FALSE(habcast::level_code(9223372036854775808.0));  // 2^63
  CHECK_FALSE(habcast::level_code(2.5));
  CHECK_FALSE(habcast::level_code(1e30));
  CHECK_FALSE(habcast::level_code(std::numeric_limits<double>::quiet_NaN()));
  CHECK_FALSE(habcast::level_code(-std::numeric_limits<double>::infinity()));
}

TEST_CASE("a categorical raster value beyond any code is an unknown level and is flagged", "[fuzz-regression]") {
  // Same conversion as the fuzz finding, reached from a float raster holding 1e30 or -FLT_MAX.
  const habcast::ModelSpec spec = soil_spec();
  const habcast::TermPlan plan(spec);
  const habcast::TrainingSamples samples =
      habcast::parse_training_samples("tmin,soil\n0,1\n2,2\n", "train.csv", spec);
  const habcast::TrainingDomain domain(spec, samples);
  Eigen::ArrayXXd raw(3, 2);
  raw << 1.0, 1e30, 1.0, -3.4028234663852886e38, 1.0, 2.0;
  std::vector<std::uint8_t> valid(3, 1);
  habcast::ModelValues values(3, 2);
  habcast::ModelValueCounts counts;
  habcast::to_model_values(spec, plan, raw, 0, 3, values, valid.data(), counts);
  CHECK(valid == std::vector<std::uint8_t>{0, 0, 1});
  CHECK(counts.unknown_level == 2);

  std::vector<std::uint8_t> flags(3);
  std::vector<std::uint8_t> all_valid(3, 1);
  habcast::DomainTally tally(2);
  domain.flag(raw, 3, all_valid.data(), flags.data(), tally);
  CHECK(flags == std::vector<std::uint8_t>{4, 4, 0});
  CHECK(tally.unseen[1] == 2);
  CHECK(tally.unseen_codes[1].at(std::numeric_limits<std::int64_t>::max()) == 1);
  CHECK(tally.unseen_codes[1].at(std::numeric_limits<std::int64_t>::min()) == 1);
}

TEST_CASE("a factor repeated until its powers exceed 18 is refused", "[fuzz-regression]") {
  // The invariant fuzz_term checks (powers 1..18 after merging) did not hold for "x:x:...:x".
  const habcast::ModelSpec spec = soil_spec();
  CHECK(habcast::parse_term("tmin^9:tmin^9", spec, "m.toml", 4).factors.at(0).power == 18);
  std::string label = "tmin";
  for (int i = 1; i < 19; ++i) label += ":tmin";
  CHECK_THROWS_WITH(habcast::parse_term(label, spec, "m.toml", 4),
                    Contains("m.toml:4:") && Contains("add up to 19") && Contains("at most 18"));
}

TEST_CASE("a raw value whose model value overflows loses its pixel and is counted once", "[fuzz-regression]") {
  // (raw - center) / scale overflows to infinity for a huge raw value over a tiny scale. The
  // vectorised loop only marks such pixels; they are counted afterwards. 37 rows, so both the
  // vector body and its remainder see lost pixels and pixels already invalid on entry.
  habcast::ModelSpec spec = soil_spec();
  spec.covariates[0].scale = 1e-300;
  const habcast::TermPlan plan(spec);
  const Eigen::Index n = 37;
  Eigen::ArrayXXd raw(n, 2);
  raw.col(0).setConstant(1e-290);  // model value 1e10: fine
  raw.col(1).setConstant(1.0);
  std::vector<std::uint8_t> valid(static_cast<std::size_t>(n), 1);
  for (Eigen::Index i : {0, 17, 36}) raw(i, 0) = 1e10;  // overflows: lost
  raw(5, 0) = 1e10;  // overflows, but already invalid: not counted again
  valid[5] = 0;
  valid[9] = 0;  // invalid with a fine value
  habcast::ModelValues values(n, 2);
  habcast::ModelValueCounts counts;
  habcast::to_model_values(spec, plan, raw, 0, n, values, valid.data(), counts);
  CHECK(counts.outside_transform == 3);
  for (Eigen::Index i = 0; i < n; ++i) {
    const bool lost = i == 0 || i == 17 || i == 36 || i == 5 || i == 9;
    INFO("row " << i);
    CHECK(valid[static_cast<std::size_t>(i)] == (lost ? 0 : 1));
    CHECK(values(i, 0) == (lost ? 0.0 : 1e10));
  }

  // A covariate no term uses loses no pixel, and counts none.
  spec.terms = {"(Intercept)", "soil[clay]"};
  spec.term_lines = {1, 1};
  spec.estimates = {0.0, 1.0};
  const habcast::TermPlan without_tmin(spec);
  std::vector<std::uint8_t> all(static_cast<std::size_t>(n), 1);
  habcast::ModelValueCounts none;
  habcast::to_model_values(spec, without_tmin, raw, 0, n, values, all.data(), none);
  CHECK(none.outside_transform == 0);
  CHECK(all == std::vector<std::uint8_t>(static_cast<std::size_t>(n), 1));
  CHECK(values(17, 0) == 0.0);
}

TEST_CASE("categorical values map to levels as level_code and level_index say", "[fuzz-regression]") {
  // The model-value loop remembers the last code's level (class rasters come in runs); whatever
  // the run, each raw value must get the level that level_code() and Covariate::level_index() give
  // it, with small and large declared codes, and the same pixels counted.
  // Codes 1, 2 and 4 make a table of codes 1..4 (CodeTable), codes 1, 2 and 5000 are too far apart
  // for one and are searched: both must agree, at the table's edges and beyond.
  const std::vector<double> codes = {1.0, 2.0, 2.5, -1.0, -0.0, 0.0, 3.0, 7.0, 1e300, -1e300, 2.0, 1.0,
                                     1.0000000000000002, 1023.0, 1024.0, 4.0, 0.9999999999999999, 4.000000000000001,
                                     5.0, 3.9999999999999996, std::numeric_limits<double>::quiet_NaN(),
                                     std::numeric_limits<double>::infinity(), -std::numeric_limits<double>::infinity(),
                                     4999.0, 5000.0, 5001.0, 2147483647.0, -2147483648.0, 4294967297.0};
  for (const std::int64_t far_code : {std::int64_t{4}, std::int64_t{5000}}) {
    habcast::ModelSpec spec = soil_spec();
    spec.covariates[1].levels = {{1, "peat"}, {2, "clay"}, {far_code, "loam"}};
    const habcast::TermPlan plan(spec);
    const Eigen::Index n = 61;  // vector body and remainder
    Eigen::ArrayXXd raw(n, 2);
    raw.col(0).setConstant(1.0);
    std::vector<std::uint8_t> valid(static_cast<std::size_t>(n), 1);
    for (Eigen::Index i = 0; i < n; ++i) raw(i, 1) = codes[static_cast<std::size_t>(i) % codes.size()];
    valid[3] = 0;  // invalid on entry with an unknown code: not counted
    valid[4] = 0;  // invalid on entry with a known code
    habcast::ModelValues values(n, 2);
    habcast::ModelValueCounts counts;
    habcast::to_model_values(spec, plan, raw, 0, n, values, valid.data(), counts);
    std::int64_t unknown = 0;
    for (Eigen::Index i = 0; i < n; ++i) {
      const std::optional<std::int64_t> whole = habcast::level_code(raw(i, 1));
      const int level = whole ? spec.covariates[1].level_index(*whole) : -1;
      const bool was_valid = i != 3 && i != 4;
      INFO("far code " << far_code << ", row " << i << ", raw " << raw(i, 1));
      CHECK(values(i, 1) == (was_valid ? static_cast<double>(level) : 0.0));
      CHECK(valid[static_cast<std::size_t>(i)] == (was_valid && level >= 0 ? 1 : 0));
      unknown += was_valid && level < 0 ? 1 : 0;
    }
    CHECK(counts.unknown_level == unknown);
    CHECK(unknown > 10);
  }
}

TEST_CASE("categorical range flags and their counts agree with a search of the codes seen", "[fuzz-regression]") {
  // The range flags look codes up in a table when the codes seen span few whole numbers, a slab of
  // 256 pixels at a time, and count the unseen ones per code only in slabs that have any; otherwise
  // they search. Either way every pixel's bit and every count must be what a search gives.
  const std::vector<double> codes = {1.0, 1.0, 1.0, 2.0, 2.5, -1.0, 0.0, 3.0, 3.0, 3.0, 7.0, 1e300, -1e300,
                                     4.0, 4.0, 5000.0, 0.9999999999999999, 4.000000000000001, 5.0, 3.5,
                                     std::numeric_limits<double>::quiet_NaN(), -std::numeric_limits<double>::infinity(),
                                     std::numeric_limits<double>::infinity(), 2147483647.0, -2147483648.0};
  for (const std::int64_t far_code : {std::int64_t{4}, std::int64_t{5000}}) {
    habcast::ModelSpec spec = soil_spec();
    spec.covariates[1].levels = {{1, "peat"}, {2, "clay"}, {far_code, "loam"}};
    const std::string code_text = std::to_string(far_code);
    const habcast::TrainingSamples samples =
        habcast::parse_training_samples("tmin,soil\n0,1\n2,2\n1," + code_text + "\n", "train.csv", spec);
    const habcast::TrainingDomain domain(spec, samples);
    const Eigen::Index n = 1000;  // four slabs, the last one partial
    Eigen::ArrayXXd raw(n, 2);
    raw.col(0).setConstant(1.0);
    std::vector<std::uint8_t> valid(static_cast<std::size_t>(n), 1);
    for (Eigen::Index i = 0; i < n; ++i) {
      // Runs of one code in the first slabs (as class rasters have), every code mixed after; the
      // second slab (256..511) is all seen codes, so its count is skipped.
      const bool seen_slab = i >= 256 && i < 512;
      raw(i, 1) = seen_slab ? (i % 7 < 4 ? 1.0 : 2.0) : codes[static_cast<std::size_t>(i < 512 ? i / 9 : i) % codes.size()];
      valid[static_cast<std::size_t>(i)] = i % 13 == 5 ? 0 : 1;
    }
    std::vector<std::uint8_t> flags(static_cast<std::size_t>(n));
    habcast::DomainTally tally(2);
    domain.flag(raw, n, valid.data(), flags.data(), tally);
    std::map<std::int64_t, std::int64_t> by_code;
    std::int64_t unseen = 0;
    for (Eigen::Index i = 0; i < n; ++i) {
      const double v = raw(i, 1);
      const std::optional<std::int64_t> whole = habcast::level_code(v);
      const bool is_seen = whole && (*whole == 1 || *whole == 2 || *whole == far_code);
      INFO("far code " << far_code << ", row " << i << ", raw " << v);
      if (!valid[static_cast<std::size_t>(i)]) {
        CHECK(flags[static_cast<std::size_t>(i)] == habcast::flag::nodata);
        continue;
      }
      CHECK(flags[static_cast<std::size_t>(i)] == (is_seen ? 0 : habcast::flag::unseen_level));
      if (is_seen) continue;
      ++unseen;
      const std::optional<std::int64_t> floor_code = habcast::level_code(std::floor(v));
      ++by_code[floor_code ? *floor_code
                           : (v < 0 ? std::numeric_limits<std::int64_t>::min() : std::numeric_limits<std::int64_t>::max())];
    }
    CHECK(tally.unseen[1] == unseen);
    CHECK(tally.unseen_codes[1] == by_code);
    CHECK(unseen > 300);
  }
}
