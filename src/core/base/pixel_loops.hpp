#pragma once
// HABCAST_PIXEL_LOOPS marks a function whose loops run over every pixel of a chunk or block.
// GCC then compiles it twice, for baseline x86-64 and for AVX2, and picks the AVX2 copy at run
// time where the CPU has it. The baseline (SSE2) has no vector form of a double comparison whose
// result lands in a byte or an integer, the shape of most per-pixel loops (a value against its
// limits sets a flag, counts a pixel): there they stay scalar. Both copies do the same IEEE
// operations on each pixel (no FMA: AVX2 does not imply it, and contraction is off), so results
// are the same bit for bit on every x86-64 CPU.
#if defined(__GNUC__) && !defined(__clang__) && defined(__x86_64__) && !defined(__SANITIZE_ADDRESS__)
#define HABCAST_PIXEL_LOOPS __attribute__((target_clones("default", "avx2")))
#else
#define HABCAST_PIXEL_LOOPS
#endif
