#include "batch/content_hash.hpp"

#include <cstdio>
#include <fstream>
#include <vector>

#include "core/base/error.hpp"

namespace habcast {

namespace {
// FNV prime for 64 bits (Fowler, Noll, Vo; IETF draft-eastlake-fnv).
constexpr std::uint64_t kFnv1a64Prime = 1099511628211ULL;
}  // namespace

std::uint64_t fnv1a64(std::string_view bytes, std::uint64_t state) {
  for (const char c : bytes) {
    state ^= static_cast<std::uint8_t>(c);
    state *= kFnv1a64Prime;
  }
  return state;
}

std::uint64_t fnv1a64_file(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw IoError(path + ": cannot open the file to check its content");
  std::vector<char> buffer(1 << 20);
  std::uint64_t state = kFnv1a64Offset;
  while (in) {
    in.read(buffer.data(), static_cast<std::streamsize>(buffer.size()));
    const std::streamsize got = in.gcount();
    if (got > 0) state = fnv1a64(std::string_view(buffer.data(), static_cast<std::size_t>(got)), state);
  }
  if (in.bad()) throw IoError(path + ": reading failed while checking its content");
  return state;
}

std::string hex64(std::uint64_t value) {
  char buf[17];
  std::snprintf(buf, sizeof buf, "%016llx", static_cast<unsigned long long>(value));
  return buf;
}

}  // namespace habcast
