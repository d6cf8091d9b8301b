#pragma once
// What `habcast --version` prints: habcast's own version and those of the libraries in use.
#include <string>

namespace habcast::cli {

/// habcast's version, e.g. "0.1.0" (the project version in CMakeLists.txt).
std::string habcast_version();

/// "habcast 0.1.0" on the first line (scripts may read just that line), then one line per library
/// of library_versions(): the version in use and, where it differs or matters, the one built with.
std::string version_text();

}  // namespace habcast::cli
