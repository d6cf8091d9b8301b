#pragma once
// The region's view of every scenario, for batch-report.json: each finished tile's scenarios.json
// (of one model or of a model set) merged by adding counts and areas, every share recomputed from
// the sums (never an average of the tiles' shares, which would weigh a small tile like a large one).
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

namespace habcast {

struct TileScenarioReport {
  std::string tile;
  nlohmann::ordered_json report;  ///< the tile's scenarios.json; null when it could not be read
};

/// `names` are the manifest's scenarios in its order; `tiles` the finished tiles in id order;
/// `tiles_total` counts every tile of the region. A count or area is given only when every merged
/// tile has it (null otherwise, e.g. areas without a metric CRS, classes without a threshold).
nlohmann::ordered_json merge_region_scenarios(const std::vector<std::string>& names,
                                              const std::vector<TileScenarioReport>& tiles, int tiles_total);

}  // namespace habcast
