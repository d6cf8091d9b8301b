#pragma once
// describe's plot as a PNG (760 x 560 pixels), written through GDAL's PNG driver.
#include <string>

#include "render/niche_plot.hpp"

namespace habcast {

/// Rasterises `plot` and writes it to `path`. Throws IoError naming the path on failure.
void write_niche_plot_png(const NichePlot& plot, const std::string& path);

}  // namespace habcast
