#pragma once
// ModelSpec -> model file text (TOML, docs/model-format.md). Numbers are written with 17
// significant digits, so reading the text back with parse_model_text gives the same doubles.
#include <string>
#include <vector>

#include "core/model/model_spec.hpp"

namespace habcast {

/// The model file text. `model_path` is where the text will be saved: raster and training paths in
/// `spec` (relative to the working folder, or absolute) are written relative to its folder, as the
/// reader resolves them. `comments` become "# " lines at the top (provenance).
std::string write_model_text(const ModelSpec& spec, const std::string& model_path,
                             const std::vector<std::string>& comments = {});

/// A double as TOML text with 17 significant digits that reads back exactly ("2.0", "1e-05").
std::string toml_number(double value);

/// A TOML basic string in double quotes, with quotes, backslashes and control characters escaped.
std::string toml_string(const std::string& text);

}  // namespace habcast
