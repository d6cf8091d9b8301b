#pragma once
// `--shard K/N`: a fixed share of the tiles for one process of a scheduler job array. The share
// depends only on the sorted tile ids, so every task of the array agrees on it without talking to
// the others, and the N shares cover every tile exactly once.
#include <string>
#include <vector>

namespace habcast {

struct Shard {
  int index = 1;  ///< K, 1-based (as Slurm's SLURM_ARRAY_TASK_ID with --array=1-N)
  int count = 1;  ///< N
};

/// Parses "K/N" with 1 <= K <= N. Throws UsageError otherwise.
Shard parse_shard(const std::string& text);

/// Positions (into `sorted_ids`) of the tiles of shard K/N: position i when i % N == K - 1.
std::vector<std::size_t> shard_positions(std::size_t tile_count, const Shard& shard);

}  // namespace habcast
