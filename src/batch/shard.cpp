#include "batch/shard.hpp"

#include <charconv>

#include "core/base/error.hpp"

namespace habcast {

namespace {
bool parse_int(const std::string& text, int& value) {
  if (text.empty()) return false;
  const auto [end, error] = std::from_chars(text.data(), text.data() + text.size(), value);
  return error == std::errc() && end == text.data() + text.size();
}
}  // namespace

Shard parse_shard(const std::string& text) {
  const auto slash = text.find('/');
  Shard s;
  if (slash == std::string::npos || !parse_int(text.substr(0, slash), s.index) ||
      !parse_int(text.substr(slash + 1), s.count) || s.count < 1 || s.index < 1 || s.index > s.count)
    throw UsageError("--shard expects K/N with 1 <= K <= N (for example --shard 2/8, or in a Slurm job array "
                     "--shard ${SLURM_ARRAY_TASK_ID}/${SLURM_ARRAY_TASK_COUNT}), got \"" + text + "\"");
  return s;
}

std::vector<std::size_t> shard_positions(std::size_t tile_count, const Shard& shard) {
  // Round-robin rather than contiguous runs: neighbouring tiles (often alike in cost, e.g. all sea)
  // are spread over the tasks, which evens out their run times.
  std::vector<std::size_t> positions;
  const auto n = static_cast<std::size_t>(shard.count);
  const auto k = static_cast<std::size_t>(shard.index - 1);
  for (std::size_t i = k; i < tile_count; i += n) positions.push_back(i);
  return positions;
}

}  // namespace habcast
