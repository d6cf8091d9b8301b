#pragma once
// Lossy output precision (`predict --max-error`): values are rounded to a grid of step q, a power of
// two, so that the stored Float32 value differs from the computed one by at most q / 2 <= the
// requested maximum error, and the codec (LERC) can store the grid without further loss.
namespace habcast {

/// The grid step for a maximum absolute error `max_error` (> 0): the largest power of two <= 2 *
/// max_error, so rounding to it errs by at most step / 2 <= max_error.
double quantum_for_max_error(double max_error);

/// `value` rounded to the nearest multiple of `quantum` (a power of two; 0 leaves it unchanged).
/// Exact in double arithmetic: dividing and multiplying by a power of two only moves the exponent.
/// Non-finite values pass through unchanged.
double round_to_quantum(double value, double quantum);

}  // namespace habcast
