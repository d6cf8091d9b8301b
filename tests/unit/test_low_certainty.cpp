// The low-certainty rule behind the plain warning (common practice, no source: see docs/report.md).
#include <catch2/catch.hpp>

#include "core/prediction/block_predictor.hpp"

TEST_CASE("wide intervals are called low certainty", "[predict]") {
  using habcast::Family;
  CHECK(habcast::is_low_certainty(Family::binomial, 0.1, 0.7));
  CHECK_FALSE(habcast::is_low_certainty(Family::binomial, 0.3, 0.7));
  CHECK(habcast::is_low_certainty(Family::poisson, 1.0, 3.5));
  CHECK_FALSE(habcast::is_low_certainty(Family::poisson, 1.0, 2.9));
  CHECK(habcast::is_low_certainty(Family::gaussian, -1.0, 2.0));   // interval reaches zero
  CHECK_FALSE(habcast::is_low_certainty(Family::gaussian, 0.0, 0.0));
}
