#pragma once
// A bash completion script for habcast, built from the command line that --help describes:
// commands, options, the choices of options restricted to a set, file names elsewhere.
#include <CLI/CLI.hpp>
#include <string>

namespace habcast::docgen {

/// The script: defines _habcast and registers it for `habcast` with `complete`.
std::string bash_completion(const CLI::App& top, const std::string& version);

}  // namespace habcast::docgen
