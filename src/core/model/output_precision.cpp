#include "core/model/output_precision.hpp"

#include <cmath>
#include <stdexcept>

namespace habcast {

double quantum_for_max_error(double max_error) {
  if (!(max_error > 0.0) || !std::isfinite(max_error))
    throw std::invalid_argument("the maximum output error must be a positive number");
  int exponent = 0;
  // 2e = m * 2^exponent with m in [0.5, 1), so 8m is in [4, 8) and floor(8m) * 2^(exponent - 3)
  // is the largest n * 2^s (n in 4..7) not above 2e. Both steps are exact in double.
  const double m = std::frexp(2.0 * max_error, &exponent);
  return std::ldexp(std::floor(8.0 * m), exponent - 3);
}

double round_to_quantum(double value, double quantum) {
  if (quantum <= 0.0 || !std::isfinite(value)) return value;
  // value / quantum is correctly rounded and cannot land on the wrong side of a half-way point: a
  // double next to a midpoint k + 1/2 of the grid lies at least an ulp of itself away, which is
  // more than half an ulp of the quotient because quantum has at most three significant bits. The
  // tests sweep midpoints and their neighbours to hold this.
  const double k = std::nearbyint(value / quantum);
  return k * quantum;
}

}  // namespace habcast
