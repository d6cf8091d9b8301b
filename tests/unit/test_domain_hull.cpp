// The exact training hull against an independent reference: a linear-programming feasibility
// test (is p a convex combination of the training points?) solved by a small dense simplex
// written here, on 100,000 points inside, outside, on and near the hull's facets. Then degenerate
// training sets, which must give a flat hull with a clear note, never a crash.
#include <catch2/catch.hpp>
#include <Eigen/Core>
#include <cmath>
#include <random>
#include <vector>

#include "core/domain/novelty_model.hpp"
#include "core/domain/training_hull.hpp"
#include "core/domain/training_samples.hpp"
#include "core/model/model_file.hpp"
#include "core/model/term_plan.hpp"
#include "core/numeric/whitening_frame.hpp"
#include "test_support.hpp"

namespace {

/// Phase one of the simplex method (Bland's rule): is there lambda >= 0 with sum lambda = 1 and
/// X' lambda = p? Returns the minimum total infeasibility; 0 (to roundoff) means p is in the hull.
double lp_infeasibility(const Eigen::MatrixXd& X, const Eigen::VectorXd& p) {
  const auto n = static_cast<int>(X.rows());
  const auto m = static_cast<int>(X.cols()) + 1;
  // Tableau: m constraint rows over n + m columns (points, then artificials), plus the rhs.
  Eigen::MatrixXd T = Eigen::MatrixXd::Zero(m, n + m + 1);
  for (int i = 0; i < m; ++i) {
    for (int j = 0; j < n; ++j) T(i, j) = i + 1 < m ? X(j, i) : 1.0;
    T(i, n + m) = i + 1 < m ? p[i] : 1.0;
    if (T(i, n + m) < 0) T.row(i) *= -1.0;  // keep the right-hand side non-negative
    T(i, n + i) = 1.0;
  }
  std::vector<int> basis(static_cast<std::size_t>(m));
  for (int i = 0; i < m; ++i) basis[static_cast<std::size_t>(i)] = n + i;
  for (int iteration = 0; iteration < 10000; ++iteration) {
    // Reduced costs of minimising the sum of artificials: c_j - sum over artificial basis rows.
    int entering = -1;
    for (int j = 0; j < n + m && entering < 0; ++j) {
      double reduced = j >= n ? 1.0 : 0.0;
      for (int i = 0; i < m; ++i)
        if (basis[static_cast<std::size_t>(i)] >= n) reduced -= T(i, j);
      if (reduced < -1e-12) entering = j;
    }
    if (entering < 0) break;
    int leaving = -1;
    double best = 0.0;
    for (int i = 0; i < m; ++i)
      if (T(i, entering) > 1e-12) {
        const double ratio = T(i, n + m) / T(i, entering);
        if (leaving < 0 || ratio < best - 1e-15 ||
            (ratio <= best + 1e-15 && basis[static_cast<std::size_t>(i)] < basis[static_cast<std::size_t>(leaving)])) {
          leaving = i;
          best = ratio;
        }
      }
    if (leaving < 0) break;
    T.row(leaving) /= T(leaving, entering);
    for (int i = 0; i < m; ++i)
      if (i != leaving) T.row(i) -= T(i, entering) * T.row(leaving);
    basis[static_cast<std::size_t>(leaving)] = entering;
  }
  double infeasibility = 0.0;
  for (int i = 0; i < m; ++i)
    if (basis[static_cast<std::size_t>(i)] >= n) infeasibility += T(i, n + m);
  return infeasibility;
}

bool lp_inside(const Eigen::MatrixXd& X, const Eigen::VectorXd& p) { return lp_infeasibility(X, p) < 1e-11; }

Eigen::MatrixXd correlated_cloud(int n, int d, std::mt19937_64& rng) {
  std::normal_distribution<double> normal;
  Eigen::MatrixXd X(n, d);
  for (int i = 0; i < n; ++i)
    for (int j = 0; j < d; ++j) X(i, j) = normal(rng) + (j > 0 ? 0.6 * X(i, 0) : 0.0) + 3.0 * j;
  return X;
}

}  // namespace

TEST_CASE("hull membership agrees with a linear-programming reference on 100,000 points", "[domain][hull]") {
  std::mt19937_64 rng(20260301);
  const int d = 4;
  const Eigen::MatrixXd X = correlated_cloud(40, d, rng);
  const habcast::TrainingHull hull(X);
  REQUIRE(hull.rank() == d);
  REQUIRE(hull.facet_count() > 20);
  const Eigen::VectorXd lo = X.colwise().minCoeff(), hi = X.colwise().maxCoeff();
  const Eigen::VectorXd centre = X.colwise().mean();
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  std::normal_distribution<double> normal;

  std::vector<Eigen::VectorXd> points;
  // 40,000 uniform in the range box enlarged by 10 %: mostly outside in 4-D, some inside.
  for (int k = 0; k < 40000; ++k) {
    Eigen::VectorXd p(d);
    for (int j = 0; j < d; ++j) p[j] = lo[j] - 0.1 * (hi[j] - lo[j]) + 1.2 * (hi[j] - lo[j]) * unit(rng);
    points.push_back(p);
  }
  // 20,000 convex combinations of 3 training points: inside.
  for (int k = 0; k < 20000; ++k) {
    double w[3], total = 0;
    for (double& x : w) total += (x = unit(rng) + 1e-3);
    Eigen::VectorXd p = Eigen::VectorXd::Zero(d);
    for (double x : w) p += (x / total) * X.row(static_cast<Eigen::Index>(unit(rng) * 40)).transpose();
    points.push_back(p);
  }
  // 40,000 on and near the boundary: along random rays from the centroid, the boundary found by
  // bisection to 1e-13, then the point on it and points 1e-6 (relative) inside and outside.
  std::vector<int> expected_side;  // for on/near points: +1 outside, -1 inside, 0 on
  for (int k = 0; k < 10000; ++k) {
    Eigen::VectorXd u(d);
    for (int j = 0; j < d; ++j) u[j] = normal(rng);
    double a = 0.0, b = 100.0;
    for (int step = 0; step < 60; ++step) {
      const double t = 0.5 * (a + b);
      const Eigen::VectorXd q = centre + t * u;
      (hull.contains_by_scan(q.data()) ? a : b) = t;
    }
    for (double factor : {1.0, 1.0 - 1e-6, 1.0 + 1e-6, 1.0 + 1e-5}) points.push_back(centre + a * factor * u);
  }
  REQUIRE(points.size() == 100000);

  // The hull counts a point as inside when it lies in the hull enlarged about the training
  // centroid by the relative tolerance (1e-9); the reference gets the same enlargement, so that
  // points found on the boundary are on the same boundary for both.
  const Eigen::MatrixXd enlarged = (X.rowwise() - centre.transpose()) * (1.0 + hull.tolerance());
  const Eigen::MatrixXd X_reference = enlarged.rowwise() + centre.transpose();
  int start = 0, start_whitened = 0, disagree_lp = 0, disagree_scan = 0, disagree_whitened = 0, inside = 0,
      near_checked = 0;
  std::vector<double> y(d), y_given(d);
  // predict whitens once for NT2 and hands those coordinates to the hull when the frames agree.
  const habcast::WhiteningFrame nt2_frame = habcast::whitening_frame(X, hull.tolerance());
  REQUIRE(nt2_frame.same_as(hull.frame()));
  for (std::size_t k = 0; k < points.size(); ++k) {
    const bool fast = hull.contains(points[k].data(), y.data(), start);
    const double off_plane = nt2_frame.whiten(points[k].data(), y_given.data());
    if (hull.contains_whitened(y_given.data(), off_plane, start_whitened) != fast) ++disagree_whitened;
    const bool reference = lp_inside(X_reference, points[k]);
    inside += reference ? 1 : 0;
    if (fast != reference) ++disagree_lp;
    if (fast != hull.contains_by_scan(points[k].data())) ++disagree_scan;
    if (k >= 60000) {
      // On the facet (factor 1) and 1e-6 inside: inside; 1e-6 and 1e-5 outside: outside.
      const int which = static_cast<int>((k - 60000) % 4);
      CHECK(fast == (which < 2));
      ++near_checked;
    }
  }
  CHECK(disagree_lp == 0);
  CHECK(disagree_scan == 0);
  CHECK(disagree_whitened == 0);
  CHECK(near_checked == 40000);
  CHECK(inside > 30000);   // both sides are well represented
  CHECK(inside < 70000);
}

TEST_CASE("the facet climb and a scan of every facet agree in 1 to 7 dimensions", "[domain][hull]") {
  // The climb is compiled once per common dimension (2 to 6) and once for any other; each must
  // give the answer of a plain scan over all facets, with the start facet carried from point to
  // point as predict carries it.
  std::mt19937_64 rng(20261204);
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  for (int d = 1; d <= 7; ++d) {
    INFO(d << " dimensions");
    const Eigen::MatrixXd X = correlated_cloud(d == 7 ? 24 : 40, d, rng);
    const habcast::TrainingHull hull(X);
    REQUIRE(hull.rank() == d);
    const Eigen::VectorXd lo = X.colwise().minCoeff(), hi = X.colwise().maxCoeff();
    int start = 0, inside = 0, outside = 0;
    std::vector<double> y(static_cast<std::size_t>(d));
    for (int k = 0; k < 4000; ++k) {
      Eigen::VectorXd p(d);
      if (k % 2 == 0) {  // the range box enlarged by 10 %
        for (int j = 0; j < d; ++j) p[j] = lo[j] - 0.1 * (hi[j] - lo[j]) + 1.2 * (hi[j] - lo[j]) * unit(rng);
      } else {  // between two training points, a little beyond either at times
        const Eigen::Index a = static_cast<Eigen::Index>(unit(rng) * static_cast<double>(X.rows())) % X.rows();
        const Eigen::Index b = static_cast<Eigen::Index>(unit(rng) * static_cast<double>(X.rows())) % X.rows();
        const double t = -0.05 + 1.1 * unit(rng);
        p = (X.row(a) + t * (X.row(b) - X.row(a))).transpose();
      }
      const bool expected = hull.contains_by_scan(p.data());
      INFO("point " << k);
      CHECK(hull.contains(p.data(), y.data(), start) == expected);
      (expected ? inside : outside) += 1;
    }
    CHECK(inside > 300);
    CHECK(outside > 300);
  }
}

TEST_CASE("a flat training set gives a hull in the plane it spans", "[domain][hull]") {
  SECTION("collinear points in 3-D: the segment between the extremes") {
    Eigen::MatrixXd X(5, 3);
    for (int i = 0; i < 5; ++i) X.row(i) << i, 2.0 * i, 3.0 * i + 1.0;
    const habcast::TrainingHull hull(X);
    CHECK(hull.rank() == 1);
    const double on[3] = {2.5, 5.0, 8.5}, beyond[3] = {4.5, 9.0, 14.5}, off[3] = {2.5, 5.1, 8.5};
    CHECK(hull.contains_by_scan(on));
    CHECK_FALSE(hull.contains_by_scan(beyond));
    CHECK_FALSE(hull.contains_by_scan(off));
  }
  SECTION("fewer points than dimensions + 1: 3 points in 4-D span a triangle") {
    Eigen::MatrixXd X(3, 4);
    X << 0, 0, 0, 0, 1, 0, 0, 1, 0, 1, 1, 0;
    const habcast::TrainingHull hull(X);
    CHECK(hull.rank() == 2);
    const double centroid[4] = {1.0 / 3, 1.0 / 3, 1.0 / 3, 1.0 / 3};
    const double beyond_edge[4] = {0.6, 0.6, 0.6, 0.6};  // on the plane, past the edge (1,0,0,1)-(0,1,1,0)
    const double off_plane[4] = {1.0 / 3, 1.0 / 3, 1.0 / 3, 0.4};
    CHECK(hull.contains_by_scan(centroid));
    CHECK_FALSE(hull.contains_by_scan(beyond_edge));
    CHECK_FALSE(hull.contains_by_scan(off_plane));
  }
  SECTION("one distinct point, repeated: only that point") {
    Eigen::MatrixXd X(4, 2);
    X << 1, 2, 1, 2, 1, 2, 1, 2;
    const habcast::TrainingHull hull(X);
    CHECK(hull.rank() == 0);
    const double same[2] = {1, 2}, other[2] = {1, 2.001};
    CHECK(hull.contains_by_scan(same));
    CHECK_FALSE(hull.contains_by_scan(other));
  }
  SECTION("duplicate rows change nothing") {
    std::mt19937_64 rng(7);
    const Eigen::MatrixXd X = correlated_cloud(30, 3, rng);
    Eigen::MatrixXd doubled(60, 3);
    doubled << X, X;
    const habcast::TrainingHull once(X), twice(doubled);
    std::uniform_real_distribution<double> box(-4.0, 10.0);
    int differ = 0;
    for (int k = 0; k < 5000; ++k) {
      const double p[3] = {box(rng), box(rng), box(rng)};
      differ += once.contains_by_scan(p) != twice.contains_by_scan(p);
    }
    CHECK(differ == 0);
  }
}

TEST_CASE("degenerate training sets are named in a note and the run goes on", "[domain][hull]") {
  habcast::test::TempDir dir("domain-flat");
  habcast::test::write_text(dir.file("model.toml"),
                            "habcast_model = 1\n[model]\nfamily = \"binomial\"\n[training]\nsamples = \"train.csv\"\n"
                            "[covariates.a]\n[covariates.b]\n[covariates.c]\n"
                            "[coefficients]\nterms = [\"(Intercept)\", \"a\", \"b\", \"c\", \"a:b\"]\n"
                            "estimates = [0, 1, 1, 1, 1]\n");
  // c = a + b in every sample: the samples are coplanar in (a, b, c).
  habcast::test::write_text(dir.file("train.csv"), "a,b,c\n0,0,0\n1,0,1\n0,1,1\n1,1,2\n0.5,0.2,0.7\n");
  const habcast::ModelSpec spec = habcast::read_model_file(dir.file("model.toml"));
  const habcast::TermPlan plan(spec);
  const habcast::TrainingSamples samples = habcast::read_training_samples(spec);
  const habcast::NoveltyModel model(spec, plan, samples, habcast::NoveltyOptions{});
  REQUIRE(model.hull().has_value());
  CHECK(model.hull()->rank() == 2);
  std::string notes;
  for (const std::string& n : model.notes()) notes += n + "\n";
  CHECK_THAT(notes, Catch::Matchers::Contains("span only 2 of 3 dimensions") &&
                        Catch::Matchers::Contains("every pixel off that plane counts as outside"));
  CHECK_THAT(model.hull_method(), Catch::Matchers::Contains("flat"));
}

TEST_CASE("above the hull's dimension limit the stand-in is named", "[domain][hull]") {
  habcast::test::TempDir dir("domain-maxdim");
  habcast::test::write_text(dir.file("model.toml"),
                            "habcast_model = 1\n[model]\nfamily = \"binomial\"\n[training]\nsamples = \"train.csv\"\n"
                            "[covariates.a]\n[covariates.b]\n[covariates.c]\n"
                            "[coefficients]\nterms = [\"(Intercept)\", \"a\", \"b\", \"c\"]\nestimates = [0, 1, 1, 1]\n");
  habcast::test::write_text(dir.file("train.csv"), "a,b,c\n0,0,0\n1,0,0\n0,1,0\n0,0,1\n1,1,1\n");
  const habcast::ModelSpec spec = habcast::read_model_file(dir.file("model.toml"));
  const habcast::TermPlan plan(spec);
  const habcast::TrainingSamples samples = habcast::read_training_samples(spec);
  habcast::NoveltyOptions options;
  options.hull_max_dim = 2;
  const habcast::NoveltyModel model(spec, plan, samples, options);
  CHECK_FALSE(model.hull().has_value());
  CHECK_THAT(model.hull_method(), Catch::Matchers::Contains("exceed --hull-max-dim 2") &&
                                      Catch::Matchers::Contains("pairs") && Catch::Matchers::Contains("NT2"));
}
