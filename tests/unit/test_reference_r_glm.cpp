// habcast's linear predictor, response and standard errors against R's predict.glm on an open
// dataset. Reference: tests/reference/mite/ was produced by tests/reference/mite_binomial_glm.R with
// R 4.2.2 (stats::glm, binomial logit) on the `mite` / `mite.env` data of Debian's r-cran-vegan
// 2.6.4 (species Ceratoz1, quadratic + interaction terms in standardised WatrCont and SubsDens,
// plus Topo). R is not needed to run this test.
#include <catch2/catch.hpp>
#include <cmath>
#include <sstream>
#include <string>
#include <vector>

#include "core/model/evaluator.hpp"
#include "core/model/link.hpp"
#include "core/model/model_file.hpp"
#include "core/model/model_values.hpp"
#include "core/model/term_plan.hpp"
#include "test_support.hpp"

namespace {

struct ReferenceRow {
  double watr, subs, topo, eta, se_eta, mu, se_mu;
  bool clamped;
  std::string point;
};

std::vector<ReferenceRow> read_reference(const std::string& path) {
  std::istringstream in(habcast::test::read_text(path));
  std::string line;
  std::vector<ReferenceRow> rows;
  bool header = false;
  while (std::getline(in, line)) {
    if (line.empty() || line[0] == '#') continue;
    if (!header) {
      header = true;  // WatrCont,SubsDens,Topo,eta,se_eta,mu,se_mu,clamped,point
      continue;
    }
    std::istringstream fields(line);
    std::string f[9];
    for (auto& s : f) std::getline(fields, s, ',');
    rows.push_back({std::stod(f[0]), std::stod(f[1]), std::stod(f[2]), std::stod(f[3]), std::stod(f[4]),
                    std::stod(f[5]), std::stod(f[6]), f[7] == "1", f[8]});
  }
  return rows;
}

bool close(double a, double b, double rel) { return std::fabs(a - b) <= rel * std::fabs(b); }

}  // namespace

TEST_CASE("eta, response and standard errors equal R's predict.glm on vegan's mite data", "[reference]") {
  const habcast::ModelSpec spec = habcast::read_model_file(habcast::test::source_path("tests/reference/mite/model.toml"));
  const habcast::TermPlan plan(spec);
  const habcast::Evaluator evaluator(spec, 0.95);
  const std::vector<ReferenceRow> ref = read_reference(habcast::test::source_path("tests/reference/mite/predictions.csv"));
  REQUIRE(ref.size() >= 10);

  const auto n = static_cast<Eigen::Index>(ref.size());
  Eigen::ArrayXXd raw(n, 3);
  for (Eigen::Index i = 0; i < n; ++i) {
    const ReferenceRow& r = ref[static_cast<std::size_t>(i)];
    raw(i, 0) = r.watr;
    raw(i, 1) = r.subs;
    raw(i, 2) = r.topo;
  }
  std::vector<std::uint8_t> valid(static_cast<std::size_t>(n), 1);
  habcast::ModelValues values;
  habcast::ModelValueCounts counts;
  habcast::to_model_values(spec, plan, raw, 0, n, values, valid.data(), counts);
  Eigen::MatrixXd X;
  CHECK(plan.fill(values, n, X, valid.data()) == 0);
  Eigen::VectorXd offset;
  plan.fill_offset(values, n, offset, valid.data());
  habcast::Prediction p;
  evaluator.evaluate(X, n, offset, p);

  for (Eigen::Index i = 0; i < n; ++i) {
    const ReferenceRow& r = ref[static_cast<std::size_t>(i)];
    INFO("point " << r.point << " (row " << i << ")");
    CHECK(close(p.eta[i], r.eta, 1e-6));
    CHECK(close(p.se_eta[i], r.se_eta, 1e-6));
    if (!r.clamped) {
      // R's binomial linkinv and mu.eta clamp at 2.2e-16 for |eta| > 30: compared only where it does not.
      CHECK(close(p.mu[i], r.mu, 1e-6));
      CHECK(close(p.se_mu[i], r.se_mu, 1e-6));
    } else {
      // Where R clamps, habcast keeps the exact tail: mu = 1/(1+exp(-eta)) (closed form).
      CHECK(close(p.mu[i], std::exp(r.eta) / (1.0 + std::exp(r.eta)), 1e-12));
      CHECK(p.mu[i] < r.mu);
    }
    // Limits formed on the link scale: g^-1(eta -/+ z se) with z = qnorm(0.975) (R 4.2.2: 1.959963984540054).
    CHECK(close(p.lower[i], habcast::link_inverse(spec.link, r.eta - 1.959963984540054 * r.se_eta), 1e-6));
    CHECK(close(p.upper[i], habcast::link_inverse(spec.link, r.eta + 1.959963984540054 * r.se_eta), 1e-6));
  }
}
