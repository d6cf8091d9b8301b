#include "core/model/linear_quadratic_kernel.hpp"

namespace habcast {

std::vector<double> pack_symmetric(const Eigen::MatrixXd& V) {
  std::vector<double> packed;
  const Eigen::Index p = V.rows();
  packed.reserve(static_cast<std::size_t>(p * (p + 1) / 2));
  for (Eigen::Index j = 0; j < p; ++j) {
    packed.push_back(V(j, j));
    // Doubling is exact, so 2 V_jk x_k rounds as V_jk x_k does, then doubled.
    for (Eigen::Index k = j + 1; k < p; ++k) packed.push_back(2.0 * V(j, k));
  }
  return packed;
}

namespace {

// Pixels per tile: the tile's partial sums stay in vector registers across the loops over terms
// (two AVX-512 or four AVX2 registers per sum).
constexpr int kTile = 16;

// One tile of `m` rows (m == kTile lets the compiler unroll and vectorise across pixels; the
// remainder of a chunk takes the same code with a run-time count, hence the same operations).
template <int M>
__attribute__((always_inline)) inline void tile(const double* X, Eigen::Index ld, int m, const double* beta, Eigen::Index p, const double* packed,
                 double* eta, double* q) {
  const int count = M > 0 ? M : m;
  double e[kTile], s[kTile], t[kTile];
  // eta: the first product, then each next one added, like Eigen's column-major GEMV (which
  // starts its accumulators at zero and adds a*b + acc; 0 + a*b is a*b, bit for bit).
  for (int l = 0; l < count; ++l) e[l] = X[l] * beta[0];
  for (Eigen::Index j = 1; j < p; ++j) {
    const double* x = X + j * ld;
    const double b = beta[j];
    for (int l = 0; l < count; ++l) e[l] = x[l] * b + e[l];
  }
  for (int l = 0; l < count; ++l) eta[l] = e[l];
  if (!q) return;
  // x'Vx = sum_j x_j t_j with t_j = V_jj x_j + sum_{k>j} 2 V_jk x_k: p (p + 1) / 2 products.
  const double* w = packed;
  for (Eigen::Index j = 0; j < p; ++j) {
    const double* xj = X + j * ld;
    for (int l = 0; l < count; ++l) t[l] = w[0] * xj[l];
    for (Eigen::Index k = j + 1; k < p; ++k) {
      const double* xk = X + k * ld;
      const double v = w[k - j];
      for (int l = 0; l < count; ++l) t[l] = t[l] + v * xk[l];
    }
    w += p - j;
    if (j == 0)
      for (int l = 0; l < count; ++l) s[l] = xj[l] * t[l];
    else
      for (int l = 0; l < count; ++l) s[l] = s[l] + xj[l] * t[l];
  }
  for (int l = 0; l < count; ++l) q[l] = s[l];
}

}  // namespace

// Clones for AVX2 and AVX-512 chosen at run time (GCC function multiversioning); the baseline
// x86-64 build runs everywhere. Every clone does the same IEEE operations per pixel.
#if defined(__GNUC__) && !defined(__clang__) && defined(__x86_64__) && !defined(__SANITIZE_ADDRESS__)
__attribute__((target_clones("default", "avx2", "avx512f")))
#endif
void linear_quadratic(const double* X, Eigen::Index ld, Eigen::Index n, const Eigen::VectorXd& beta,
                      const double* packed, double* eta, double* q) {
  const Eigen::Index p = beta.size();
  if (p == 0) {
    for (Eigen::Index i = 0; i < n; ++i) {
      eta[i] = 0.0;
      if (q) q[i] = 0.0;
    }
    return;
  }
  Eigen::Index i = 0;
  for (; i + kTile <= n; i += kTile) tile<kTile>(X + i, ld, kTile, beta.data(), p, packed, eta + i, q ? q + i : nullptr);
  if (i < n) tile<0>(X + i, ld, static_cast<int>(n - i), beta.data(), p, packed, eta + i, q ? q + i : nullptr);
}

}  // namespace habcast
