#include "raster/window.hpp"

#include <algorithm>
#include <stdexcept>
#include <string>

namespace habcast {

std::string window_text(const Window& window) {
  return "window at column " + std::to_string(window.x) + ", row " + std::to_string(window.y) + " (" +
         std::to_string(window.width) + " x " + std::to_string(window.height) + " pixels)";
}

std::vector<Window> block_windows(int width, int height, int block_width, int block_height) {
  if (width <= 0 || height <= 0 || block_width <= 0 || block_height <= 0) {
    throw std::invalid_argument("block_windows: raster " + std::to_string(width) + " x " + std::to_string(height) +
                                " and block " + std::to_string(block_width) + " x " + std::to_string(block_height) +
                                " must all be positive");
  }
  std::vector<Window> windows;
  const auto columns = (static_cast<std::size_t>(width) + static_cast<std::size_t>(block_width) - 1) /
                       static_cast<std::size_t>(block_width);
  const auto rows = (static_cast<std::size_t>(height) + static_cast<std::size_t>(block_height) - 1) /
                    static_cast<std::size_t>(block_height);
  windows.reserve(columns * rows);
  // Stepping from 0 keeps every window on the block grid of a tiled file, so each read or write
  // touches whole blocks only; the last row and column are clipped to the raster.
  for (int y = 0; y < height; y += std::min(block_height, height - y)) {
    for (int x = 0; x < width; x += std::min(block_width, width - x)) {
      windows.push_back({x, y, std::min(block_width, width - x), std::min(block_height, height - y)});
    }
  }
  return windows;
}

}  // namespace habcast
