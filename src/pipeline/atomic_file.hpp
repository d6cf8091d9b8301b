#pragma once
// Small text outputs (reports) written like the rasters: to a temporary name, renamed on success.
#include <string>

namespace habcast {

/// Writes `content` to `path` via a temporary file in the same folder. Throws IoError naming the path.
void write_file_atomically(const std::string& path, const std::string& content);

}  // namespace habcast
