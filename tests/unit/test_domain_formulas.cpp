// The novelty formulas against hand-worked examples (numbers written here, paper named beside
// each) and against an independent R computation on the mite data (tests/reference/mite_novelty.R).
#include <catch2/catch.hpp>
#include <algorithm>
#include <cmath>
#include <limits>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include "core/domain/extrapolation_flags.hpp"
#include "core/domain/novelty_indices.hpp"
#include "core/domain/novelty_model.hpp"
#include "core/domain/training_domain.hpp"
#include "core/domain/training_samples.hpp"
#include "core/model/float_nodata.hpp"
#include "core/model/model_file.hpp"
#include "core/model/model_values.hpp"
#include "core/model/term_plan.hpp"
#include "core/numeric/whitening_frame.hpp"
#include "test_support.hpp"

using Catch::Matchers::WithinAbs;

TEST_CASE("MESS similarity follows each case of its definition", "[domain]") {
  // Elith, Kearney & Phillips 2010, Methods in Ecology and Evolution 1:330-342: with f the
  // percentage of training values smaller than p, S = 100 (p - min)/(max - min) for f = 0,
  // 2f for 0 < f <= 50, 2(100 - f) for 50 <= f < 100, 100 (max - p)/(max - min) for f = 100.
  // Hand-worked on the training values 1, 2, ..., 10 (min 1, max 10, range 9):
  const std::vector<double> v{1, 2, 3, 4, 5, 6, 7, 8, 9, 10};
  CHECK_THAT(habcast::mess_similarity(v, 0.0), WithinAbs(-100.0 / 9.0, 1e-12));  // f = 0: (0 - 1)/9 = -11.11 %
  CHECK(habcast::mess_similarity(v, 1.0) == 0.0);                                 // f = 0 at the minimum: 0
  CHECK_THAT(habcast::mess_similarity(v, 3.5), WithinAbs(60.0, 1e-12));           // f = 30: 2 x 30
  CHECK_THAT(habcast::mess_similarity(v, 5.5), WithinAbs(100.0, 1e-12));          // f = 50: both middle cases give 100
  CHECK_THAT(habcast::mess_similarity(v, 8.0), WithinAbs(60.0, 1e-12));           // f = 70: 2 x (100 - 70)
  CHECK_THAT(habcast::mess_similarity(v, 10.0), WithinAbs(20.0, 1e-12));          // f = 90 at the maximum: 2 x 10
  CHECK_THAT(habcast::mess_similarity(v, 12.0), WithinAbs(-200.0 / 9.0, 1e-12));  // f = 100: (10 - 12)/9 = -22.22 %
}

TEST_CASE("NT1 sums the scaled distances beyond each covariate's range", "[domain]") {
  // Mesgaran, Cousens & Webber 2014, Diversity and Distributions 20:1147-1159:
  // NT1 = sum_j min(x_j - min_j, max_j - x_j, 0) / (max_j - min_j). Ranges [1, 10] and [0, 2];
  // the point (12, -1): -2/9 + (-1/2) = -0.72222...; inside both ranges: 0.
  const double nt1 = habcast::nt1_term(1, 10, 12) + habcast::nt1_term(0, 2, -1);
  CHECK_THAT(nt1, WithinAbs(-2.0 / 9.0 - 0.5, 1e-15));
  CHECK(habcast::nt1_term(1, 10, 5) + habcast::nt1_term(0, 2, 2) == 0.0);
}

TEST_CASE("NT2 is the squared Mahalanobis distance over the largest squared training distance", "[domain]") {
  // Mesgaran, Cousens & Webber 2014 (from memory): NT2 = D^2(x) / max_i D^2(x_i), D^2 the squared
  // Mahalanobis distance from the training centroid with the training covariance (divisor n - 1,
  // as R's cov). Hand-worked: the corners (0,0), (2,0), (0,2), (2,2) have mean (1,1) and covariance
  // (4/3) I, so every corner has D^2 = 2 / (4/3) = 1.5; the point (1,3) has D^2 = 4 / (4/3) = 3,
  // NT2 = 3 / 1.5 = 2 (the ratio of distances would be sqrt(2)).
  Eigen::MatrixXd corners(4, 2);
  corners << 0, 0, 2, 0, 0, 2, 2, 2;
  const habcast::WhiteningFrame frame = habcast::whitening_frame(corners, 1e-9);
  REQUIRE(frame.rank == 2);
  double y[2];
  const double corner[2] = {2, 0};
  frame.whiten(corner, y);
  CHECK_THAT(y[0] * y[0] + y[1] * y[1], WithinAbs(1.5, 1e-12));
  const double point[2] = {1, 3};
  frame.whiten(point, y);
  CHECK_THAT((y[0] * y[0] + y[1] * y[1]) / 1.5, WithinAbs(2.0, 1e-12));
  // The same through the model's own NT2 band: corners as training samples, (1,3) as a pixel.
  const std::string model_text =
      "habcast_model = 1\n[model]\nfamily = \"gaussian\"\n[covariates.a]\n[covariates.b]\n"
      "[coefficients]\nterms = [\"(Intercept)\", \"a\", \"b\"]\nestimates = [0.0, 1.0, 1.0]\n";
  const habcast::ModelSpec spec = habcast::parse_model_text(model_text, "corners.toml");
  const habcast::TermPlan plan(spec);
  const habcast::TrainingSamples samples = habcast::parse_training_samples("a,b\n0,0\n2,0\n0,2\n2,2\n", "corners.csv", spec);
  habcast::NoveltyOptions options;
  options.hull = false;
  options.pairs = false;
  const habcast::NoveltyModel model(spec, plan, samples, options);
  Eigen::ArrayXXd pixel(1, 2);
  pixel << 1, 1.999;  // in range (so bit 8 can be set); D^2 = 0.998001 / (4/3)
  std::uint8_t valid = 1, flags = 0;
  habcast::DomainTally tally(2);
  habcast::NoveltyBlock out;
  model.check(pixel, 1, &valid, &flags, out, tally);
  CHECK_THAT(out.nt2[0], WithinAbs(0.998001 / (4.0 / 3.0) / 1.5, 1e-6));
  CHECK(model.nt2_max_distance() == Approx(std::sqrt(1.5)));
}

namespace {
struct ReferenceRow {
  double mess, nt1, nt2;
  std::string least_similar;
};
}  // namespace

TEST_CASE("MESS, NT1, NT2 and the least_similar covariate agree with an independent R computation", "[domain]") {
  // tests/reference/mite_novelty.R: base R from the papers' formulas, on the mite training cores
  // in the model's standardised space. novelty.csv has the model's covariate columns, so the
  // training-table reader parses its query points.
  const habcast::ModelSpec spec = habcast::read_model_file(habcast::test::source_path("tests/reference/mite/model.toml"));
  const habcast::TermPlan plan(spec);
  const habcast::TrainingSamples samples = habcast::read_training_samples(spec);
  const habcast::TrainingDomain domain(spec, samples);
  const habcast::NoveltyModel model(spec, plan, samples, habcast::NoveltyOptions{});

  const std::string path = habcast::test::source_path("tests/reference/mite/novelty.csv");
  const std::string text = habcast::test::read_text(path);
  const habcast::TrainingSamples query = habcast::parse_training_samples(text, path, spec);
  std::vector<ReferenceRow> expected;
  std::istringstream lines(text);
  std::string line;
  bool header = true;
  while (std::getline(lines, line)) {
    if (line.empty() || line[0] == '#') continue;
    if (header) {
      header = false;
      continue;
    }
    std::vector<std::string> f;
    std::stringstream fields(line);
    for (std::string cell; std::getline(fields, cell, ',');) f.push_back(cell);
    REQUIRE(f.size() == 7);
    expected.push_back({std::stod(f[3]), std::stod(f[5]), std::stod(f[6]), f[4]});
  }
  const auto n = query.raw.rows();
  REQUIRE(static_cast<std::size_t>(n) == expected.size());
  std::vector<std::uint8_t> valid(static_cast<std::size_t>(n), 1), flags(static_cast<std::size_t>(n), 0);
  habcast::DomainTally tally(spec.covariates.size());
  domain.flag(query.raw, n, valid.data(), flags.data(), tally);
  habcast::NoveltyBlock out;
  model.check(query.raw, n, valid.data(), flags.data(), out, tally);
  for (std::size_t i = 0; i < expected.size(); ++i) {
    INFO("query row " << i + 1);
    // Outputs are Float32: compare to about 7 significant digits.
    CHECK_THAT(out.mess[i], WithinAbs(expected[i].mess, 1e-5 * (1 + std::fabs(expected[i].mess))));
    CHECK_THAT(out.nt1[i], WithinAbs(expected[i].nt1, 1e-7 * (1 + std::fabs(expected[i].nt1))));
    CHECK_THAT(out.nt2[i], WithinAbs(expected[i].nt2, 1e-6));
    CHECK(spec.covariates[out.least_similar[i] - 1u].name == expected[i].least_similar);
  }
}

TEST_CASE("the bucketed MESS search finds what a binary search finds", "[domain]") {
  // predict counts the training values below each pixel's value through a bucket table; the
  // count (and so MESS) must equal std::lower_bound's exactly: with ties, at and beyond both
  // ends, on bucket edges, for uneven spacing, and for a covariate with one repeated value.
  std::mt19937_64 random(20261202);
  std::uniform_int_distribution<int> level(0, 40);
  std::vector<std::vector<double>> samples(3);
  for (int i = 0; i < 301; ++i) samples[0].push_back(level(random) * 0.25);  // many ties
  std::lognormal_distribution<double> skewed(0.0, 2.0);
  for (int i = 0; i < 500; ++i) samples[1].push_back(skewed(random));  // crowded low, sparse high
  samples[2] = std::vector<double>(7, 3.0);
  // Far from zero, where a double's step (2 at 1e16) is wider than a bucket: the bucket edges are
  // rounded by several buckets, so the bucket's guess at the count is often wrong and must be caught.
  samples.emplace_back();
  for (int i = 0; i < 200; ++i) samples.back().push_back(1e16 + 2.0 * static_cast<double>(level(random) * 3));
  for (std::vector<double>& s : samples) {
    std::sort(s.begin(), s.end());
    const habcast::SortedValues index(s);
    std::vector<double> probes = {-1.0, s.front(), s.back(), s.back() + 1.0, std::nextafter(s.front(), -1e9),
                                  std::nextafter(s.back(), 1e9)};
    for (double v : s) probes.insert(probes.end(), {v, std::nextafter(v, -1e9), std::nextafter(v, 1e9)});
    std::uniform_real_distribution<double> anywhere(s.front() - 1.0, s.back() + 1.0);
    for (int i = 0; i < 2000; ++i) probes.push_back(anywhere(random));
    // At and next to the edges of buckets of a few sizes around the index's own (8 per value).
    for (const double per_value : {2.0, 4.0, 8.0, 16.0}) {
      const double buckets = std::min(std::max(per_value * static_cast<double>(s.size()), 16.0), 1048576.0);
      for (int k = 0; k <= 400; ++k) {
        const double edge = s.front() + static_cast<double>(k) * (s.back() - s.front()) / buckets;
        probes.insert(probes.end(), {edge, std::nextafter(edge, -1e9), std::nextafter(edge, 1e9)});
      }
    }
    for (double p : probes) {
      const auto expected = static_cast<std::size_t>(std::lower_bound(s.begin(), s.end(), p) - s.begin());
      INFO("p = " << p);
      CHECK(index.count_below(p) == expected);
      if (s.front() < s.back()) CHECK(index.mess_similarity(p) == habcast::mess_similarity(s, p));
    }
    // The same for all of them at once (the block form predict uses: a vectorised first pass, the
    // rest one by one), with no value, infinities and the extremes among them.
    if (s.front() < s.back()) {
      probes.insert(probes.end(), {std::numeric_limits<double>::quiet_NaN(), std::numeric_limits<double>::infinity(),
                                   -std::numeric_limits<double>::infinity(), std::numeric_limits<double>::max(),
                                   -std::numeric_limits<double>::max()});
      std::vector<double> block(probes.size());
      index.mess_similarity_columns(probes.data(), probes.size(), block.data());
      for (std::size_t i = 0; i < probes.size(); ++i) {
        INFO("p = " << probes[i]);
        const double expected = habcast::mess_similarity(s, probes[i]);
        CHECK((block[i] == expected || (std::isnan(block[i]) && std::isnan(expected))));
      }
    }
  }
}

TEST_CASE("the joint checks of a block give every pixel what the one-pixel formulas give", "[domain]") {
  // The checks run over slabs of pixels in columns. Each pixel of a block spanning several slabs
  // (with a remainder) must get exactly what the published one-pixel formulas give it: MESS
  // (Elith et al. 2010) and NT1 (Mesgaran et al. 2014) from the free functions, NT2 from the
  // frame's whitening, the hull bits from a plain scan of every facet. Among the pixels: no data,
  // a log covariate at or below zero (no model value), values beyond every range.
  const std::string model_text =
      "habcast_model = 1\n[model]\nfamily = \"gaussian\"\n"
      "[covariates.a]\ncenter = 1.0\nscale = 2.0\n[covariates.b]\ntransform = \"log\"\n[covariates.c]\n"
      "[coefficients]\nterms = [\"(Intercept)\", \"a\", \"b\", \"c\", \"a:b\", \"b:c\"]\n"
      "estimates = [0.0, 1.0, 1.0, 1.0, 0.5, 0.5]\n";
  const habcast::ModelSpec spec = habcast::parse_model_text(model_text, "slabs.toml");
  const habcast::TermPlan plan(spec);
  std::mt19937_64 random(20261204);
  std::normal_distribution<double> normal(0.0, 1.0);
  std::ostringstream csv;
  csv << "a,b,c\n";
  for (int i = 0; i < 150; ++i) {
    const double u = normal(random), v = normal(random);
    csv << u << "," << std::exp(0.6 * u + 0.5 * v) << "," << (u - v + 0.3 * normal(random)) << "\n";
  }
  const habcast::TrainingSamples samples = habcast::parse_training_samples(csv.str(), "slabs.csv", spec);
  const habcast::TrainingDomain domain(spec, samples);

  const Eigen::Index n = 700;  // slabs of 256: two whole ones and a remainder
  Eigen::ArrayXXd raw(n, 3);
  std::vector<std::uint8_t> valid(static_cast<std::size_t>(n), 1);
  std::uniform_real_distribution<double> wide(-3.5, 3.5);
  for (Eigen::Index i = 0; i < n; ++i) {
    raw(i, 0) = wide(random);
    raw(i, 1) = std::exp(wide(random));
    raw(i, 2) = 1.5 * wide(random);
    if (i % 97 == 5) raw(i, 1) = (i % 2) ? 0.0 : -1.0;  // outside log's domain
    if (i % 89 == 7) valid[static_cast<std::size_t>(i)] = 0;
  }
  const auto model_values = [&](Eigen::Index i, std::vector<double>& z) {
    bool finite = true;
    for (int c = 0; c < 3; ++c) {
      z[static_cast<std::size_t>(c)] = habcast::model_value(spec.covariates[static_cast<std::size_t>(c)], raw(i, c));
      finite = finite && std::isfinite(z[static_cast<std::size_t>(c)]);
    }
    return finite;
  };
  std::vector<std::vector<double>> sorted(3);
  for (Eigen::Index i = 0; i < samples.raw.rows(); ++i)
    for (int c = 0; c < 3; ++c)
      sorted[static_cast<std::size_t>(c)].push_back(habcast::model_value(spec.covariates[static_cast<std::size_t>(c)], samples.raw(i, c)));
  for (std::vector<double>& s : sorted) std::sort(s.begin(), s.end());

  for (const bool nt2 : {true, false}) {
    INFO((nt2 ? "every check" : "without NT2: the hull whitens in its own frame"));
    habcast::NoveltyOptions options;
    options.nt2 = nt2;
    const habcast::NoveltyModel model(spec, plan, samples, options);
    REQUIRE(model.hull().has_value());
    REQUIRE(model.pairs().size() == 2);
    std::vector<std::uint8_t> flags(static_cast<std::size_t>(n), 0);
    habcast::DomainTally tally(3);
    domain.flag(raw, n, valid.data(), flags.data(), tally);
    const std::vector<std::uint8_t> range_flags = flags;
    habcast::NoveltyBlock out;
    model.check(raw, n, valid.data(), flags.data(), out, tally);

    const double nt2_max = model.nt2_max_distance() * model.nt2_max_distance();
    std::vector<double> z(3), y(3);
    std::int64_t outside_hull = 0, outside_pairs = 0;
    for (Eigen::Index i = 0; i < n; ++i) {
      INFO("pixel " << i);
      const auto k = static_cast<std::size_t>(i);
      if (!valid[k] || !model_values(i, z)) {
        CHECK(out.mess[k] == habcast::kFloatNodata);
        CHECK(out.least_similar[k] == habcast::flag::nodata);
        CHECK(flags[k] == range_flags[k]);
        continue;
      }
      double mess = std::numeric_limits<double>::infinity(), nt1 = 0.0;
      int least = 0;
      for (int c = 0; c < 3; ++c) {
        const double s = habcast::mess_similarity(sorted[static_cast<std::size_t>(c)], z[static_cast<std::size_t>(c)]);
        if (s < mess) {
          mess = s;
          least = c;
        }
        nt1 += habcast::nt1_term(sorted[static_cast<std::size_t>(c)].front(), sorted[static_cast<std::size_t>(c)].back(), z[static_cast<std::size_t>(c)]);
      }
      CHECK(out.mess[k] == static_cast<float>(std::max(mess, -9000.0)));
      CHECK(out.nt1[k] == static_cast<float>(std::max(nt1, -9000.0)));
      CHECK(out.least_similar[k] == least + 1);
      if (nt2) {
        model.hull()->frame().whiten(z.data(), y.data());
        const double d2 = y[0] * y[0] + y[1] * y[1] + y[2] * y[2];
        CHECK_THAT(out.nt2[k], WithinAbs(d2 / nt2_max, 1e-6 * (1.0 + d2 / nt2_max)));
      } else {
        CHECK(out.nt2[k] == habcast::kFloatNodata);
      }
      const bool in_range = (range_flags[k] & habcast::flag::outside_range) == 0;
      const bool hull_out = in_range && !model.hull()->contains_by_scan(z.data());
      CHECK(((flags[k] & habcast::flag::outside_hull) != 0) == hull_out);
      outside_hull += hull_out;
      bool pair_out = false;
      for (std::size_t p = 0; p < 2; ++p) {
        const double xy[2] = {z[static_cast<std::size_t>(model.pairs()[p].a)], z[static_cast<std::size_t>(model.pairs()[p].b)]};
        pair_out = pair_out || (in_range && !model.pair_hulls()[p].contains_by_scan(xy));
      }
      CHECK(((flags[k] & habcast::flag::outside_pair_hull) != 0) == pair_out);
      outside_pairs += pair_out;
    }
    // The block must hold every case, or the comparison proves little.
    CHECK(outside_hull > 20);
    CHECK(outside_pairs > 10);
    CHECK(tally.mess_negative > 100);
  }
}
