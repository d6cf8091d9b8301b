#include "batch/batch_progress.hpp"

namespace habcast {

void TileProgress::advance(std::int64_t done) {
  if (blocks_ <= 0) return;
  const std::int64_t now = pixels_ * done / blocks_;
  if (now > reported_) {
    batch_.tile_advanced(now - reported_);
    reported_ = now;
  }
}

void TileProgress::message(const std::string& level, const std::string& text) { batch_.message(level, text); }

BatchProgress::BatchProgress(Progress& display, std::int64_t tiles, std::int64_t pixels, std::int64_t skipped)
    : display_(display), tiles_total_(tiles), pixels_total_(pixels), skipped_(skipped) {
  display_.set_unit("pixels");
  display_.start("batch", pixels_total_);
  std::lock_guard lock(mutex_);
  redraw_locked();
}

std::unique_ptr<TileProgress> BatchProgress::for_tile(std::int64_t pixels) {
  return std::make_unique<TileProgress>(*this, pixels);
}

void BatchProgress::tile_advanced(std::int64_t delta_pixels) {
  std::lock_guard lock(mutex_);
  pixels_done_ += delta_pixels;
  redraw_locked();
}

void BatchProgress::tile_finished(const TileProgress& tile, bool ok) {
  std::lock_guard lock(mutex_);
  pixels_done_ += tile.unreported();
  ++tiles_done_;
  if (!ok) ++tiles_failed_;
  redraw_locked();
}

void BatchProgress::redraw_locked() {
  std::string note = std::to_string(tiles_done_) + "/" + std::to_string(tiles_total_) + " tiles";
  if (tiles_failed_ > 0) note += ", " + std::to_string(tiles_failed_) + " failed";
  if (skipped_ > 0) note += ", " + std::to_string(skipped_) + " up to date";
  display_.note(note);
  display_.advance(pixels_done_);
}

void BatchProgress::finish() {
  std::lock_guard lock(mutex_);
  display_.finish();
}

void BatchProgress::message(const std::string& level, const std::string& text) {
  std::lock_guard lock(mutex_);
  display_.message(level, text);
}

}  // namespace habcast
