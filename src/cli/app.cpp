#include "cli/app.hpp"

#include <CLI/CLI.hpp>
#include <algorithm>
#include <cmath>
#include <cstdlib>
#include <exception>
#include <ostream>

#include "cli/commands.hpp"
#include "cli/version_text.hpp"
#include "core/base/error.hpp"

namespace habcast::cli {

namespace {

constexpr const char* kAbout =
    "habcast turns a fitted habitat or niche model (a GLM written as a plain-text model file)\n"
    "into maps of a whole region: suitability, its uncertainty, and where the map extrapolates\n"
    "beyond the conditions the model was trained on.\n\n"
    "Commands:    fit (points + rasters -> model file), describe (the fitted niche),\n"
    "             predict (model -> maps), evaluate (maps vs independent points)\n"
    "Start with:  habcast COMMAND --help\n"
    "Model file:  docs/model-format.md      Exit codes: docs/exit-codes.md";

/// CLI11 reads "nan" and "inf" as numbers, and its Range checks let NaN through (every
/// comparison with NaN is false): a NaN threshold would switch a check off without a word. Every
/// number option of the chosen command must be finite.
void refuse_non_finite_numbers(const CLI::App& app) {
  for (const CLI::App* sub : app.get_subcommands()) {
    for (const CLI::Option* option : sub->get_options()) {
      if (option->get_type_name().find("FLOAT") == std::string::npos) continue;
      for (const std::string& text : option->results()) {
        char* end = nullptr;
        const double value = std::strtod(text.c_str(), &end);
        if (end != text.c_str() && !std::isfinite(value))
          throw UsageError(option->get_name() + " " + text + ": a finite number is required (NaN and infinities are "
                                                             "not accepted)");
      }
    }
  }
}

}  // namespace

void build_app(CLI::App& app, CommandRegistry& registry) {
  app.name("habcast");
  app.description(kAbout);
  app.set_version_flag("--version", "", "Print the versions of habcast, GDAL, PROJ, Eigen and Qhull and exit");
  app.require_subcommand(1);
  app.fallthrough(false);
  register_commands(app, registry);
}

int run(const std::vector<std::string>& args, std::ostream& out, std::ostream& err) {
  CLI::App app;
  CommandRegistry registry;
  build_app(app, registry);

  // CLI11 parses argv in reverse order of a vector.
  std::vector<std::string> reversed(args.rbegin(), args.rend());
  try {
    app.parse(reversed);
  } catch (const CLI::CallForHelp&) {
    out << app.help();
    return 0;
  } catch (const CLI::CallForAllHelp&) {
    out << app.help("", CLI::AppFormatMode::All);
    return 0;
  } catch (const CLI::CallForVersion&) {
    out << version_text();
    return 0;
  } catch (const CLI::ParseError& e) {
    // Help requested on a subcommand arrives here too (as a CallForHelp raised from it).
    if (e.get_exit_code() == 0) {
      for (const CLI::App* sub : app.get_subcommands()) {
        out << sub->help();
        return 0;
      }
      out << app.help();
      return 0;
    }
    err << "habcast: " << e.what() << "\n";
    err << "Run 'habcast --help' or 'habcast COMMAND --help' for usage.\n";
    return static_cast<int>(ExitCode::usage);
  }

  try {
    refuse_non_finite_numbers(app);
    return registry.run_selected(app, out, err);
  } catch (const Error& e) {
    err << "habcast: error: " << e.what() << "\n";
    return static_cast<int>(e.code());
  } catch (const std::bad_alloc&) {
    err << "habcast: error: out of memory; try fewer --threads or a smaller --block-size\n";
    return static_cast<int>(ExitCode::io);
  } catch (const std::exception& e) {
    err << "habcast: internal error: " << e.what() << "\nThis is a bug in habcast; please report it.\n";
    return static_cast<int>(ExitCode::internal);
  }
}

}  // namespace habcast::cli
