#pragma once
// Lossy output precision (`predict --max-error`): values are rounded to a grid of step q, a number
// with at most three significant bits, so that the stored Float32 value differs from the computed
// one by at most q / 2 <= the requested maximum error, and the codec (LERC) can store the grid
// without further loss.
namespace habcast {

/// The grid step for a maximum absolute error `max_error` (> 0): the largest number n * 2^s with n
/// in {4, 5, 6, 7} that is <= 2 * max_error, so rounding to it errs by at most step / 2 <=
/// max_error and uses at least 4/5 of the allowance (a power of two would waste up to half of it,
/// a bit per value). Multiples k * q with k * n < 2^24 are exact in Float32, so a probability or
/// any value below 2^21 * q is stored exactly on the grid.
double quantum_for_max_error(double max_error);

/// `value` rounded to the nearest multiple of `quantum` (a step from quantum_for_max_error; 0 leaves
/// it unchanged), never further from `value` than quantum / 2. Non-finite values pass through.
double round_to_quantum(double value, double quantum);

}  // namespace habcast
