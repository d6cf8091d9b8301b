#include "cli/version_text.hpp"

#include "raster/library_versions.hpp"

namespace habcast::cli {

std::string habcast_version() { return HABCAST_VERSION; }

std::string version_text() {
  std::string text = "habcast " + habcast_version() + "\n";
  for (const LibraryVersion& lib : library_versions()) {
    text += lib.name + " " + lib.in_use;
    if (!lib.run_time)
      text += " (header-only, compiled in)";
    else if (!lib.built_with.empty())
      text += " (built with " + lib.built_with + ")";
    text += "\n";
  }
  return text;
}

}  // namespace habcast::cli
