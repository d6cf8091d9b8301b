#pragma once
// Reads and validates a model file (TOML, docs/model-format.md) into a ModelSpec. Every problem is
// reported as an InputError "file:line: what is wrong; what to do".
#include <cstddef>
#include <string>

#include "core/model/model_spec.hpp"

namespace habcast {

/// A model file is a few kilobytes; anything beyond this is not one (docs/limits.md).
constexpr std::size_t kMaxModelFileBytes = 16u << 20;

/// Reads the model file at `path` (at most kMaxModelFileBytes, read with stop polling). Relative raster and training paths are resolved against the
/// folder of `path`. Validates everything the file alone can tell, including that every term parses.
ModelSpec read_model_file(const std::string& path);

/// Same, from text already in memory; `path` is used for messages and to resolve relative paths.
ModelSpec parse_model_text(const std::string& text, const std::string& path);

}  // namespace habcast
