#pragma once
// Writes a Canvas as a PNG file through GDAL's PNG driver: an in-memory (MEM) dataset copied with
// CreateCopy, under a temporary name renamed on success like every other habcast output.
#include <string>
#include <utility>
#include <vector>

#include "render/canvas.hpp"

namespace habcast {

/// Writes `canvas` to `path` (RGB, 8 bit). `metadata` becomes PNG text chunks. Throws IoError
/// naming the path when GDAL cannot write it.
void write_png(const Canvas& canvas, const std::string& path,
               const std::vector<std::pair<std::string, std::string>>& metadata = {});

}  // namespace habcast
