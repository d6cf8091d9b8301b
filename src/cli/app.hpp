#pragma once
// The habcast command line as a function, so tests drive it in-process and main() stays trivial.
#include <iosfwd>
#include <string>
#include <vector>

namespace CLI {
class App;
}

namespace habcast::cli {

class CommandRegistry;

/// Sets up habcast's whole command line on `app`: its name, the about text, --version and every
/// command. run() parses with it; the manual pages and the bash completion are generated from it
/// at build time (packaging/docgen), so they say exactly what --help says.
void build_app(CLI::App& app, CommandRegistry& registry);

/// Parses `args` (without the program name), runs the command and returns the process exit code
/// (see docs/exit-codes.md). Normal output goes to `out`, messages and progress to `err`.
int run(const std::vector<std::string>& args, std::ostream& out, std::ostream& err);

}  // namespace habcast::cli
