#pragma once
// The habcast command line as a function, so tests drive it in-process and main() stays trivial.
#include <iosfwd>
#include <string>
#include <vector>

namespace habcast::cli {

/// Parses `args` (without the program name), runs the command and returns the process exit code
/// (see docs/exit-codes.md). Normal output goes to `out`, messages and progress to `err`.
int run(const std::vector<std::string>& args, std::ostream& out, std::ostream& err);

}  // namespace habcast::cli
