// The fused kernel that computes x'b and x'Vx per pixel (core/model/linear_quadratic_kernel.hpp),
// checked against Eigen's own products on random data (Eigen 3.4 is the outside reference here:
// its matrix-vector product for eta, its matrix product for x'Vx).
#include <catch2/catch.hpp>
#include <Eigen/Core>
#include <cmath>
#include <cstring>
#include <random>
#include <vector>

#include "core/model/linear_quadratic_kernel.hpp"

namespace {

struct Case {
  Eigen::MatrixXd X;
  Eigen::VectorXd beta;
  Eigen::MatrixXd V;
};

Case random_case(Eigen::Index rows, Eigen::Index p, unsigned seed) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> normal(0.0, 1.0);
  Case c;
  c.X.resize(rows, p);
  for (Eigen::Index i = 0; i < c.X.size(); ++i) c.X.data()[i] = normal(rng);
  c.X.col(0).setOnes();  // an intercept, as in every model
  c.beta.resize(p);
  for (Eigen::Index j = 0; j < p; ++j) c.beta[j] = normal(rng);
  Eigen::MatrixXd A(p + 3, p);
  for (Eigen::Index i = 0; i < A.size(); ++i) A.data()[i] = normal(rng);
  c.V = 1e-3 * A.transpose() * A;  // symmetric positive definite, like a fitted covariance
  return c;
}

bool same_bits(double a, double b) { return std::memcmp(&a, &b, sizeof a) == 0; }

}  // namespace

TEST_CASE("the fused kernel's linear predictor equals Eigen's matrix-vector product bit for bit",
          "[kernel]") {
  for (Eigen::Index p : {1, 2, 5, 14, 23}) {
    // 4096 is predict's chunk; 37 and 4099 leave remainders after the 16-pixel tiles.
    for (Eigen::Index rows : {37, 4096, 4099}) {
      const Case c = random_case(rows, p, static_cast<unsigned>(p * 1000 + rows));
      const Eigen::VectorXd expected = c.X * c.beta;
      Eigen::VectorXd eta(rows);
      habcast::linear_quadratic(c.X.data(), c.X.outerStride(), rows, c.beta, nullptr, eta.data(), nullptr);
      int differ = 0;
      for (Eigen::Index i = 0; i < rows; ++i) differ += same_bits(eta[i], expected[i]) ? 0 : 1;
      INFO("p = " << p << ", rows = " << rows);
      CHECK(differ == 0);
    }
  }
}

TEST_CASE("the fused kernel adds a constant offset as Eigen's array sum does, bit for bit", "[kernel]") {
  // Without an offset term, predict hands the kernel 0 + c to add as each eta is stored; the
  // result must be the product then a separate pass of + (0 + c) (a -0 sum becomes +0, say).
  for (double constant : {0.0, -0.0, 0.7, -1e-17, 3.25e5}) {
    const double plus = 0.0 + constant;
    for (Eigen::Index p : {1, 14}) {
      for (Eigen::Index rows : {37, 4099}) {
        Case c = random_case(rows, p, static_cast<unsigned>(p * 7 + rows));
        if (p == 1) c.X(3, 0) = -0.0;  // x'b = -0 for that row: -0 + 0 is +0
        Eigen::VectorXd expected = c.X * c.beta;
        expected.array() += plus;
        Eigen::VectorXd eta(rows), q(rows);
        habcast::linear_quadratic(c.X.data(), c.X.outerStride(), rows, c.beta, nullptr, eta.data(), nullptr, &plus);
        Eigen::VectorXd eta_se(rows);
        const std::vector<double> packed = habcast::pack_symmetric(c.V);
        habcast::linear_quadratic(c.X.data(), c.X.outerStride(), rows, c.beta, packed.data(), eta_se.data(), q.data(),
                                  &plus);
        int differ = 0;
        for (Eigen::Index i = 0; i < rows; ++i)
          differ += same_bits(eta[i], expected[i]) && same_bits(eta_se[i], expected[i]) ? 0 : 1;
        INFO("constant = " << constant << ", p = " << p << ", rows = " << rows);
        CHECK(differ == 0);
      }
    }
  }
}

TEST_CASE("the fused kernel's quadratic form agrees with diag(X V X') from Eigen's products", "[kernel]") {
  for (Eigen::Index p : {1, 2, 14, 23}) {
    const Eigen::Index rows = 1000;
    const Case c = random_case(rows, p, static_cast<unsigned>(p));
    const std::vector<double> packed = habcast::pack_symmetric(c.V);
    Eigen::VectorXd eta(rows), q(rows);
    habcast::linear_quadratic(c.X.data(), c.X.outerStride(), rows, c.beta, packed.data(), eta.data(), q.data());
    const Eigen::VectorXd expected = ((c.X * c.V).array() * c.X.array()).rowwise().sum();
    double worst = 0.0;
    for (Eigen::Index i = 0; i < rows; ++i) worst = std::max(worst, std::fabs(q[i] - expected[i]) / expected[i]);
    INFO("p = " << p);
    // A different order of the same sums: a few units in the last place (common practice, no source).
    CHECK(worst < 1e-13);
  }
}

TEST_CASE("the fused kernel gives each row the same bits wherever it sits in the chunk", "[kernel]") {
  // predict's outputs must not depend on block size or threads, so a pixel's value may not depend
  // on its position among the SIMD tiles.
  const Eigen::Index rows = 203, p = 14;
  const Case c = random_case(rows, p, 7);
  const std::vector<double> packed = habcast::pack_symmetric(c.V);
  Eigen::VectorXd eta(rows), q(rows);
  habcast::linear_quadratic(c.X.data(), c.X.outerStride(), rows, c.beta, packed.data(), eta.data(), q.data());
  for (Eigen::Index shift : {1, 5, 16, 17}) {
    Eigen::VectorXd eta2(rows - shift), q2(rows - shift);
    habcast::linear_quadratic(c.X.data() + shift, c.X.outerStride(), rows - shift, c.beta, packed.data(), eta2.data(),
                              q2.data());
    int differ = 0;
    for (Eigen::Index i = 0; i < rows - shift; ++i)
      differ += same_bits(eta2[i], eta[i + shift]) && same_bits(q2[i], q[i + shift]) ? 0 : 1;
    INFO("shift = " << shift);
    CHECK(differ == 0);
  }
}

TEST_CASE("the fused kernel's quadratic form sums in the documented order, bit for bit", "[kernel]") {
  // The header fixes the order: t_j = V_jj x_j + 2 V_j,j+1 x_j+1 + ... (k ascending), then
  // x'Vx = x_0 t_0 + x_1 t_1 + ... (j ascending). The kernel pairs terms and tiles pixels for
  // speed; neither may change a bit. Odd and even p, with remainders after the tiles.
  for (Eigen::Index p : {1, 2, 3, 5, 14, 23}) {
    for (Eigen::Index rows : {37, 4099}) {
      const Case c = random_case(rows, p, static_cast<unsigned>(p * 7 + rows));
      const std::vector<double> packed = habcast::pack_symmetric(c.V);
      Eigen::VectorXd eta(rows), q(rows);
      habcast::linear_quadratic(c.X.data(), c.X.outerStride(), rows, c.beta, packed.data(), eta.data(), q.data());
      int differ = 0;
      for (Eigen::Index i = 0; i < rows; ++i) {
        double sum = 0.0;
        for (Eigen::Index j = 0; j < p; ++j) {
          double t = c.V(j, j) * c.X(i, j);
          for (Eigen::Index k = j + 1; k < p; ++k) t = t + (2.0 * c.V(j, k)) * c.X(i, k);
          sum = j == 0 ? c.X(i, j) * t : sum + c.X(i, j) * t;
        }
        differ += same_bits(q[i], sum) ? 0 : 1;
      }
      INFO("p = " << p << ", rows = " << rows);
      CHECK(differ == 0);
    }
  }
}
