#include "evaluate/binary_map.hpp"

#include <cmath>
#include <cstdio>
#include <vector>

#include "evaluate/score_source.hpp"
#include "pipeline/stop_signal.hpp"
#include "raster/output_raster.hpp"
#include "raster/window.hpp"

namespace habcast {

BinaryMapCounts write_binary_map(ScoreSource& source, const std::string& path, double threshold, const std::string& rule,
                                 const std::string& tool_version) {
  const RasterGrid& grid = source.grid();
  char value[40];
  std::snprintf(value, sizeof value, "%.17g", threshold);
  OutputSpec spec;
  spec.final_path = path;
  spec.type = OutputType::uint8;
  spec.nodata = 255.0;
  spec.bands = {{"predicted presence (1) or absence (0) at the threshold", ""}};
  spec.colours = {{0, 230, 230, 230, 255, "absent (below threshold)"}, {1, 31, 95, 168, 255, "present (at or above threshold)"}};
  spec.metadata = {{"HABCAST_VERSION", tool_version},
                   {"HABCAST_SOURCE", source.describe()},
                   {"HABCAST_THRESHOLD", value},
                   {"HABCAST_THRESHOLD_RULE", rule},
                   {"HABCAST_CAUTION", "A threshold turns a gradient into a yes/no map and hides uncertainty; check the "
                                       "continuous prediction and its uncertainty before acting on it."}};
  OutputRaster out(spec, grid);
  BinaryMapCounts counts;
  std::vector<double> scores;
  std::vector<std::uint8_t> classes;
  for (const Window& w : block_windows(grid.width, grid.height, std::max(grid.block_width, 256), std::max(grid.block_height, 256))) {
    throw_if_stopped();
    source.read(w, scores);
    classes.resize(scores.size());
    for (std::size_t i = 0; i < scores.size(); ++i) {
      if (std::isnan(scores[i])) {
        classes[i] = 255;
        ++counts.nodata;
      } else if (scores[i] >= threshold) {
        classes[i] = 1;
        ++counts.present;
      } else {
        classes[i] = 0;
        ++counts.absent;
      }
    }
    out.write(1, w, classes.data());
  }
  out.close();
  out.commit();
  return counts;
}

}  // namespace habcast
