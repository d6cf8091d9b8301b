#pragma once
// Manual pages (roff, man(7) macros) for habcast and each of its commands, built from the same
// CLI11 objects and help formatter that print `--help`, so a page cannot drift from the help.
#include <CLI/CLI.hpp>
#include <string>
#include <utility>
#include <vector>

namespace habcast::docgen {

struct ManualInfo {
  std::string version;  ///< "0.1.0"
  std::string summary;  ///< one line for the whatis entry of habcast(1)
  std::string date;     ///< for the page footer; may be empty (reproducible builds)
};

/// Text made safe for roff: backslashes, hyphens (as \-, so options paste correctly) and
/// control characters at the start of a line.
std::string roff_escape(const std::string& text);

/// habcast(1) for `top`, then habcast-COMMAND(1) for every command --help lists (and their own
/// commands, as habcast-COMMAND-SUB(1)): pairs of file name ("habcast-predict.1") and page.
std::vector<std::pair<std::string, std::string>> manual_pages(const CLI::App& top, const ManualInfo& info);

}  // namespace habcast::docgen
