#include "predict/empty_map.hpp"

#include <algorithm>
#include <cstdint>

#include "pipeline/stop_signal.hpp"
#include "raster/covariate_reader.hpp"
#include "raster/window.hpp"

namespace habcast {

namespace {

bool has_valid_pixel(const CovariateInput& input, const RasterGrid& grid) {
  CovariateReader reader(input.path, input.band);
  const int rows = std::max(1, std::min(grid.height, (1 << 20) / std::max(1, grid.width)));
  std::vector<double> values;
  std::vector<std::uint8_t> valid;
  for (const Window& w : block_windows(grid.width, grid.height, grid.width, rows)) {
    throw_if_stopped();
    values.assign(static_cast<std::size_t>(w.pixels()), 0.0);
    valid.assign(static_cast<std::size_t>(w.pixels()), 1);
    reader.read(w, values.data(), valid.data());
    if (std::find(valid.begin(), valid.end(), std::uint8_t{1}) != valid.end()) return true;
  }
  return false;
}

}  // namespace

std::string empty_map_warning(const std::vector<CovariateInput>& inputs, const RasterGrid& grid) {
  std::string empty;
  for (const CovariateInput& in : inputs)
    if (!has_valid_pixel(in, grid)) empty += (empty.empty() ? "" : ", ") + in.name + " (" + in.path + ")";
  const std::string start = "No pixel was predicted: the whole map is nodata. ";
  if (!empty.empty())
    return start + "These covariate rasters hold nodata everywhere: " + empty +
           ". Check that they are the right files and that their nodata value is right.";
  return start + "Every covariate raster has valid pixels, but no pixel has valid values for all of them at once "
                 "(their valid areas do not overlap), or the model is undefined there; see the report's pixel counts.";
}

}  // namespace habcast
