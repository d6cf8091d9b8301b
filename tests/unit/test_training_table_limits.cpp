// The training table and model file as untrusted input: bounded reads (a device or a file without
// line breaks cannot exhaust memory), stop requests honoured while loading, a duplicate column
// refused, and values that look like nodata markers or gross outliers left out of the training
// domain with a warning naming their lines, so one value cannot switch the joint checks off.
#include <catch2/catch.hpp>
#include <cmath>
#include <csignal>
#include <string>

#include "core/base/error.hpp"
#include "core/domain/novelty_model.hpp"
#include "core/domain/training_samples.hpp"
#include "core/model/model_file.hpp"
#include "core/model/term_plan.hpp"
#include "pipeline/stop_signal.hpp"
#include "test_support.hpp"

namespace {

using Catch::Matchers::Contains;

habcast::ModelSpec pair_model(const std::string& samples = "") {
  return habcast::parse_model_text(
      "habcast_model = 1\n[model]\nfamily = \"binomial\"\n" +
          (samples.empty() ? std::string() : "[training]\nsamples = \"" + samples + "\"\n") +
          "[covariates.a]\ncenter = 0\nscale = 1\n[covariates.b]\ncenter = 0\nscale = 1\n"
          "[coefficients]\nterms = [\"(Intercept)\", \"a\", \"b\", \"a:b\"]\nestimates = [0.1, 0.2, 0.3, 0.1]\n",
      "m.toml");
}

/// 30 samples spread over a square, plus `extra` lines.
std::string training_table_text(const std::string& extra) {
  std::string text = "a,b\n";
  for (int i = 0; i < 30; ++i) text += std::to_string(i % 6) + "," + std::to_string((i * 7) % 11) + "\n";
  return text + extra;
}

}  // namespace

TEST_CASE("A duplicate column in the training table is an error naming both columns", "[safety][training]") {
  const habcast::ModelSpec spec = pair_model();
  CHECK_THROWS_WITH(habcast::parse_training_samples("a,b,a\n1,2,3\n", "t.csv", spec),
                    Contains("t.csv:1:") && Contains("columns 1 and 3") && Contains("\"a\""));
}

TEST_CASE("A training table or model file without bounds is refused, not read forever", "[safety][training]") {
  const habcast::ModelSpec spec = pair_model("/dev/zero");
  CHECK_THROWS_WITH(habcast::read_training_samples(spec), Contains("/dev/zero") && Contains("longer than 1 MiB"));
  CHECK_THROWS_WITH(habcast::read_model_file("/dev/zero"), Contains("/dev/zero") && Contains("16 MiB"));
  const std::string long_name(5000, 'n');
  CHECK_THROWS_WITH(habcast::parse_model_text("habcast_model = 1\n[model]\nfamily = \"binomial\"\nname = \"" + long_name + "\"\n", "m.toml"),
                    Contains("m.toml") && Contains("4096"));
}

TEST_CASE("A stop request while the training table loads ends the load", "[safety][training]") {
  const habcast::ModelSpec spec = pair_model();
  std::string text = "a,b\n";
  for (int i = 0; i < 20000; ++i) text += "1,2\n";
  const habcast::StopSignalGuard guard;
  habcast::raise_stop_for_testing(SIGTERM);
  CHECK_THROWS_AS(habcast::parse_training_samples(text, "t.csv", spec), habcast::Interrupted);
  habcast::raise_stop_for_testing(0);
}

TEST_CASE("Nodata markers and gross outliers in the training table are left out and named with their lines",
          "[safety][training]") {
  const habcast::ModelSpec spec = pair_model();
  // Lines 32 and 33 (after the header and 30 samples): a Float32 nodata marker and -9999.
  const habcast::TrainingSamples s =
      habcast::parse_training_samples(training_table_text("-3.4028235e38,4\n3,-9999\n"), "t.csv", spec);
  REQUIRE(s.warnings.size() == 2);
  CHECK_THAT(s.warnings[0], Contains("\"a\"") && Contains("line 32") && Contains("common practice, no source"));
  CHECK_THAT(s.warnings[1], Contains("\"b\"") && Contains("line 33 (-9999)"));
  CHECK(std::isnan(s.raw(30, 0)));
  CHECK(s.raw(30, 1) == 4.0);
  CHECK(std::isnan(s.raw(31, 1)));
  // A value 10 interquartile ranges beyond the quartiles: a = 0..5 has Q1 1, Q3 4 (R type 7).
  const habcast::TrainingSamples far = habcast::parse_training_samples(training_table_text("35,4\n"), "t.csv", spec);
  CHECK(far.warnings.size() == 1);
  const habcast::TrainingSamples near = habcast::parse_training_samples(training_table_text("33,4\n"), "t.csv", spec);
  CHECK(near.warnings.empty());
}

TEST_CASE("One extreme training value does not flatten the hull or switch off the joint checks", "[safety][training]") {
  const habcast::ModelSpec spec = pair_model();
  const habcast::TermPlan plan(spec);
  const habcast::NoveltyOptions options;
  const habcast::NoveltyModel clean(spec, plan, habcast::parse_training_samples(training_table_text(""), "t.csv", spec), options);
  const habcast::NoveltyModel marked(spec, plan, habcast::parse_training_samples(training_table_text("1e12,3\n"), "t.csv", spec),
                                     options);
  CHECK_THAT(clean.hull_method(), !Contains("flat"));
  CHECK(marked.hull_method() == clean.hull_method());
  CHECK(marked.notes() == clean.notes());
}
