#pragma once
// HABCAST_PIXEL_LOOPS marks a function whose loops run over every pixel of a chunk or block.
// GCC then compiles it three times, for baseline x86-64, for AVX2 and for x86-64-v4 (AVX-512 with
// its byte, word and mask instructions), and picks the widest copy the CPU has at run time. The
// baseline (SSE2) has no vector form of a double comparison whose result lands in a byte or an
// integer, the shape of most per-pixel loops (a value against its limits sets a flag, counts a
// pixel): there they stay scalar. AVX2 has it, through chains of packs and unpacks; AVX-512's
// mask registers and byte/quadword conversions do it in one step (on the bench stack: model
// values 9.3 -> 7.2, range flags 8.4 -> 6.6, links 9.0 -> 6.5 ns/pixel; a copy for plain
// avx512f, without the byte instructions, was slower than AVX2 on the flags). Every copy does the
// same IEEE operations on each pixel (no FMA: contraction is off, -ffp-contract=off), so results
// are the same bit for bit on every x86-64 CPU.
#if defined(__GNUC__) && !defined(__clang__) && defined(__x86_64__) && !defined(__SANITIZE_ADDRESS__)
#define HABCAST_PIXEL_LOOPS __attribute__((target_clones("default", "avx2", "arch=x86-64-v4")))
#else
#define HABCAST_PIXEL_LOOPS
#endif
