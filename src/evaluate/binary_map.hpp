#pragma once
// A thresholded presence/absence map: 1 where the prediction is at or above the threshold, 0
// below, 255 nodata; streamed window by window, with the threshold and its rule in the metadata.
#include <cstdint>
#include <string>

namespace habcast {

class ScoreSource;

struct BinaryMapCounts {
  std::int64_t present = 0;
  std::int64_t absent = 0;
  std::int64_t nodata = 0;
};

BinaryMapCounts write_binary_map(ScoreSource& source, const std::string& path, double threshold, const std::string& rule,
                                 const std::string& tool_version);

}  // namespace habcast
