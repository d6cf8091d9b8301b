// habcast_docgen: writes habcast's manual pages and bash completion from its command line.
// Run at build time (packaging/CMakeLists.txt); it builds the very CLI11 app that `habcast`
// parses with (cli::build_app), so the pages and completion say what --help says.
//
//   habcast_docgen OUT_DIR SUMMARY [DATE]
// writes OUT_DIR/man1/*.1 and OUT_DIR/habcast.bash-completion.
#include <CLI/CLI.hpp>
#include <exception>
#include <filesystem>
#include <fstream>
#include <iostream>

#include "bash_completion.hpp"
#include "cli/app.hpp"
#include "cli/commands.hpp"
#include "cli/version_text.hpp"
#include "manual_page.hpp"

namespace {

void write_file(const std::filesystem::path& path, const std::string& text) {
  std::ofstream out(path, std::ios::binary | std::ios::trunc);
  out << text;
  out.close();
  if (!out) throw std::runtime_error("cannot write " + path.string());
}

}  // namespace

int main(int argc, char** argv) {
  if (argc < 3 || argc > 4) {
    std::cerr << "usage: habcast_docgen OUT_DIR SUMMARY [DATE]\n";
    return 2;
  }
  try {
    const std::filesystem::path dir = argv[1];
    CLI::App app;
    habcast::cli::CommandRegistry registry;
    habcast::cli::build_app(app, registry);

    const habcast::docgen::ManualInfo info{habcast::cli::habcast_version(), argv[2], argc > 3 ? argv[3] : ""};
    // Pages of commands that no longer exist must not linger in the install.
    std::filesystem::remove_all(dir / "man1");
    std::filesystem::create_directories(dir / "man1");
    for (const auto& [name, page] : habcast::docgen::manual_pages(app, info)) write_file(dir / "man1" / name, page);
    write_file(dir / "habcast.bash-completion", habcast::docgen::bash_completion(app, info.version));
    return 0;
  } catch (const std::exception& e) {
    std::cerr << "habcast_docgen: " << e.what() << "\n";
    return 1;
  }
}
