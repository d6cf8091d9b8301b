// Spline bases against R 4.2.2's splines::ns and splines::bs (tests/reference/spline_basis.R):
// every column at points inside, at and beyond the boundary knots, to 1e-12.
#include <catch2/catch.hpp>
#include <cmath>
#include <map>
#include <sstream>
#include <string>

#include "core/base/csv_table.hpp"
#include "core/model/spline_basis.hpp"

using namespace habcast;

namespace {

std::string spline_reference_file(const std::string& name) {
  return std::string(HABCAST_SOURCE_DIR) + "/tests/reference/splines/" + name;
}

std::map<std::string, SplineDefinition> reference_cases() {
  const CsvTable t = read_csv_table(spline_reference_file("basis_cases.csv"));
  std::map<std::string, SplineDefinition> cases;
  for (std::size_t r = 0; r < t.rows.size(); ++r) {
    SplineDefinition d;
    d.kind = t.rows[r][1] == "ns" ? SplineKind::natural : SplineKind::bspline;
    d.degree = std::stoi(t.rows[r][2]);
    d.intercept = t.rows[r][3] == "1";
    d.lower = t.number(r, 4);
    d.upper = t.number(r, 5);
    std::stringstream knots(t.rows[r][6]);
    for (std::string k; std::getline(knots, k, ';');) d.knots.push_back(std::stod(k));
    cases.emplace(t.rows[r][0], d);
  }
  return cases;
}

}  // namespace

TEST_CASE("Spline bases equal R's ns() and bs() inside, at and beyond the boundary knots", "[spline]") {
  const auto cases = reference_cases();
  REQUIRE(cases.size() == 9);
  const CsvTable v = read_csv_table(spline_reference_file("basis_values.csv"));
  std::map<std::string, SplineBasis> bases;
  for (const auto& [name, d] : cases) bases.emplace(name, SplineBasis(d));
  std::size_t checked = 0, beyond = 0;
  double worst = 0.0;
  for (std::size_t r = 0; r < v.rows.size(); ++r) {
    const SplineBasis& b = bases.at(v.rows[r][0]);
    const double x = v.number(r, 1);
    const int col = std::stoi(v.rows[r][2]) - 1;
    REQUIRE(col < b.columns());
    std::vector<double> out(static_cast<std::size_t>(b.columns()));
    b.evaluate(x, out.data());
    const double expected = v.number(r, 3);
    // Absolute 1e-12 for values of order one (the basis inside is a partition of unity or a
    // projection of one); relative beyond the knots, where the extensions grow like |x|^degree.
    const double err = std::fabs(out[static_cast<std::size_t>(col)] - expected) / std::max(1.0, std::fabs(expected));
    worst = std::max(worst, err);
    INFO(v.rows[r][0] << " x = " << x << " column " << col + 1 << ": " << out[static_cast<std::size_t>(col)]
                      << " vs R " << expected);
    CHECK(err <= 1e-12);
    ++checked;
    if (b.beyond(x)) ++beyond;
  }
  CHECK(checked > 2000);
  CHECK(beyond > 400);
  WARN("worst relative difference from R: " << worst);
}

TEST_CASE("A natural spline basis is linear beyond its boundary knots and a B-spline basis sums to one inside",
          "[spline]") {
  SplineDefinition d;
  d.knots = {-0.5, 0.2, 1.0};
  d.lower = -2.0;
  d.upper = 2.0;
  const SplineBasis ns(d);
  double a[4], b[4], c[4];
  ns.evaluate(3.0, a);
  ns.evaluate(4.0, b);
  ns.evaluate(5.0, c);
  for (int j = 0; j < 4; ++j) CHECK(c[j] - b[j] == Approx(b[j] - a[j]).margin(1e-12));
  d.kind = SplineKind::bspline;
  d.intercept = true;
  const SplineBasis bs(d);
  REQUIRE(bs.columns() == 7);
  for (double x : {-2.0, -1.3, 0.2, 0.77, 2.0}) {
    double row[7];
    bs.evaluate(x, row);
    double sum = 0.0;
    for (double r : row) sum += r;
    CHECK(sum == Approx(1.0).margin(1e-14));  // partition of unity (de Boor 1978, ch. IX)
  }
  double nan_row[7];
  bs.evaluate(std::nan(""), nan_row);
  CHECK(std::isnan(nan_row[0]));
}

TEST_CASE("A spline definition with knots outside its boundary or a zero-width boundary is refused", "[spline]") {
  SplineDefinition d;
  d.knots = {0.5, 3.0};
  d.lower = 0.0;
  d.upper = 2.0;
  CHECK_THAT(d.problem(), Catch::Contains("strictly between"));
  d.knots = {};
  d.upper = 0.0;
  CHECK_THAT(d.problem(), Catch::Contains("boundary knots"));
  CHECK_THROWS_AS(SplineBasis(d), std::invalid_argument);
  d.upper = 1.0;
  d.kind = SplineKind::natural;
  d.degree = 2;
  CHECK_THAT(d.problem(), Catch::Contains("cubic"));
}

TEST_CASE("A block of values gives the same basis, bit for bit, as one value at a time", "[spline]") {
  for (const auto& [name, d] : reference_cases()) {
    const SplineBasis b(d);
    std::vector<double> x;
    for (int i = 0; i <= 200; ++i) x.push_back(d.lower - 0.2 * (d.upper - d.lower) + 1.4 * (d.upper - d.lower) * i / 200.0);
    x.push_back(d.lower);
    x.push_back(d.upper);
    x.push_back(std::nan(""));
    Eigen::MatrixXd block;
    b.evaluate(x.data(), static_cast<Eigen::Index>(x.size()), block);
    std::vector<double> one(static_cast<std::size_t>(b.columns()));
    for (std::size_t i = 0; i < x.size(); ++i) {
      b.evaluate(x[i], one.data());
      for (int j = 0; j < b.columns(); ++j) {
        INFO(name << " x = " << x[i] << " column " << j + 1);
        const double a = block(static_cast<Eigen::Index>(i), j), e = one[static_cast<std::size_t>(j)];
        CHECK((a == e || (std::isnan(a) && std::isnan(e))));
      }
    }
  }
}
