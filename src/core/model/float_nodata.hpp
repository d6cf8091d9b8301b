#pragma once
// The nodata marker of every Float32 output: predictions, their limits and the novelty indices.

namespace habcast {

/// Float nodata of every Float32 output.
constexpr float kFloatNodata = -9999.0f;

}  // namespace habcast
