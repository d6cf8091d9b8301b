#include "cli/commands.hpp"

#include "core/base/error.hpp"

namespace habcast::cli {

int CommandRegistry::run_selected(const CLI::App& app, std::ostream& out, std::ostream& err) const {
  for (const Entry& entry : entries_) {
    if (entry.subcommand->parsed()) return entry.fn(out, err);
  }
  (void)app;
  throw UsageError("no command given; run 'habcast --help'");
}

void register_commands(CLI::App& app, CommandRegistry& registry) {
  register_predict(app, registry);
  register_fit(app, registry);
  register_evaluate(app, registry);
  register_describe(app, registry);
  register_batch(app, registry);
}

}  // namespace habcast::cli
