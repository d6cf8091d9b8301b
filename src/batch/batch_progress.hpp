#pragma once
// One progress display for a whole batch: pixels done over all tiles (so the ETA is weighted by
// tile size), with "tiles done/total, failed" beside it. Tiles run on several threads, each with
// its own TileProgress; this class merges them and talks to the real Progress under a lock.
#include <cstdint>
#include <memory>
#include <mutex>
#include <string>

#include "pipeline/progress.hpp"

namespace habcast {

class BatchProgress;

/// One tile's view: run_predict's block counts become pixels of the batch total.
class TileProgress final : public Progress {
 public:
  TileProgress(BatchProgress& batch, std::int64_t pixels) : batch_(batch), pixels_(pixels) {}
  void start(const std::string&, std::int64_t total) override { blocks_ = total; }
  void advance(std::int64_t done) override;
  void finish() override {}
  void message(const std::string& level, const std::string& text) override;
  /// Pixels of the tile not yet reported (all of them when it failed before its first block).
  [[nodiscard]] std::int64_t unreported() const { return pixels_ - reported_; }

 private:
  BatchProgress& batch_;
  std::int64_t pixels_;
  std::int64_t blocks_ = 0;
  std::int64_t reported_ = 0;  ///< only ever grows, however the blocks arrive
};

class BatchProgress {
 public:
  /// `tiles` and `pixels` are the work still to do in this run.
  BatchProgress(Progress& display, std::int64_t tiles, std::int64_t pixels, std::int64_t skipped);
  BatchProgress(const BatchProgress&) = delete;
  BatchProgress& operator=(const BatchProgress&) = delete;

  /// A Progress for one tile of `pixels` pixels.
  std::unique_ptr<TileProgress> for_tile(std::int64_t pixels);
  /// The tile ended (its pixels count as done either way, so the ETA stays honest).
  void tile_finished(const TileProgress& tile, bool ok);
  void finish();
  void message(const std::string& level, const std::string& text);

 private:
  friend class TileProgress;
  void tile_advanced(std::int64_t delta_pixels);
  void redraw_locked();

  std::mutex mutex_;
  Progress& display_;
  std::int64_t tiles_total_, pixels_total_, skipped_;
  std::int64_t tiles_done_ = 0, tiles_failed_ = 0, pixels_done_ = 0;
};

}  // namespace habcast
