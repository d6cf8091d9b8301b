#include "core/model/linear_quadratic_kernel.hpp"

#include <cstring>

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

// Unaligned (a tile starts at any row of a column). Vectors pass by reference: the baseline
// kernel has no AVX registers to return them in.
template <typename V>
__attribute__((always_inline)) inline void load(V& v, const double* x) {
  std::memcpy(&v, x, sizeof(V));
}

template <typename V>
__attribute__((always_inline)) inline void store(double* x, const V& v) {
  std::memcpy(x, &v, sizeof(V));
}

// eta and x'Vx of G groups of consecutive pixels, each group one V: a GCC vector of pixels, or a
// double for a single pixel. + and * on a vector are each lane's own IEEE operation, the same as
// on a double, so a pixel's result is the same in any group, alone, and in every kernel below.
template <typename V, std::size_t G>
__attribute__((always_inline)) inline void rows(const double* X, Eigen::Index ld, const double* beta, Eigen::Index p,
                                                const double* packed, double* eta, double* q, const double* plus) {
  constexpr auto step = static_cast<Eigen::Index>(sizeof(V) / sizeof(double));
  const auto at = [](auto* column, std::size_t g) { return column + static_cast<Eigen::Index>(g) * step; };
  V x, e[G], s[G]{}, t[G];  // s starts at the first product (j == 0 below); {} quiets the compiler
  // eta: the first product, then each next one added, like Eigen's column-major GEMV (which
  // starts its accumulators at zero and adds a*b + acc; 0 + a*b is a*b, bit for bit).
#pragma GCC unroll 8
  for (std::size_t g = 0; g < G; ++g) {
    load(x, at(X, g));
    e[g] = x * beta[0];
  }
  for (Eigen::Index j = 1; j < p; ++j) {
#pragma GCC unroll 8
    for (std::size_t g = 0; g < G; ++g) {
      load(x, at(X + j * ld, g));
      e[g] = x * beta[j] + e[g];
    }
  }
  if (plus) {
    const double c = *plus;
#pragma GCC unroll 8
    for (std::size_t g = 0; g < G; ++g) e[g] = e[g] + c;
  }
#pragma GCC unroll 8
  for (std::size_t g = 0; g < G; ++g) store(at(eta, g), e[g]);
  if (!q) return;
  // x'Vx = sum_j x_j t_j with t_j = V_jj x_j + sum_{k>j} 2 V_jk x_k: p (p + 1) / 2 products.
  // Terms go two at a time, j and j + 1, whose sums read the same x_k for k > j + 1: one load
  // of each serves both, the two chains of additions overlap, and the inner loop runs half as
  // often. Each t_j still adds its products in the order k = j + 1, j + 2, ..., and s adds
  // x_j t_j in the order j = 0, 1, ...: the same operations as one term at a time, bit for bit.
  V xb, ta[G], tb[G];
  const double* w = packed;  // term j's row: V_jj, then 2 V_jk for k = j + 1 .. p - 1
  Eigen::Index j = 0;
  for (; j + 1 < p; j += 2) {
    const double* wb = w + (p - j);  // term j + 1's row
#pragma GCC unroll 8
    for (std::size_t g = 0; g < G; ++g) {
      load(x, at(X + j * ld, g));
      load(xb, at(X + (j + 1) * ld, g));
      ta[g] = w[0] * x;
      ta[g] = ta[g] + w[1] * xb;
      tb[g] = wb[0] * xb;
    }
    for (Eigen::Index k = j + 2; k < p; ++k) {
      const double va = w[k - j];
      const double vb = wb[k - j - 1];
#pragma GCC unroll 8
      for (std::size_t g = 0; g < G; ++g) {
        load(x, at(X + k * ld, g));
        ta[g] = ta[g] + va * x;
        tb[g] = tb[g] + vb * x;
      }
    }
#pragma GCC unroll 8
    for (std::size_t g = 0; g < G; ++g) {
      load(x, at(X + j * ld, g));
      load(xb, at(X + (j + 1) * ld, g));
      if (j == 0)
        s[g] = x * ta[g];  // the first product starts the sum
      else
        s[g] = s[g] + x * ta[g];
      s[g] = s[g] + xb * tb[g];
    }
    w = wb + (p - j - 1);
  }
  if (j < p) {  // the last term when p is odd: t = V_jj x_j alone
#pragma GCC unroll 8
    for (std::size_t g = 0; g < G; ++g) {
      load(x, at(X + j * ld, g));
      t[g] = w[0] * x;
      if (j == 0)
        s[g] = x * t[g];
      else
        s[g] = s[g] + x * t[g];
    }
  }
#pragma GCC unroll 8
  for (std::size_t g = 0; g < G; ++g) store(at(q, g), s[g]);
}

// All n rows: tiles of G vectors V, whose sums stay in registers across the loops over terms,
// then the remainder pixel by pixel.
template <typename V, std::size_t G>
__attribute__((always_inline)) inline void all_rows(const double* X, Eigen::Index ld, Eigen::Index n,
                                                    const Eigen::VectorXd& beta, const double* packed, double* eta,
                                                    double* q, const double* plus) {
  const Eigen::Index p = beta.size();
  constexpr auto tile = static_cast<Eigen::Index>(G * sizeof(V) / sizeof(double));
  Eigen::Index i = 0;
  for (; i + tile <= n; i += tile) rows<V, G>(X + i, ld, beta.data(), p, packed, eta + i, q ? q + i : nullptr, plus);
  for (; i < n; ++i) rows<double, 1>(X + i, ld, beta.data(), p, packed, eta + i, q ? q + i : nullptr, plus);
}

using Kernel = void (*)(const double*, Eigen::Index, Eigen::Index, const Eigen::VectorXd&, const double*, double*,
                        double*, const double*);

// One kernel per instruction set, each with vectors of its register width, the widest the CPU has
// chosen once at run time. (GCC's target_clones, used before, compiles one body for every clone,
// so the AVX-512 clone could not get vectors of its own width; the arrays of doubles it used were
// neither unrolled nor kept in registers at -O2, and every product went through the stack.)
// On the bench stack (14 terms, one core) the AVX-512 kernel takes 8.9 ns a pixel, the clones
// took 10.0; tiles of 2, 4, 6 and 8 vectors took 9.7, 8.9, 8.9 and 8.8.
using Pair = double __attribute__((vector_size(2 * sizeof(double))));

void kernel_baseline(const double* X, Eigen::Index ld, Eigen::Index n, const Eigen::VectorXd& beta,
                     const double* packed, double* eta, double* q, const double* plus) {
  all_rows<Pair, 4>(X, ld, n, beta, packed, eta, q, plus);
}

#if defined(__GNUC__) && !defined(__clang__) && defined(__x86_64__) && !defined(__SANITIZE_ADDRESS__)
#define HABCAST_WIDE_KERNELS 1
// Each vector type is declared where its instruction set is on: declared outside, GCC gives it
// no register mode and moves it through memory.
#pragma GCC push_options
#pragma GCC target("avx2")
using Quad = double __attribute__((vector_size(4 * sizeof(double))));

void kernel_avx2(const double* X, Eigen::Index ld, Eigen::Index n, const Eigen::VectorXd& beta, const double* packed,
                 double* eta, double* q, const double* plus) {
  all_rows<Quad, 4>(X, ld, n, beta, packed, eta, q, plus);
}
#pragma GCC pop_options

#pragma GCC push_options
#pragma GCC target("avx512f")
using Octet = double __attribute__((vector_size(8 * sizeof(double))));

void kernel_avx512(const double* X, Eigen::Index ld, Eigen::Index n, const Eigen::VectorXd& beta, const double* packed,
                   double* eta, double* q, const double* plus) {
  all_rows<Octet, 4>(X, ld, n, beta, packed, eta, q, plus);
}
#pragma GCC pop_options
#endif

Kernel best_kernel() {
#ifdef HABCAST_WIDE_KERNELS
  if (__builtin_cpu_supports("avx512f")) return kernel_avx512;
  if (__builtin_cpu_supports("avx2")) return kernel_avx2;
#endif
  return kernel_baseline;
}

}  // namespace

void linear_quadratic(const double* X, Eigen::Index ld, Eigen::Index n, const Eigen::VectorXd& beta,
                      const double* packed, double* eta, double* q, const double* plus) {
  if (beta.size() == 0) {
    for (Eigen::Index i = 0; i < n; ++i) {
      eta[i] = plus ? 0.0 + *plus : 0.0;
      if (q) q[i] = 0.0;
    }
    return;
  }
  static const Kernel kernel = best_kernel();
  kernel(X, ld, n, beta, packed, eta, q, plus);
}

}  // namespace habcast
