#pragma once
// Small outputs (reports, tables, pictures) written like the rasters: to a temporary name, renamed
// on success, alone or with the rest of an output set.
#include <string>

namespace habcast {

/// Writes `content` to `path` via a temporary file in the same folder. Throws IoError naming the path.
void write_file_atomically(const std::string& path, const std::string& content);

/// Writes `content` to `path` in place: for a temporary file of an output set
/// (pipeline/output_set.hpp), which becomes its final name at the set's commit. Throws IoError
/// naming `final_path` (the name the user knows; `path` when empty).
void write_whole_file(const std::string& path, const std::string& content, const std::string& final_path = "");

}  // namespace habcast
