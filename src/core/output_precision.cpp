#include "core/output_precision.hpp"

#include <cmath>
#include <stdexcept>

namespace habcast {

double quantum_for_max_error(double max_error) {
  if (!(max_error > 0.0) || !std::isfinite(max_error))
    throw std::invalid_argument("the maximum output error must be a positive number");
  int exponent = 0;
  // 2e = m * 2^exponent with m in [0.5, 1): the largest power of two <= 2e is 2^(exponent - 1).
  std::frexp(2.0 * max_error, &exponent);
  return std::ldexp(1.0, exponent - 1);
}

double round_to_quantum(double value, double quantum) {
  if (quantum <= 0.0 || !std::isfinite(value)) return value;
  return std::nearbyint(value / quantum) * quantum;
}

}  // namespace habcast
