#pragma once
// Windows on the block grid of a raster: the unit of reading, computing and writing.
#include <cstdint>
#include <string>
#include <vector>

namespace habcast {

struct Window {
  int x = 0;  ///< column offset
  int y = 0;  ///< row offset
  int width = 0;
  int height = 0;
  [[nodiscard]] std::int64_t pixels() const { return static_cast<std::int64_t>(width) * height; }
};

/// "window at column X, row Y (W x H pixels)", for messages.
std::string window_text(const Window& window);

/// Row-major windows of at most block_width x block_height covering a width x height raster.
/// Windows start at multiples of the block size so they stay aligned to tiled GeoTIFF blocks.
std::vector<Window> block_windows(int width, int height, int block_width, int block_height);

}  // namespace habcast
