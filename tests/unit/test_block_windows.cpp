#include <algorithm>
#include <catch2/catch.hpp>
#include <stdexcept>
#include <vector>

#include "raster/window.hpp"

using habcast::block_windows;
using habcast::Window;

namespace {

/// How many windows cover each pixel; a correct tiling covers every pixel exactly once.
std::vector<int> coverage(int width, int height, const std::vector<Window>& windows) {
  std::vector<int> count(static_cast<std::size_t>(width) * static_cast<std::size_t>(height), 0);
  for (const auto& window : windows) {
    for (int row = window.y; row < window.y + window.height; ++row) {
      for (int column = window.x; column < window.x + window.width; ++column) {
        ++count[static_cast<std::size_t>(row) * static_cast<std::size_t>(width) + static_cast<std::size_t>(column)];
      }
    }
  }
  return count;
}

}  // namespace

TEST_CASE("Block windows cover every pixel of the raster exactly once", "[raster][window]") {
  const auto [width, height, block_width, block_height] = GENERATE(table<int, int, int, int>(
      {{10, 7, 4, 3}, {256, 256, 256, 256}, {300, 200, 256, 256}, {1, 1, 256, 256}, {513, 1, 256, 1}, {5, 9, 1, 1}}));
  const auto windows = block_windows(width, height, block_width, block_height);
  const auto count = coverage(width, height, windows);
  CHECK(std::all_of(count.begin(), count.end(), [](int c) { return c == 1; }));
}

TEST_CASE("Block windows start on the block grid and only the last row and column are clipped", "[raster][window]") {
  const auto windows = block_windows(300, 200, 128, 64);
  // ceil(300/128) = 3 columns, ceil(200/64) = 4 rows
  REQUIRE(windows.size() == 12);
  for (const auto& window : windows) {
    CHECK(window.x % 128 == 0);
    CHECK(window.y % 64 == 0);
    CHECK(window.width == (window.x == 256 ? 300 - 256 : 128));
    CHECK(window.height == (window.y == 192 ? 200 - 192 : 64));
  }
}

TEST_CASE("Block windows come in row-major order", "[raster][window]") {
  const auto windows = block_windows(5, 4, 2, 2);
  const std::vector<std::pair<int, int>> expected = {{0, 0}, {2, 0}, {4, 0}, {0, 2}, {2, 2}, {4, 2}};
  REQUIRE(windows.size() == expected.size());
  for (std::size_t i = 0; i < expected.size(); ++i) {
    CHECK(windows[i].x == expected[i].first);
    CHECK(windows[i].y == expected[i].second);
  }
  CHECK(windows[2].width == 1);
  CHECK(windows[2].pixels() == 2);
}

TEST_CASE("Block windows reject sizes that are not positive", "[raster][window]") {
  CHECK_THROWS_AS(block_windows(0, 10, 4, 4), std::invalid_argument);
  CHECK_THROWS_AS(block_windows(10, -1, 4, 4), std::invalid_argument);
  CHECK_THROWS_AS(block_windows(10, 10, 0, 4), std::invalid_argument);
  CHECK_THROWS_AS(block_windows(10, 10, 4, -2), std::invalid_argument);
}
