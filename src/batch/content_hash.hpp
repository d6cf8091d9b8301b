#pragma once
// A fast, dependency-free fingerprint of bytes and files: 64-bit FNV-1a. It detects accidental
// change (an edited model, a truncated or overwritten output); it is not a defence against anyone
// forging a file, which a resumable batch does not need.
#include <cstdint>
#include <string>
#include <string_view>

namespace habcast {

/// FNV-1a, 64 bits, continuing from `state` (start with kFnv1a64Offset).
constexpr std::uint64_t kFnv1a64Offset = 14695981039346656037ULL;
std::uint64_t fnv1a64(std::string_view bytes, std::uint64_t state = kFnv1a64Offset);

/// FNV-1a 64 of a whole file. Throws IoError naming the file when it cannot be read.
std::uint64_t fnv1a64_file(const std::string& path);

/// 16 lower-case hex digits.
std::string hex64(std::uint64_t value);

}  // namespace habcast
