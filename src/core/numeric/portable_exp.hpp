#pragma once
// exp(x) in plain IEEE double arithmetic, written so that a loop of calls vectorises.
//
// glibc's exp() is correctly rounded in practice but is a function call per pixel that no loop
// can vectorise; the links of predict (logistic, log) spent a quarter of the model's time in it.
// This one is the textbook method: x = n ln2 + r with n = round(x / ln2) and |r| <= ln2 / 2, the
// reduction done in two steps with ln2 split into a part whose products with n are exact and a
// remainder (Cody & Waite 1980, "Software Manual for the Elementary Functions"; the split is
// fdlibm's), then exp(r) by its Taylor series to r^13 (truncation below 5e-18 relative for
// |r| <= 0.347), then the scale 2^n built in the exponent bits, in two halves so that results in
// the subnormal range are rounded once and correctly.
//
// Every step is an IEEE operation or an integer operation, with no FMA (contraction is off), so
// the result is the same bit for bit on every x86-64 CPU and in the scalar and vector copies the
// compiler makes of a loop. It is not always the correctly rounded value: tests/unit/
// test_portable_exp.cpp measures the error against glibc's long double expl over the whole range
// (at most 1 unit in the last place).
#include <algorithm>
#include <bit>
#include <cstdint>

namespace habcast {

inline double portable_exp(double x) {
  constexpr double log2e = 1.4426950408889634;               // 1 / ln 2
  constexpr double ln2_hi = 6.93147180369123816490e-01;      // ln 2, 32 significant bits: n ln2_hi is exact
  constexpr double ln2_lo = 1.90821492927058770002e-10;      // ln 2 - ln2_hi
  constexpr double shifter = 6755399441055744.0;             // 1.5 * 2^52: adding it rounds to an integer
  constexpr std::uint64_t shifter_bits = 0x4338000000000000;  // its bit pattern
  // Beyond these exp() is 0 or +inf in double. NaN passes through (std::max and std::min return
  // their first argument when a comparison fails) and makes the polynomial NaN.
  const double xc = std::min(std::max(x, -746.0), 710.0);
  const double t = xc * log2e + shifter;
  const double n = t - shifter;
  const double r = (xc - n * ln2_hi) - n * ln2_lo;
  // Taylor coefficients 1/k!, k = 13 .. 0, by Horner's rule.
  double p = 1.6059043836821613e-10;
  p = p * r + 2.08767569878681e-09;
  p = p * r + 2.505210838544172e-08;
  p = p * r + 2.755731922398589e-07;
  p = p * r + 2.7557319223985893e-06;
  p = p * r + 2.48015873015873e-05;
  p = p * r + 0.0001984126984126984;
  p = p * r + 0.001388888888888889;
  p = p * r + 0.008333333333333333;
  p = p * r + 0.041666666666666664;
  p = p * r + 0.16666666666666666;
  p = p * r + 0.5;
  p = p * r + 1.0;
  p = p * r + 1.0;
  // n = bits(t) - bits(shifter), between -1077 and 1025; 2^n as 2^k1 * 2^k2, each a normal number.
  // The integer steps run in unsigned (wrapping) arithmetic: for those n every value is the same
  // as in signed arithmetic, and for a NaN argument, whose bits are anything, nothing overflows
  // (the result is NaN through p whatever the scale).
  const std::uint64_t k = std::bit_cast<std::uint64_t>(t) - shifter_bits;
  const std::uint64_t k1 = ((k + 1536) >> 1) - 768;
  const std::uint64_t k2 = k - k1;
  const double s1 = std::bit_cast<double>((k1 + 1023) << 52);
  const double s2 = std::bit_cast<double>((k2 + 1023) << 52);
  return p * s1 * s2;
}

}  // namespace habcast
